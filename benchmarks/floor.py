"""The floor of a whole ``check``: what any program must do at the least to answer one model.

One process that reads the model file with the standard library's JSON parser
(no decimal texts kept, no validation), assembles the restrained stiffness
K_r with numpy (vectorised COO -> CSR, restraints along axes removed),
factorises it once with MKL PARDISO in SPD mode (pypardiso
``PyPardisoSolver(mtype=2)``, upper triangle in CSR) and solves the first
load case.  Nothing of the audit package is imported: the floor does not
depend on the code it measures.  Prints one JSON line: the residual of the
solve and the stage times (seconds).

Usage::

    python benchmarks/floor.py benchmarks/out/grid2d_1e6_c1.json
"""

from __future__ import annotations

import glob
import json
import os
import sys
import time

import numpy as np
import scipy.sparse as sp

AXES = ("x", "y", "z")


def _value(member: dict, key: str, table: dict, ref: str) -> float:
    if key in member:
        return float(member[key])
    return float(table[member[ref]][key])


def assemble(doc: dict) -> tuple[sp.csr_matrix, np.ndarray]:
    """Restrained K_r (CSR) and the first load case's right-hand side."""
    d = int(doc["dimensions"])
    nodes = doc["nodes"]
    index = {n["id"]: i for i, n in enumerate(nodes)}
    X = np.array([[float(n.get(a, 0.0)) for a in AXES[:d]] for n in nodes])
    mats, secs = doc.get("materials", {}), doc.get("sections", {})
    members = doc["members"]
    conn = np.array([(index[m["start"]], index[m["end"]]) for m in members], dtype=np.int64)
    EA = np.array([_value(m, "E", mats, "material") * _value(m, "A", secs, "section") for m in members])
    v = X[conn[:, 1]] - X[conn[:, 0]]
    L = np.sqrt((v * v).sum(axis=1))
    c = v / L[:, None]
    k = EA / L
    dofs = (conn[:, :, None] * d + np.arange(d)).reshape(-1, 2 * d)  # (m, 2d)
    g = np.concatenate([-c, c], axis=1)  # (m, 2d): element K = k g gᵀ
    vals = (k[:, None, None] * g[:, :, None] * g[:, None, :]).reshape(-1)
    rows = np.repeat(dofs, 2 * d, axis=1).reshape(-1)
    cols = np.tile(dofs, (1, 2 * d)).reshape(-1)
    nd = len(nodes) * d
    K = sp.csr_matrix((vals, (rows, cols)), shape=(nd, nd))
    fixed = np.zeros(nd, dtype=bool)
    for s in doc.get("supports", []):
        for a in s.get("restrain", []):
            if AXES.index(a) < d:
                fixed[index[s["node"]] * d + AXES.index(a)] = True
    free = np.flatnonzero(~fixed)
    f = np.zeros(nd)
    for load in doc["load_cases"][0].get("loads", []):
        for a in range(d):
            f[index[load["node"]] * d + a] += float(load.get("f" + AXES[a], 0.0))
    return K[free][:, free].tocsr(), f[free]


def main(path: str) -> dict:
    t0 = time.perf_counter()
    with open(path, "rb") as fh:
        doc = json.load(fh)
    t1 = time.perf_counter()
    K, b = assemble(doc)
    del doc
    t2 = time.perf_counter()
    # pypardiso searches the whole environment for mkl_rt at import (seconds on a busy disk); name it, as
    # audit/linsolve.py does, so that the floor does not pay for the search
    found = sorted(glob.glob(f"{sys.prefix}/lib/libmkl_rt.so*") + glob.glob(f"{sys.prefix}/Library/bin/mkl_rt*.dll"))
    if found:
        os.environ.setdefault("PYPARDISO_MKL_RT", min(found, key=len))
    import pypardiso

    solver = pypardiso.PyPardisoSolver(mtype=2)
    upper = sp.triu(K, format="csr")
    solver.factorize(upper)
    x = solver.solve(upper, b)
    t3 = time.perf_counter()
    residual = float(np.abs(K @ x - b).max() / max(np.abs(b).max(), 1e-300))
    return {
        "read": t1 - t0,
        "assemble": t2 - t1,
        "factorise_solve": t3 - t2,
        "free_dofs": int(K.shape[0]),
        "residual": residual,
    }


if __name__ == "__main__":
    print(json.dumps(main(sys.argv[1])))
