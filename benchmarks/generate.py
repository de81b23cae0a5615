"""Reproducible large truss models for the benchmarks, written in the neutral format.

Two families (invented data, for benchmarks and demos only):

* ``grid2d``: a plane grid of square cells, each with one diagonal (a
  triangulated plate), pinned at its two bottom corners, loaded on the top
  chord.  An m x m grid has 3m² + 2m members and (m + 1)² joints.
* ``lattice3d``: a cubic lattice of cells, each with its three edges, one
  diagonal on each of its three faces and one body diagonal, pinned at the
  four bottom corners, loaded on the top face.  An m x m x m lattice has
  about 7m³ + 6m² members and (m + 1)³ joints.

Both are stable (every cell is triangulated: a plane triangulated cell is
rigid, and a cube with all faces triangulated is a convex polyhedron with
triangular faces, rigid by Cauchy's theorem, common practice) and statically
indeterminate.  The reported results are produced by our own float64 solve
(:func:`audit.solve.solve_model`) and then a few members (``perturb``, default
5) get their axial force changed by a few percent (3 % to 6 %); which ones is
recorded under the source's own key ``x-benchmark`` so that a benchmark can
confirm the audit found exactly those.

Usage::

    python benchmarks/generate.py grid2d 1e6 -o benchmarks/out/grid2d_1e6.json
    python benchmarks/generate.py lattice3d 3e5 -o benchmarks/out/lattice3d_3e5.json
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import time
from collections.abc import Iterable

import numpy as np

from audit.model import LoadCase, Model, Units
from audit.solve import solve_model

#: E in kN/m² (structural steel, 210 GPa) and section areas in m² (invented)
E_STEEL = 2.1e8
SECTIONS = {"chord": 4.0e-3, "post": 2.5e-3, "brace": 1.2e-3, "diag": 1.6e-3}
SPACING = 1.5  #: cell size, m


# ------------------------------------------------------------------ geometry
def grid2d_size(members: float) -> int:
    """Cells per side m of the square grid whose 3m² + 2m members are closest to ``members``."""
    return max(1, round((-2 + math.sqrt(4 + 12 * members)) / 6))


def lattice3d_size(members: float) -> int:
    """Cells per side m of the cubic lattice whose member count is closest to ``members``."""
    m = max(1, round((members / 7) ** (1 / 3)))
    best = min(range(max(1, m - 2), m + 3), key=lambda k: abs(_lattice_members(k) - members))
    return best


def _lattice_members(m: int) -> int:
    n1 = m + 1
    edges = 3 * m * n1 * n1
    faces = 3 * m * m * n1
    return edges + faces + m**3


def grid2d(m: int) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """(coords (j, 2), conn (e, 2), section name per member) of an m x m grid; node i + (m+1) j at (i, j)."""
    n1 = m + 1
    i, j = np.meshgrid(np.arange(n1), np.arange(n1), indexing="xy")
    coords = np.column_stack([i.ravel(), j.ravel()]).astype(np.float64) * SPACING
    node = np.arange(n1 * n1).reshape(n1, n1)  # [j, i]
    horiz = np.column_stack([node[:, :-1].ravel(), node[:, 1:].ravel()])
    vert = np.column_stack([node[:-1, :].ravel(), node[1:, :].ravel()])
    diag = np.column_stack([node[:-1, :-1].ravel(), node[1:, 1:].ravel()])
    conn = np.vstack([horiz, vert, diag]).astype(np.int64)
    sections = ["chord"] * len(horiz) + ["post"] * len(vert) + ["brace"] * len(diag)
    return coords, conn, sections


def lattice3d(m: int) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """(coords (j, 3), conn (e, 2), section per member) of an m x m x m lattice; node at integer (i, j, k)."""
    n1 = m + 1
    i, j, k = np.meshgrid(np.arange(n1), np.arange(n1), np.arange(n1), indexing="ij")
    coords = np.column_stack([i.ravel(), j.ravel(), k.ravel()]).astype(np.float64) * SPACING
    node = np.arange(n1**3).reshape(n1, n1, n1)  # [i, j, k]
    parts: list[tuple[np.ndarray, str]] = [
        (np.column_stack([node[:-1, :, :].ravel(), node[1:, :, :].ravel()]), "chord"),  # x edges
        (np.column_stack([node[:, :-1, :].ravel(), node[:, 1:, :].ravel()]), "chord"),  # y edges
        (np.column_stack([node[:, :, :-1].ravel(), node[:, :, 1:].ravel()]), "post"),  # z edges
        (np.column_stack([node[:-1, :-1, :].ravel(), node[1:, 1:, :].ravel()]), "brace"),  # xy faces
        (np.column_stack([node[:-1, :, :-1].ravel(), node[1:, :, 1:].ravel()]), "brace"),  # xz faces
        (np.column_stack([node[:, :-1, :-1].ravel(), node[:, 1:, 1:].ravel()]), "brace"),  # yz faces
        (np.column_stack([node[:-1, :-1, :-1].ravel(), node[1:, 1:, 1:].ravel()]), "diag"),  # body
    ]
    conn = np.vstack([p for p, _ in parts]).astype(np.int64)
    sections = [name for p, name in parts for _ in range(len(p))]
    return coords, conn, sections


# --------------------------------------------------------------------- model
def _supports_and_loads(coords: np.ndarray, dim: int) -> tuple[np.ndarray, np.ndarray]:
    """Pinned bottom corners (node indices) and the loaded top nodes."""
    up = coords[:, dim - 1]
    bottom = np.flatnonzero(up == up.min())
    top = np.flatnonzero(up == up.max())
    horiz = coords[bottom, : dim - 1]
    lo, hi = horiz.min(axis=0), horiz.max(axis=0)
    corner = np.all((horiz == lo) | (horiz == hi), axis=1)
    return bottom[corner], top


def build(kind: str, m: int, cases: int = 1) -> tuple[Model, dict]:
    """The in-memory model (for our solve) and the neutral-format document without results."""
    coords, conn, sections = (grid2d if kind == "grid2d" else lattice3d)(m)
    dim = coords.shape[1]
    pinned, top = _supports_and_loads(coords, dim)
    n_nodes, n_members = coords.shape[0], conn.shape[0]
    A = np.array([SECTIONS[s] for s in sections])
    case_defs = [("dead", dim - 1, -10.0), ("wind", 0, 2.0), ("side", 1, 1.5)][:cases]
    load_cases = []
    for cid, axis, value in case_defs:
        loads = np.zeros((n_nodes, dim))
        loads[top, axis] = value
        load_cases.append(
            LoadCase(
                id=cid,
                title=cid,
                loads=loads,
                temperature=np.zeros(n_members),
                length_error=np.zeros(n_members),
                settlement=np.zeros(dim * len(pinned)),
            )
        )
    model = Model(
        title=f"{kind} {m} cells per side",
        dim=dim,
        units=Units("m", "kN"),
        node_ids=tuple(str(i) for i in range(n_nodes)),
        coords=coords,
        member_ids=tuple(str(i) for i in range(n_members)),
        conn=conn,
        E=np.full(n_members, E_STEEL),
        A=A,
        alpha=np.zeros(n_members),
        restraint_node=np.repeat(pinned, dim).astype(np.int64),
        restraint_dir=np.tile(np.eye(dim), (len(pinned), 1)),
        restraint_label=tuple("xyz"[a] for _ in pinned for a in range(dim)),
        spring_node=np.zeros(0, dtype=np.int64),
        spring_dir=np.zeros((0, dim)),
        spring_k=np.zeros(0),
        load_cases=tuple(load_cases),
        combinations=(),
    )
    axes = "xyz"[:dim]
    doc = {
        "format": "truss-audit-model",
        "version": 1,
        "title": model.title,
        "dimensions": dim,
        "units": {"length": "m", "force": "kN"},
        "nodes": [
            {"id": int(i), **{a: _num(c) for a, c in zip(axes, xyz, strict=True)}} for i, xyz in enumerate(coords)
        ],
        "materials": {"steel": {"E": E_STEEL}},
        "sections": {name: {"A": a} for name, a in SECTIONS.items()},
        "members": conn,  # written by _write, row by row
        "member_sections": sections,
        "supports": [{"node": int(p), "restrain": list(axes)} for p in pinned],
        "load_cases": [
            {"id": cid, "loads": [{"node": int(t), f"f{'xyz'[axis]}": value} for t in top]}
            for cid, axis, value in case_defs
        ],
    }
    return model, doc


def _num(v: float) -> int | float:
    """Coordinates are multiples of the spacing: write them short and exact."""
    r = round(float(v), 9)
    return int(r) if r == int(r) else r


def perturbed_members(forces: np.ndarray, count: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """(member indices, factors): ``count`` distinct members, each force scaled by 1 ± (3 % to 6 %).

    Only members carrying at least 10 % of the largest |force| are chosen, so
    that the change (at least 0.3 % of the largest force) lies above the
    audit's resolution for any reasonable tolerance.
    """
    rng = np.random.default_rng(seed)
    strong = np.flatnonzero(np.abs(forces) >= 0.1 * np.abs(forces).max())
    idx = np.sort(rng.choice(strong, size=min(count, strong.size), replace=False))
    factors = 1.0 + rng.choice([-1.0, 1.0], size=idx.size) * rng.uniform(0.03, 0.06, size=idx.size)
    return idx, factors


def _fmt(values: Iterable[float], digits: int) -> list[str]:
    f = f"%.{digits}g"
    return [f % v for v in values]


def write(
    path: str, kind: str, members: float, *, cases: int = 1, perturb: int = 5, seed: int = 1, digits: int = 10
) -> dict:
    """Generate, solve, perturb and write one model with its reported results; returns facts about it."""
    t0 = time.perf_counter()
    m = grid2d_size(members) if kind == "grid2d" else lattice3d_size(members)
    model, doc = build(kind, m, cases)
    solution = solve_model(model)
    idx, factors = perturbed_members(solution.cases[0].axial_forces, perturb, seed)
    dim = model.dim
    axes = "xyz"[:dim]
    pinned = sorted({int(p) for p in model.restraint_node})
    with open(path, "w", encoding="utf-8") as fh:
        head = {k: v for k, v in doc.items() if k in ("format", "version", "title", "dimensions", "units")}
        fh.write(json.dumps(head)[:-1])
        fh.write(', "nodes": [\n')
        fh.write(",\n".join(json.dumps(n) for n in doc["nodes"]))
        fh.write('],\n"materials": ' + json.dumps(doc["materials"]))
        fh.write(',\n"sections": ' + json.dumps(doc["sections"]))
        fh.write(',\n"members": [\n')
        conn = doc["members"]
        secs = doc["member_sections"]
        fh.write(
            ",\n".join(
                f'{{"id": {e}, "start": {s}, "end": {t}, "material": "steel", "section": "{sec}"}}'
                for e, (s, t), sec in zip(range(len(conn)), conn.tolist(), secs, strict=True)
            )
        )
        fh.write('],\n"supports": ' + json.dumps(doc["supports"]))
        fh.write(',\n"load_cases": ' + json.dumps(doc["load_cases"]))
        source = f"benchmarks/generate.py (float64 solve, {idx.size} members perturbed)"
        fh.write(f',\n"results": {{"source": "{source}", ')
        fh.write('"sign_convention": "tension_positive", "cases": {')
        for ci, case in enumerate(solution.cases):
            N = case.axial_forces.copy()
            N[idx] *= factors
            U = case.displacements
            R = case.reactions
            fh.write(("," if ci else "") + f'\n"{case.case_id}": {{"displacements": {{\n')
            ucols = [_fmt(U[:, a], digits) for a in range(dim)]
            fh.write(
                ",\n".join(
                    f'"{n}": {{' + ", ".join(f'"{a}": {ucols[k][n]}' for k, a in enumerate(axes)) + "}"
                    for n in range(model.n_nodes)
                )
            )
            fh.write('},\n"axial_forces": {\n')
            fh.write(",\n".join(f'"{e}": {v}' for e, v in enumerate(_fmt(N, digits))))
            fh.write('},\n"reactions": {')
            fh.write(
                ", ".join(
                    f'"{p}": {{' + ", ".join(f'"{a}": {float(R[p, k]):.{digits}g}' for k, a in enumerate(axes)) + "}"
                    for p in pinned
                )
            )
            fh.write("}}")
        fh.write("}},\n")
        facts = {
            "kind": kind,
            "cells_per_side": m,
            "joints": model.n_nodes,
            "members": model.n_members,
            "dofs": model.n_dofs,
            "load_cases": cases,
            "perturbed_members": [str(i) for i in idx.tolist()],
            "perturbation_factors": [round(float(f), 6) for f in factors],
            "seed": seed,
            "solver": solution.backend,
        }
        fh.write('"x-benchmark": ' + json.dumps(facts) + "\n}\n")
    facts["seconds"] = round(time.perf_counter() - t0, 2)
    return facts


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("kind", choices=["grid2d", "lattice3d"])
    p.add_argument("members", type=float, help="target number of members, e.g. 1e6")
    p.add_argument("-o", "--output", required=True)
    p.add_argument("--cases", type=int, default=1, choices=[1, 2, 3], help="number of load cases")
    p.add_argument("--perturb", type=int, default=5, help="members whose reported force is changed")
    p.add_argument("--seed", type=int, default=1)
    p.add_argument("--digits", type=int, default=10, help="significant digits of the reported results")
    a = p.parse_args(argv)
    facts = write(a.output, a.kind, a.members, cases=a.cases, perturb=a.perturb, seed=a.seed, digits=a.digits)
    print(json.dumps(facts))
    return 0


if __name__ == "__main__":
    sys.exit(main())
