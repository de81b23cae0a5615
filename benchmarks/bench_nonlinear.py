"""Non-linear solve (tension-only bracing) against one factorisation of the same structure.

A 2D grid of about 10⁵ members (``benchmarks/generate.py``, ``grid2d``) gets tension-only counter-braces
(the second diagonal) in the cells nearest the supports, so that they are 10 % of all members; two load
cases (dead load down, wind sideways) and one combination.  Under wind about half the counter-braces
go slack.  Printed, as medians over ``--repeat`` runs side by side in one process:

* the time of one factorisation of the restrained stiffness (with its condition estimate, as the
  engine does it);
* the time of :func:`audit.nonlinear.solve_nonlinear` for all three states given that factor, and its
  ratio to one factorisation;
* the factorisations the non-linear solve did beyond the engine's one, its low-rank (Woodbury) solves,
  the largest update rank, and the iterations and slack members per state.

Usage::

    PYTHONPATH=$PWD python benchmarks/bench_nonlinear.py [--members 1e5] [--share 0.1] [--repeat 3]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from generate import build, grid2d_size

from audit.model import Combination
from audit.nonlinear import solve_nonlinear
from audit.solve import build_system, factorize_system


def braced_model(members: float, share: float):
    m = grid2d_size(members)
    model, _doc = build("grid2d", m, cases=2)
    n1 = m + 1
    node = np.arange(n1 * n1).reshape(n1, n1)
    counter = np.column_stack([node[:-1, 1:].ravel(), node[1:, :-1].ravel()])  # the other diagonal of each cell
    want = round(share * model.n_members / (1.0 - share))
    counter = counter[: min(want, len(counter))]
    k = len(counter)
    conn = np.vstack([model.conn, counter]).astype(np.int64)
    n_old = model.n_members
    behaviour = np.concatenate([np.zeros(n_old, dtype=np.int64), np.ones(k, dtype=np.int64)])
    grow = np.zeros(k)
    cases = tuple(
        replace(
            lc, temperature=np.concatenate([lc.temperature, grow]), length_error=np.concatenate([lc.length_error, grow])
        )
        for lc in model.load_cases
    )
    model = replace(
        model,
        member_ids=tuple(str(i) for i in range(n_old + k)),
        conn=conn,
        E=np.concatenate([model.E, np.full(k, model.E[0])]),
        A=np.concatenate([model.A, np.full(k, float(model.A.min()))]),
        alpha=np.concatenate([model.alpha, grow]),
        behaviour=behaviour,
        load_cases=cases,
        combinations=(Combination("ULS", ((0, 1.35, "1.35"), (1, 1.5, "1.5"))),),
        E_text=(),
        A_text=(),
        alpha_text=(),
    )
    return model


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--members", type=float, default=1e5)
    ap.add_argument("--share", type=float, default=0.1, help="share of tension-only members")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    model = braced_model(args.members, args.share)
    n_nl = int(np.count_nonzero(model.behaviour))
    print(
        f"model: {model.n_members} members ({n_nl} tension-only, {100 * n_nl / model.n_members:.1f} %), "
        f"{model.n_dofs} dofs, {len(model.load_cases)} cases + {len(model.combinations)} combination"
    )
    system = build_system(model)
    t_fact, t_nl = [], []
    last = None
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        factor, cond = factorize_system(model, system)
        t_fact.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        last = solve_nonlinear(model, system, factor, cond)
        t_nl.append(time.perf_counter() - t0)
    assert last is not None
    assert last.nonlinear is not None
    rep = last.nonlinear
    f, n = statistics.median(t_fact), statistics.median(t_nl)
    print(f"one factorisation (with condition estimate): median {f:.3f} s over {args.repeat}")
    print(f"non-linear solve of all states:              median {n:.3f} s  = {n / f:.2f} x one factorisation")
    print(
        f"factorisations beyond the engine's one: {rep.factorisations}; low-rank (Woodbury) solves: "
        f"{rep.woodbury_solves}; largest update rank: {rep.max_rank}"
    )
    for st in rep.states:
        slack = int(np.count_nonzero((model.behaviour != 0) & ~st.active))
        print(f"  state {st.case_id:5s}: {st.status}, {st.iterations} iteration(s), {st.method}, {slack} slack")
    return 0


if __name__ == "__main__":
    sys.exit(main())
