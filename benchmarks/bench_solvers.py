"""Factorise + solve the restrained K of the generated lattices with each candidate solver.

The evidence behind the choice of solver stack in ``audit/linsolve.py``.
Each (size, solver) runs in a fresh process, one at a time; the table shows
medians over ``--repeat`` runs of wall time and peak memory above the
assembled matrix, and the relative residual ‖K x − b‖∞ / ‖b‖∞.

Candidates
----------
``pardiso``          audit.linsolve (MKL PARDISO, SPD, called directly, METIS ordering)
``pardiso-pmetis``   the same with OpenMP-parallel nested dissection (iparm(2) = 3)
``pypardiso-spsolve``  the package's own ``spsolve`` (unsymmetric mode 11, full matrix)
``splu``             audit.linsolve's scipy SuperLU fallback (MMD on Aᵀ + A, symmetric mode)
``cvxopt-cholmod``   CHOLMOD as bundled in the cvxopt wheels (``cvxopt.cholmod``, supernodal, AMD/METIS)
``qdldl``            the QDLDL LDLᵀ factorisation (pip wheels, AMD ordering, one thread)

Usage::

    python benchmarks/bench_solvers.py --sizes grid2d:1e5 lattice3d:1e5 --repeat 3
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
SOLVERS = ("pardiso", "pardiso-pmetis", "pypardiso-spsolve", "splu", "cvxopt-cholmod", "qdldl")


def _child(kind: str, members: float, solver: str) -> dict:
    import numpy as np

    sys.path.insert(0, str(HERE))
    import generate
    from measure import Meter

    from audit import linsolve
    from audit.solve import build_system

    m = generate.grid2d_size(members) if kind == "grid2d" else generate.lattice3d_size(members)
    model, _doc = generate.build(kind, m)
    system = build_system(model)
    K = system.K_r
    b = system.T.T @ model.load_cases[0].loads.reshape(-1)
    meter = Meter()
    meter.start(solver)
    if solver == "pardiso":
        x = linsolve.factorize(K, "pardiso").solve(b)
    elif solver == "pardiso-pmetis":
        f = linsolve.PardisoFactor.__new__(linsolve.PardisoFactor)
        f.n = K.shape[0]
        iparm = linsolve._pardiso_iparm()
        iparm[1] = 3
        f._h = linsolve._PardisoHandle(
            linsolve._pardiso_entry(), np.zeros(64, np.int64), iparm, linsolve._upper_csr(K), np.zeros(0, np.int32)
        )
        f._h.call(12)
        x = f.solve(b)
    elif solver == "pypardiso-spsolve":
        import pypardiso

        x = pypardiso.spsolve(K.tocsr(), b)
    elif solver == "cvxopt-cholmod":
        import cvxopt
        import cvxopt.cholmod
        import scipy.sparse as sp

        C = sp.tril(K, format="coo")  # CHOLMOD reads the lower triangle
        A = cvxopt.spmatrix(C.data, C.row.astype(int), C.col.astype(int), size=K.shape)
        cvxopt.cholmod.options["supernodal"] = 2
        F = cvxopt.cholmod.symbolic(A)
        cvxopt.cholmod.numeric(A, F)
        xb = cvxopt.matrix(b.copy())
        cvxopt.cholmod.solve(F, xb)
        x = np.array(xb).ravel()
    elif solver == "qdldl":
        import qdldl
        import scipy.sparse as sp

        x = qdldl.Solver(sp.triu(K, format="csc")).solve(b)
    else:
        x = linsolve.factorize(K, "splu").solve(b)
    span = meter.stop()
    resid = float(np.abs(K @ x - b).max() / np.abs(b).max())
    return {
        "kind": kind,
        "members": model.n_members,
        "n": K.shape[0],
        "nnz": K.nnz,
        "solver": solver,
        "seconds": span.seconds,
        "peak_mib": span.peak_mib,
        "matrix_mib": (K.data.nbytes + K.indices.nbytes + K.indptr.nbytes) / 2**20,
        "residual": resid,
    }


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description="compare sparse solvers on the benchmark lattices")
    p.add_argument("--sizes", nargs="+", default=["grid2d:1e4", "lattice3d:1e4"], help="KIND:MEMBERS ...")
    p.add_argument("--solvers", nargs="+", default=list(SOLVERS), choices=SOLVERS)
    p.add_argument("--repeat", type=int, default=3)
    p.add_argument("--timeout", type=float, default=600, help="seconds before a solver is abandoned at a size")
    p.add_argument("--child", nargs=3, metavar=("KIND", "MEMBERS", "SOLVER"), help=argparse.SUPPRESS)
    a = p.parse_args(argv)
    if a.child:
        print(json.dumps(_child(a.child[0], float(a.child[1]), a.child[2])))
        return 0
    rows = []
    for size in a.sizes:
        kind, members = size.split(":")
        for solver in a.solvers:
            runs = []
            for _ in range(a.repeat):
                t0 = time.perf_counter()
                try:
                    out = subprocess.run(
                        [sys.executable, __file__, "--child", kind, members, solver],
                        capture_output=True,
                        text=True,
                        timeout=a.timeout,
                        check=True,
                    )
                except subprocess.TimeoutExpired:
                    runs = [{"solver": solver, "timeout": True, "seconds": time.perf_counter() - t0}]
                    break
                runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
            if runs[0].get("timeout"):
                rows.append(f"| {kind} {members} | {solver} | > {a.timeout:.0f} s | | | |")
                print(rows[-1], flush=True)
                continue
            r0 = runs[0]
            t = statistics.median(r["seconds"] for r in runs)
            mem = statistics.median(r["peak_mib"] for r in runs)
            res = max(r["residual"] for r in runs)
            rows.append(
                f"| {kind} {r0['members']:,} (n = {r0['n']:,}) | {solver} | {t:.2f} s | {mem:,.0f} MiB "
                f"| {r0['matrix_mib']:,.0f} MiB | {res:.1e} |"
            )
            print(rows[-1], flush=True)
    print("\n| model | solver | factor + solve (median) | peak above K | K_r (CSR) | max residual |")
    print("|---|---|---|---|---|---|")
    print("\n".join(rows))
    return 0


if __name__ == "__main__":
    sys.exit(main())
