"""Time the diagnosis check alone on large generated models with one deliberate source error.

For each size and error kind the script builds the model (``generate.build``, invented data), makes the
*source's* model by injecting one error, solves it with our own float64 solver, writes its results as a
source would (``--digits`` significant digits, each value's rounding quantum half a unit in its last digit),
builds the audit context once (:func:`audit.engine.build_context`, which factorises, solves and refines)
and then times :func:`audit.checks.diagnosis.run` ``--repeat`` times.  It prints the median, the codes and
locations of the diagnosis findings (so that two versions of the check can be compared finding by finding)
and whether the injected error was named.

Error kinds:

* ``ea``: one member's E in the source is ``--ea-factor`` times the model's (member chosen near the middle
  of the structure among those carrying at least a tenth of the largest force);
* ``load``: one load of the model is missing from the source's analysis (the loaded node nearest the
  middle of the loaded face);
* ``slip``: one member force mistyped in the source's table (×1.3);
* ``five``: five independent errors: the ``ea`` member and four mistyped member forces spread over the
  structure (the diagnosis names at most three causes: the rows say how many of the five it named).

Each row also gives the time of one factorisation of the restrained K (``factorize_system``, timed here
beside the check) and the ratio diagnosis / factorisation.

Usage::

    python benchmarks/bench_diagnosis.py --sizes grid2d:1e4 grid2d:1e5 --kinds ea load --repeat 3
    python benchmarks/bench_diagnosis.py --sizes grid2d:1e6 --repeat 1 --json /tmp/diag_1e6.json  # heavy: alone

``--baseline DIR`` also times another version of the check on the same context, alternately with this one:
``DIR`` holds its ``diagnosis.py`` and ``_diagnosis_causes.py`` (e.g. written with ``git show
REV:audit/checks/diagnosis.py``), and the rows say whether both versions gave the same findings.

``--tree DIR`` does the same for a source tree of the package layout (``DIR/audit/checks/diagnosis/``, e.g.
the main checkout, or ``git archive REV | tar -x -C DIR``): its diagnosis package is loaded beside this one
(the rest of the audit, context included, is this tree's) and the two are run *alternately*, baseline then
this tree, ``--repeat`` times each, so that a shared machine's load falls on both alike.  ``--files`` times
model files that carry their reported results (``generate.py`` output, e.g. ``benchmarks/out/*.json``)
instead of generated sizes; their rows name the findings, with no injected error to compare with::

    python benchmarks/bench_diagnosis.py --files benchmarks/out/grid2d_4.8e5_c1.json \
        benchmarks/out/lattice3d_2e5_c1.json --tree /work/main --repeat 5
"""

from __future__ import annotations

import argparse
import gc
import importlib.util
import json
import statistics
import sys
import time
import types
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import generate  # noqa: E402

from audit.checks import diagnosis  # noqa: E402
from audit.engine import build_context  # noqa: E402
from audit.model import CaseResults, Model, Results  # noqa: E402
from audit.solve import factorize_system, solve_model  # noqa: E402


def load_baseline(folder: str) -> types.ModuleType:
    """The diagnosis check of another version, from its files in ``folder`` (its own module names): the
    single-module layout before the package (``diagnosis.py``, ``_diagnosis_causes.py`` and, when present,
    ``_diagnosis_block.py``, registered under its old import name)."""
    block = Path(folder) / "_diagnosis_block.py"
    if block.exists():
        bspec = importlib.util.spec_from_file_location("audit.checks._diagnosis_block", block)
        assert bspec is not None
        assert bspec.loader is not None
        bmod = importlib.util.module_from_spec(bspec)
        sys.modules[bspec.name] = bmod
        bspec.loader.exec_module(bmod)
    spec = importlib.util.spec_from_file_location("baseline_diagnosis_causes", Path(folder) / "_diagnosis_causes.py")
    assert spec is not None
    assert spec.loader is not None
    causes = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = causes
    spec.loader.exec_module(causes)
    text = (Path(folder) / "diagnosis.py").read_text()
    text = text.replace("from audit.checks import _diagnosis_causes as dc", "import baseline_diagnosis_causes as dc")
    mod = types.ModuleType("baseline_diagnosis")
    sys.modules[mod.__name__] = mod
    exec(compile(text, str(Path(folder) / "diagnosis.py"), "exec"), mod.__dict__)
    return mod


PACKAGE = "audit.checks.diagnosis"


def load_tree(root: str) -> types.ModuleType:
    """The diagnosis package of another source tree (package layout), loaded under its own import names
    and then set aside: this tree's modules are back in ``sys.modules`` afterwards, and the loaded package's
    modules keep references to each other (their imports ran while they were the ones registered)."""
    import audit.checks

    folder = Path(root) / "audit" / "checks" / "diagnosis"
    ours = {k: v for k, v in sys.modules.items() if k == PACKAGE or k.startswith(PACKAGE + ".")}
    for k in ours:
        del sys.modules[k]
    try:
        spec = importlib.util.spec_from_file_location(
            PACKAGE, folder / "__init__.py", submodule_search_locations=[str(folder)]
        )
        assert spec is not None
        assert spec.loader is not None
        mod = importlib.util.module_from_spec(spec)
        sys.modules[PACKAGE] = mod
        spec.loader.exec_module(mod)
    finally:
        for k in [k for k in sys.modules if k == PACKAGE or k.startswith(PACKAGE + ".")]:
            del sys.modules[k]
        sys.modules.update(ours)
        audit.checks.diagnosis = ours[PACKAGE]  # type: ignore[attr-defined]
    return mod


def alternate(baseline: Any, ctx: Any, repeat: int) -> dict[str, Any]:
    """Baseline and this tree's check run in turn on one context, ``repeat`` times each: medians of the wall
    times and of their solves, the columns solved, and whether the findings are the same."""
    runs: dict[str, list[tuple[list[float], list[float], int, Any]]] = {"baseline": [], "new": []}
    for _ in range(repeat):
        runs["baseline"].append(time_check(baseline, ctx, 1))
        runs["new"].append(time_check(diagnosis, ctx, 1))
    row: dict[str, Any] = {}
    texts = {}
    for name, rs in runs.items():
        times = [r[0][0] for r in rs]
        row[f"{name}_s"] = [round(t, 3) for t in times]
        row[f"{name}_median_s"] = round(statistics.median(times), 3)
        row[f"{name}_solve_median_s"] = round(statistics.median(r[1][0] for r in rs), 3)
        row[f"{name}_columns_solved"] = rs[-1][2]
        texts[name] = [(f.code, f.location.label(), f.message) for o in rs[-1][3] for f in o.findings]
    row["same_findings"] = texts["baseline"] == texts["new"]
    row["findings"] = [(c, loc) for c, loc, _m in texts["new"]]
    return row


def bench_file(path: str, repeat: int, baseline: Any) -> dict[str, Any]:
    """One model file with its reported results: the diagnosis alone, alternately with the baseline."""
    from audit.sources import load_source

    read = load_source(path)
    t0 = time.perf_counter()
    ctx = build_context(read.model, read.results if read.results is not None else read.model.results)
    t_ctx = time.perf_counter() - t0
    row = {"model": Path(path).name, "members": read.model.n_members, "context_s": round(t_ctx, 2)}
    if baseline is None:
        times, solves, cols, outs = time_check(diagnosis, ctx, repeat)
        return row | {
            "new_s": [round(t, 3) for t in times],
            "new_median_s": round(statistics.median(times), 3),
            "new_solve_median_s": round(statistics.median(solves), 3),
            "new_columns_solved": cols,
            "findings": [(f.code, f.location.label()) for o in outs for f in o.findings],
        }
    return row | alternate(baseline, ctx, repeat)


def print_files(rows: list[dict[str, Any]]) -> None:
    print(f"{'model':<24} {'members':>9} {'baseline s':>10} {'(solves)':>9} {'cols':>5} {'median s':>9} ", end="")
    print(f"{'(solves)':>9} {'cols':>5} runs  same   findings")
    for r in rows:
        bs = (
            f"{r['baseline_median_s']:>10.3f} {r['baseline_solve_median_s']:>9.3f} {r['baseline_columns_solved']:>5}"
            if "baseline_median_s" in r
            else f"{'-':>10} {'-':>9} {'-':>5}"
        )
        codes = ", ".join(f"{c} {loc}" for c, loc in r["findings"])
        print(
            f"{r['model']:<24} {r['members']:>9,} {bs} {r['new_median_s']:>9.3f} {r['new_solve_median_s']:>9.3f} "
            f"{r['new_columns_solved']:>5} {len(r['new_s']):>4}  {r.get('same_findings', '-')!s:<5}  {codes[:120]}"
        )


class TimedFactor:
    """The context's factor with the time spent in its solves added up (the part of the check that is the
    solves it needs, as against its own work)."""

    def __init__(self, factor: Any) -> None:
        self.factor = factor
        self.backend = factor.backend
        self.seconds = 0.0
        self.columns = 0

    def solve(self, b: Any) -> Any:
        t0 = time.perf_counter()
        x = self.factor.solve(b)
        self.seconds += time.perf_counter() - t0
        self.columns += 1 if np.ndim(b) == 1 else int(np.shape(b)[1])
        return x

    def __getattr__(self, name: str) -> Any:
        return getattr(self.factor, name)


def time_check(check: Any, ctx: Any, repeat: int) -> tuple[list[float], list[float], int, Any]:
    """Wall times of ``check.run(ctx)``, the seconds of them spent in solves, the columns solved, the outcomes."""
    times: list[float] = []
    solves: list[float] = []
    outs: Any = None
    timed = TimedFactor(ctx.factor)
    tctx = replace(ctx, factor=timed)
    for _ in range(repeat):
        gc.collect()
        timed.seconds, timed.columns = 0.0, 0
        t0 = time.perf_counter()
        outs = check.run(tctx)
        times.append(time.perf_counter() - t0)
        solves.append(timed.seconds)
    return times, solves, timed.columns, outs


def rounded(values: np.ndarray, digits: int) -> tuple[np.ndarray, np.ndarray]:
    """Values rounded to ``digits`` significant figures and half a unit of the last digit kept (the quantum)."""
    v = np.asarray(values, dtype=np.float64)
    mag = np.where(v != 0.0, np.floor(np.log10(np.abs(np.where(v != 0.0, v, 1.0)))), 0.0)
    unit = 10.0 ** (mag - (digits - 1))
    out = np.round(v / unit) * unit
    return out, np.where(np.isfinite(v), 0.5 * unit, 0.0)


def with_load_texts(model: Model) -> Model:
    """The model with the decimal text of every load, as the reader gives it.

    ``generate.build`` makes the model in memory without texts, and the high-precision stage builds its
    loads from ``LoadCase.load_text`` only (it would see no loads at all, and the reference it hands the
    checks would be zero).
    """
    cases = []
    for lc in model.load_cases:
        nodes, axes = np.nonzero(lc.loads)
        text = tuple((int(n), int(a), repr(float(lc.loads[n, a]))) for n, a in zip(nodes, axes, strict=True))
        cases.append(replace(lc, load_text=text))
    return replace(model, load_cases=tuple(cases))


def inject(model: Model, kind: str, ea_factor: float) -> tuple[Model, dict[str, Any]]:
    """The source's model with one error, and what was injected (``slip`` and ``five`` start from the
    model itself, or from one member's EA, and get their slips in the tables: :func:`slip_tables`)."""
    mid = model.coords.mean(axis=0)
    if kind == "slip":
        return model, {"kind": "slip"}
    if kind in ("ea", "five"):
        sol = solve_model(model)
        n = np.abs(sol.cases[0].axial_forces)
        strong = np.flatnonzero(n >= 0.1 * n.max())
        centre = 0.5 * (model.coords[model.conn[strong, 0]] + model.coords[model.conn[strong, 1]])
        m = int(strong[np.argmin(np.linalg.norm(centre - mid, axis=1))])
        E = model.E.copy()
        E[m] *= ea_factor
        return replace(model, E=E), {"kind": kind, "member": model.member_ids[m], "factor": ea_factor}
    lc = model.load_cases[0]
    loaded = np.flatnonzero(np.any(lc.loads != 0.0, axis=1))
    a = int(loaded[np.argmin(np.linalg.norm(model.coords[loaded] - mid, axis=1))])
    loads = lc.loads.copy()
    loads[a] = 0.0
    keep = tuple(t for t in lc.load_text if t[0] != a)
    return replace(model, load_cases=(replace(lc, loads=loads, load_text=keep), *model.load_cases[1:])), {
        "kind": "load",
        "node": model.node_ids[a],
    }


def slip_tables(results: Results, model: Model, injected: dict[str, Any], count: int) -> Results:
    """``count`` member forces of the first case mistyped (×1.3), spread over the structure: independent
    errors in the source's tables.  Their member ids go into ``injected["slips"]``."""
    cs = results.cases[0]
    n = np.abs(np.nan_to_num(cs.axial_forces))
    strong = np.flatnonzero(n >= 0.3 * n.max())
    picks = strong[np.linspace(0, strong.size - 1, count + 2).astype(int)[1:-1]]
    N = cs.axial_forces.copy()
    N[picks] *= 1.3
    injected["slips"] = [model.member_ids[int(i)] for i in picks]
    return replace(results, cases=(replace(cs, axial_forces=N), *results.cases[1:]))


def source_results(model: Model, source: Model, digits: int) -> Results:
    """What the source would export: its own solution, rounded, reactions only at the supported nodes."""
    sol = solve_model(source)
    supported = np.zeros(model.n_nodes, dtype=bool)
    supported[model.restraint_node] = True
    cases = []
    for cs in sol.cases:
        U, qU = rounded(cs.displacements, digits)
        N, qN = rounded(cs.axial_forces, digits)
        R, qR = rounded(np.where(supported[:, None], cs.reactions, np.nan), digits)
        cases.append(CaseResults(cs.case_id, U, qU, N, qN, R, qR, True, True, True))
    return Results("bench_diagnosis.py", "tension_positive", model.units, 1.0, 1.0, tuple(cases))


def bench_one(
    kind: str, members: float, error: str, repeat: int, digits: int, ea_factor: float, baseline: Any = None
) -> dict[str, Any]:
    m = generate.grid2d_size(members) if kind == "grid2d" else generate.lattice3d_size(members)
    model, _doc = generate.build(kind, m)
    model = with_load_texts(model)
    source, injected = inject(model, error, ea_factor)
    results = source_results(model, source, digits)
    if error in ("slip", "five"):
        results = slip_tables(results, model, injected, 1 if error == "slip" else 4)
    del source
    t0 = time.perf_counter()
    ctx = build_context(model, results)
    t_ctx = time.perf_counter() - t0
    factor_times = []
    for _ in range(max(1, min(repeat, 2))):
        gc.collect()
        t0 = time.perf_counter()
        factorize_system(model, ctx.system)
        factor_times.append(time.perf_counter() - t0)
    row: dict[str, Any] = {}
    runs: list[tuple[list[float], list[float], int, Any]] = []
    if baseline is not None:  # baseline and this tree in turn, so that the machine's load falls on both alike
        bruns = []
        for _ in range(repeat):
            bruns.append(time_check(baseline, ctx, 1))
            runs.append(time_check(diagnosis, ctx, 1))
        btimes = [r[0][0] for r in bruns]
        bouts = bruns[-1][3]
        row = {
            "baseline_s": [round(t, 3) for t in btimes],
            "baseline_median_s": round(statistics.median(btimes), 3),
            "baseline_solve_median_s": round(statistics.median(r[1][0] for r in bruns), 3),
            "baseline_columns_solved": bruns[-1][2],
            "baseline_findings": [(f.code, f.location.label(), f.message) for o in bouts for f in o.findings],
        }
        times, solves = [r[0][0] for r in runs], [r[1][0] for r in runs]
        cols, outs = runs[-1][2], runs[-1][3]
    else:
        times, solves, cols, outs = time_check(diagnosis, ctx, repeat)
    findings = [(f.code, f.location.label()) for o in outs for f in o.findings]
    if baseline is not None:
        row["same_findings"] = row.pop("baseline_findings") == [
            (f.code, f.location.label(), f.message) for o in outs for f in o.findings
        ]
    summary = dict(outs[0].summary)
    wanted = set()
    if error in ("ea", "five"):
        wanted.add(("DX104", f"member {injected['member']}"))
    if error == "load":
        wanted.add(("DX105", f"node {injected['node']}"))
    wanted |= {("DX115", f"member {m}") for m in injected.get("slips", [])}
    named_n = len(wanted & set(findings))
    named = named_n == len(wanted)
    factor_s = statistics.median(factor_times)
    return {
        "model": f"{kind}:{members:g}",
        "members": model.n_members,
        "error": injected,
        "context_s": round(t_ctx, 2),
        "diagnosis_s": [round(t, 3) for t in times],
        "median_s": round(statistics.median(times), 3),
        "solve_median_s": round(statistics.median(solves), 3),
        "columns_solved": cols,
        "findings": findings,
        "candidates_tried": summary.get("candidates_tried"),
        "named_the_injected_error": named,
        "errors_injected": len(wanted),
        "errors_named": named_n,
        "factorisation_s": round(factor_s, 3),
        "diagnosis_over_factorisation": round(statistics.median(times) / factor_s, 3) if factor_s > 0 else None,
        **row,
    }


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--sizes", nargs="+", default=["grid2d:1e4", "grid2d:1e5"], help="KIND:MEMBERS")
    p.add_argument("--kinds", nargs="+", default=["ea", "load"], choices=["ea", "load", "slip", "five"])
    p.add_argument("--repeat", type=int, default=3)
    p.add_argument("--digits", type=int, default=10)
    p.add_argument("--ea-factor", type=float, default=0.6)
    p.add_argument("--json", help="also write the rows to this file")
    p.add_argument("--baseline", help="folder with another version's diagnosis.py and _diagnosis_causes.py")
    p.add_argument("--tree", help="a source tree whose audit/checks/diagnosis/ is run alternately with this one")
    p.add_argument("--files", nargs="+", help="model files with their reported results, instead of --sizes")
    a = p.parse_args(argv)
    baseline = load_tree(a.tree) if a.tree else load_baseline(a.baseline) if a.baseline else None
    if a.files:
        file_rows = []
        for path in a.files:
            file_rows.append(bench_file(path, a.repeat, baseline))
            print(json.dumps(file_rows[-1]), flush=True)
            gc.collect()
        print()
        print_files(file_rows)
        if a.json:
            Path(a.json).write_text(json.dumps(file_rows, indent=1))
        return 0
    rows = []
    for size in a.sizes:
        kind, members = size.split(":")
        for error in a.kinds:
            row = bench_one(kind, float(members), error, a.repeat, a.digits, a.ea_factor, baseline)
            rows.append(row)
            print(json.dumps(row), flush=True)
            gc.collect()
    print()
    head = (
        f"{'model':<14} {'members':>9} {'error':<6} {'baseline s':>10} {'(solves)':>9} {'median s':>9} {'(solves)':>9}"
    )
    print(head + " factor s  diag/fact runs  same   named  findings")
    for r in rows:
        codes = ", ".join(f"{c} {loc}" for c, loc in r["findings"])
        bs = (
            f"{r['baseline_median_s']:>10.3f} {r['baseline_solve_median_s']:>9.3f}"
            if "baseline_median_s" in r
            else f"{'-':>10} {'-':>9}"
        )
        print(
            f"{r['model']:<14} {r['members']:>9,} {r['error']['kind']:<6} {bs} {r['median_s']:>9.3f} "
            f"{r['solve_median_s']:>9.3f} {r['factorisation_s']:>8.3f} {r['diagnosis_over_factorisation']!s:>10} "
            f"{len(r['diagnosis_s']):>4}  {r.get('same_findings', '-')!s:<5}  "
            f"{r['errors_named']}/{r['errors_injected']:<3}  {codes[:200]}"
        )
    if a.json:
        Path(a.json).write_text(json.dumps(rows, indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main())
