"""Cost of the stability and stiffness-health checks against one sparse factorisation of the same K.

Target (the stability issue): on a 2D grid of 10⁶ members and a 3D lattice of
3·10⁵ members, ``stability.analyse`` plus ``stiffness_health.run`` cost no more
than one factorisation of the restrained K.  The lattices are generated here
(invented data, for benchmarks only):

* 2D: a square grid of n x n cells, one diagonal per cell (3n² + 2n members);
* 3D: a cubic grid of n³ cells with all edges, one diagonal on every face and
  one body diagonal per cell;

both pinned at every joint of the face x = 0.  Times are wall-clock seconds of
one run each (run it alone: it is heavy at full size); memory is the process's
peak resident set (``resource.getrusage``) before and after the factorisation and
at the end (the checks' own peak shows as growth beyond the factorisation's).

Usage::

    python benchmarks/bench_stability.py                 # small sizes
    python benchmarks/bench_stability.py --full          # 2D 10⁶ and 3D 3·10⁵ members
    python benchmarks/bench_stability.py --members 2e5 --dim 3 [--mechanism]
"""

from __future__ import annotations

import argparse
import math
import resource
import time

import numpy as np

from audit import linsolve, stability
from audit.checks import stability_check, stiffness_health
from audit.context import Context
from audit.model import Model, Units
from audit.solve import SINGULAR_CONDITION, build_system, condition_estimate
from audit.tolerances import Tolerances


def grid2d(n: int) -> tuple[np.ndarray, np.ndarray]:
    n1 = n + 1
    i, j = np.meshgrid(np.arange(n1), np.arange(n1), indexing="ij")
    coords = np.column_stack([i.ravel(), j.ravel()]).astype(np.float64)
    node = np.arange(n1 * n1).reshape(n1, n1)
    parts = [
        np.column_stack([node[:-1, :].ravel(), node[1:, :].ravel()]),
        np.column_stack([node[:, :-1].ravel(), node[:, 1:].ravel()]),
        np.column_stack([node[:-1, :-1].ravel(), node[1:, 1:].ravel()]),
    ]
    return coords, np.vstack(parts).astype(np.int64)


def lattice3d(n: int) -> tuple[np.ndarray, np.ndarray]:
    n1 = n + 1
    i, j, k = np.meshgrid(np.arange(n1), np.arange(n1), np.arange(n1), indexing="ij")
    coords = np.column_stack([i.ravel(), j.ravel(), k.ravel()]).astype(np.float64)
    node = np.arange(n1**3).reshape(n1, n1, n1)
    parts = [
        np.column_stack([node[:-1, :, :].ravel(), node[1:, :, :].ravel()]),
        np.column_stack([node[:, :-1, :].ravel(), node[:, 1:, :].ravel()]),
        np.column_stack([node[:, :, :-1].ravel(), node[:, :, 1:].ravel()]),
        np.column_stack([node[:-1, :-1, :].ravel(), node[1:, 1:, :].ravel()]),
        np.column_stack([node[:-1, :, :-1].ravel(), node[1:, :, 1:].ravel()]),
        np.column_stack([node[:, :-1, :-1].ravel(), node[:, 1:, 1:].ravel()]),
        np.column_stack([node[:-1, :-1, :-1].ravel(), node[1:, 1:, 1:].ravel()]),
    ]
    return coords, np.vstack(parts).astype(np.int64)


def build(dim: int, members: float, mechanism: bool = False) -> Model:
    if dim == 2:
        n = max(1, round((-2 + math.sqrt(4 + 12 * members)) / 6))
        coords, conn = grid2d(n)
    else:
        n = max(1, round((members / 7) ** (1 / 3)))
        coords, conn = lattice3d(n)
    if mechanism and dim == 2:  # no diagonals in the middle column of cells: that column shears
        mid = n // 2
        diag = (coords[conn[:, 1], 0] != coords[conn[:, 0], 0]) & (coords[conn[:, 1], 1] != coords[conn[:, 0], 1])
        conn = conn[~(diag & (coords[conn[:, 0], 0] == mid))]
    pinned = np.flatnonzero(coords[:, 0] == 0)
    axes = dim - 1 if mechanism and dim == 3 else dim  # 3D: the face held along x and y only, free along z
    rn = np.repeat(pinned, axes)
    rd = np.tile(np.eye(dim)[:axes], (pinned.size, 1))
    m = conn.shape[0]
    return Model(
        title=f"bench {dim}D",
        dim=dim,
        units=Units("m", "kN"),
        node_ids=tuple(str(i) for i in range(coords.shape[0])),
        coords=coords,
        member_ids=tuple(str(i) for i in range(m)),
        conn=conn,
        E=np.full(m, 2.1e8),
        A=np.where(np.arange(m) % 3 == 0, 4e-3, 1.2e-3),
        alpha=np.zeros(m),
        restraint_node=rn.astype(np.int64),
        restraint_dir=rd,
        restraint_label=tuple("xyz"[a] for _ in range(pinned.size) for a in range(axes)),
        spring_node=np.zeros(0, dtype=np.int64),
        spring_dir=np.zeros((0, dim)),
        spring_k=np.zeros(0),
        load_cases=(),
        combinations=(),
    )


def rss_gib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**20


def bench(dim: int, members: float, mechanism: bool = False) -> dict[str, float]:
    model = build(dim, members, mechanism)
    t = time.perf_counter()
    system = build_system(model)
    t_build = time.perf_counter() - t
    rss0 = rss_gib()
    t = time.perf_counter()
    factor: linsolve.Factor | None
    try:
        factor = linsolve.factorize(system.K_r)
    except np.linalg.LinAlgError:
        factor = None
    t_factor = time.perf_counter() - t
    rss1 = rss_gib()
    cond = condition_estimate(system.K_r, factor) if factor is not None else float("inf")
    if mechanism:  # what the engine does: the factor of a mechanism fails or is refused (condition above 1e14)
        assert not cond < SINGULAR_CONDITION, cond
        factor = None
    t = time.perf_counter()
    rep = stability.analyse(model, system, factor, condition=cond)
    t_stab = time.perf_counter() - t
    ctx = Context(
        model=model,
        results=None,
        tolerances=Tolerances(),
        system=system,
        factor=factor,
        condition=cond,
        stability=rep,
        solution=None,
        unsolvable_reason="",
        precision=None,
    )
    t = time.perf_counter()
    outs = stability_check.run(ctx) + stiffness_health.run(ctx)
    t_checks = time.perf_counter() - t
    row = {
        "dim": dim,
        "members": model.n_members,
        "dofs_free": system.K_r.shape[0],
        "build_s": t_build,
        "factor_s": t_factor,
        "stability_s": t_stab,
        "checks_s": t_checks,
        "ratio": (t_stab + t_checks) / t_factor,
        "rss_before_factor_gib": rss0,
        "rss_after_factor_gib": rss1,
        "rss_end_gib": rss_gib(),
    }
    status = ",".join(f"{o.check}:{o.status.value}" for o in outs)
    print(
        f"{dim}D {model.n_members:>9} members {row['dofs_free']:>8} dofs | build {t_build:6.2f} s | factor "
        f"{t_factor:6.2f} s | stability {t_stab:6.2f} s + checks {t_checks:6.2f} s | "
        f"ratio {row['ratio']:.2f} | peak RSS {rss1:.2f} -> {row['rss_end_gib']:.2f} GiB | "
        f"{rep.classification}, {rep.proof} | {status}",
        flush=True,
    )
    return row


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--full", action="store_true", help="2D 10⁶ and 3D 3·10⁵ members")
    ap.add_argument("--members", type=float, help="one size only")
    ap.add_argument("--dim", type=int, choices=(2, 3), default=2)
    ap.add_argument("--mechanism", action="store_true", help="a model with one mechanism: the factor is refused")
    args = ap.parse_args()
    if args.members:
        bench(args.dim, args.members, args.mechanism)
        return
    sizes = [(2, 1e5), (3, 3e4)] + ([(2, 1e6), (3, 3e5)] if args.full else [])
    for dim, members in sizes:
        bench(dim, members)
    for dim, members in sizes:
        bench(dim, members, mechanism=True)


if __name__ == "__main__":
    main()
