"""Cost of the high-precision recomputation and its certificate against the plain float64 solve.

Generated lattices (invented data) from ``benchmarks/generate.py``: the 2D
triangulated grid and the 3D braced cubic lattice.  For each size the script
prints the float64 factorisation and solve times, the refinement (exact
member-wise residuals + float corrections), the certificate (Rump 2006
shifted factorisation), their ratio to one float64 factorisation, the digits
proven and the peak memory (``ru_maxrss``, whole process).

Usage::

    python benchmarks/bench_precision.py grid2d 1e4 1e5
    python benchmarks/bench_precision.py lattice3d 3e4 --digits 30 --sparse-limit 2000000
    python benchmarks/bench_precision.py lattice3d 1e5 --budget inf     # certificate whatever it costs

``--budget`` is the size policy's limit in engine factorisations
(``audit.certify.CERTIFICATE_BUDGET`` by default); the line "policy" shows
the estimate the decision was made on, so that it can be compared with the
measured ratio when the certificate is forced.

Run the heavy sizes (2D 1e6, 3D 3e5) once, alone.
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from generate import build, grid2d_size, lattice3d_size

from audit import certify, precision
from audit.solve import build_system, factorize_system, solve_with


def with_texts(model):  # type: ignore[no-untyped-def]
    """The generated model with the decimal texts a file reader would keep (coordinates rounded to 1e-9)."""

    def txt(x: float) -> str:
        r = round(float(x), 9)
        return str(int(r)) if r == int(r) else repr(r)

    coords = np.round(model.coords, 9)
    cases = []
    for lc in model.load_cases:
        nz = np.argwhere(lc.loads != 0)
        cases.append(replace(lc, load_text=tuple((int(i), int(a), txt(lc.loads[i, a])) for i, a in nz)))
    return replace(
        model,
        coords=coords,
        coords_text=tuple(tuple(txt(c) for c in row) for row in coords),
        E_text=tuple(txt(e) for e in model.E),
        A_text=tuple(repr(float(a)) for a in model.A),
        alpha_text=tuple("0" for _ in model.E),
        restraint_dir_text=tuple(tuple(txt(c) for c in row) for row in model.restraint_dir),
        load_cases=tuple(cases),
    )


def peak_gib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**20


def run(kind: str, members: float, digits: int, sparse_limit: int, budget: float) -> None:
    m = grid2d_size(members) if kind == "grid2d" else lattice3d_size(members)
    t = time.perf_counter()
    model, _doc = build(kind, m)
    model = with_texts(model)
    t_build = time.perf_counter() - t
    t = time.perf_counter()
    system = build_system(model)
    t_asm = time.perf_counter() - t
    t = time.perf_counter()
    factor, cond = factorize_system(model, system)
    t_fact = time.perf_counter() - t
    t = time.perf_counter()
    solution = solve_with(model, system, factor, cond)
    t_solve = time.perf_counter() - t
    t = time.perf_counter()
    rep = precision.analyse(
        model,
        system,
        factor,
        solution,
        None,
        digits=digits,
        sparse_limit=sparse_limit,
        max_factor_nonzeros=10**12,
        certificate_budget=budget,
    )
    t_prec = time.perf_counter() - t
    tm = dict(rep.timings)
    refine = tm["refinement_residuals"] + tm["refinement_solves"]
    case = rep.cases[0]
    print(
        f"{kind} members={model.n_members} dofs={system.K_r.shape[0]} backend={factor.backend} "
        f"factor nonzeros={getattr(factor, 'factor_nonzeros', None)} "
        f"build={t_build:.2f}s assemble={t_asm:.2f}s factorise(+cond)={t_fact:.2f}s solve={t_solve:.2f}s"
    )
    print(
        f"  precision total={t_prec:.2f}s  exact-input={tm['exact_input']:.2f}s setup={tm['setup']:.2f}s "
        f"refine={refine:.2f}s (residuals {tm['refinement_residuals']:.2f}s, solves {tm['refinement_solves']:.2f}s, "
        f"{case.iterations} steps) certificate={tm['certificate']:.2f}s bounds={tm['bounds_and_reported']:.2f}s"
    )
    print(
        f"  ratio to one float64 factorisation: refine {refine / t_fact:.2f}, certificate "
        f"{tm['certificate'] / t_fact:.2f}, all {t_prec / t_fact:.2f}; "
        f"to factorise+solve {t_prec / (t_fact + t_solve):.2f}"
    )
    print(
        f"  digits requested {digits}, proven {case.proven_digits}, lambda_lo={rep.lambda_lo} "
        f"({rep.lambda_method}; {rep.lambda_reason}), cond est {rep.condition_estimate:.3g}, "
        f"peak RSS {peak_gib():.2f} GiB"
    )
    plan = rep.certificate.get("size_policy", {})
    print(
        f"  policy: run={plan.get('run')} estimated {plan.get('estimated_cost_in_factorisations')} factorisations "
        f"({plan.get('factor_nonzeros')} factor nonzeros, {plan.get('factor_nonzeros_source')}); "
        f"digits estimated (not proven) {case.estimated_digits}"
    )


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("kind", choices=["grid2d", "lattice3d"])
    ap.add_argument("members", nargs="+", type=float)
    ap.add_argument("--digits", type=int, default=30)
    ap.add_argument("--sparse-limit", type=int, default=certify.SPARSE_LIMIT)
    ap.add_argument("--budget", type=float, default=certify.CERTIFICATE_BUDGET)
    args = ap.parse_args(argv)
    for members in args.members:
        run(args.kind, members, args.digits, args.sparse_limit, args.budget)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
