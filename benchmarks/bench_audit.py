"""Full audit of large generated models against the floor: one factorisation and solve of the same K.

For each size, each repeat runs two fresh processes one after the other (never
in parallel): the *audit* (read the file, then :func:`audit.engine.audit_with_context`,
then render the text and JSON reports) with every stage timed and its peak
memory taken, and the *floor* (the restrained K of the same model, factorised
and solved once with the fastest solver available).  The table gives medians
over the repeats and the ratios audit / floor.

Memory is the peak resident size above the start of the stretch (``measure.py``);
the floor's includes the matrix K_r itself (its CSR bytes), since the audit
has to hold that too.

Usage::

    python benchmarks/bench_audit.py --sizes grid2d:1e4 lattice3d:1e4 --repeat 3
    python benchmarks/bench_audit.py --sizes grid2d:1e6 lattice3d:3e5 --repeat 2 --json out/big.json

Model files are generated once into ``benchmarks/out/`` (``generate.py``) and reused.
"""

from __future__ import annotations

import argparse
import importlib
import json
import os
import platform
import statistics
import subprocess
import sys
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
OUT = HERE / "out"
STAGES = ("read", "assemble", "factorise", "stability", "recompute", "refine", "checks", "report")
#: the engine's progress labels (audit/engine.py) -> benchmark stage
LABELS = {
    "assembling": "assemble",
    "factorising": "factorise",
    "checking stability": "stability",
    "recomputing": "recompute",
    "refining": "refine",
}


# ------------------------------------------------------------------ children
def _audit_child(path: str, reader: str) -> dict:
    sys.path.insert(0, str(HERE))
    from measure import Meter

    from audit import engine, linsolve
    from audit.reporters import json_report, text

    linsolve.available_backends()  # locate MKL before timing, as a long-running service would have
    reader_module = importlib.import_module(f"audit.{reader}")
    meter = Meter()

    def progress(label: str) -> None:
        for prefix, stage in LABELS.items():
            if label.startswith(prefix):
                meter.mark(stage)
                return

    original = engine.run_checks

    def run_checks(*args: Any, **kwargs: Any) -> Any:
        meter.mark("checks")
        return original(*args, **kwargs)

    engine.run_checks = run_checks  # instrumentation only: the engine has no progress step for the checks
    meter.start("read")
    model = reader_module.load_model(path)
    result, ctx = engine.audit_with_context(model, progress=progress)
    meter.mark("report")
    text.render(result, model, {})
    json_report.render(result, model)
    whole = meter.stop()
    tail = Path(path).read_text(encoding="utf-8")[-4000:].split('"x-benchmark": ', 1)[1]
    facts = json.JSONDecoder().raw_decode(tail)[0]
    perturbed = set(facts["perturbed_members"])
    flagged = {f.location.member for f in result.findings if f.severity.label == "error" and f.location.member}
    return {
        "members": model.n_members,
        "dofs": model.n_dofs,
        "free": int(ctx.system.K_r.shape[0]),
        "backend": ctx.solution.backend if ctx.solution else "none",
        "verdict": result.verdict,
        "perturbed_found": len(perturbed & flagged),
        "perturbed": len(perturbed),
        "other_flagged": len(flagged - perturbed),
        "crashed": list(result.crashed),
        "stages": {s.name: [s.seconds, s.peak_mib] for s in meter.spans},
        "total": [whole.seconds, whole.peak_mib],
    }


def _floor_child(path: str) -> dict:
    sys.path.insert(0, str(HERE))
    import numpy as np
    from measure import Meter

    from audit import exchange, linsolve
    from audit.solve import build_system

    model = exchange.load_model(path)
    system = build_system(model)
    K = system.K_r
    b = system.T.T @ model.load_cases[0].loads.reshape(-1)
    backend = linsolve.available_backends()[0]
    k_mib = (K.data.nbytes + K.indices.nbytes + K.indptr.nbytes) / 2**20
    del model
    meter = Meter()
    meter.start("floor")
    x = linsolve.factorize(K, backend).solve(b)
    whole = meter.stop()
    return {
        "backend": backend,
        "total": [whole.seconds, whole.peak_mib + k_mib],
        "residual": float(np.abs(K @ x - b).max() / np.abs(b).max()),
    }


# -------------------------------------------------------------------- parent
def _model_file(kind: str, members: str, cases: int) -> Path:
    OUT.mkdir(exist_ok=True)
    path = OUT / f"{kind}_{members}_c{cases}.json"
    if not path.exists():
        print(f"generating {path.name} ...", file=sys.stderr, flush=True)
        subprocess.run(
            [sys.executable, str(HERE / "generate.py"), kind, members, "-o", str(path), "--cases", str(cases)],
            check=True,
            stdout=subprocess.DEVNULL,
        )
    return path


def _run(args: list[str], timeout: float) -> dict:
    out = subprocess.run(
        [sys.executable, __file__, *args], capture_output=True, text=True, timeout=timeout, check=False
    )
    if out.returncode != 0:
        raise RuntimeError(f"child {args} failed:\n{out.stderr[-3000:]}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def machine() -> str:
    cpu = "unknown CPU"
    try:
        with open("/proc/cpuinfo", encoding="ascii", errors="replace") as fh:
            for line in fh:
                if line.startswith("model name"):
                    cpu = line.split(":", 1)[1].strip()
                    break
        with open("/proc/meminfo", encoding="ascii") as fh:
            mem = int(fh.readline().split()[1]) / 2**20
    except OSError:
        mem = float("nan")
    load = os.getloadavg()[0]
    return (
        f"{os.cpu_count()} cores ({cpu}), {mem:.0f} GiB, Python {platform.python_version()}, "
        f"load average {load:.1f} at start"
    )


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description="time and memory of a full audit against the solver floor")
    p.add_argument("--sizes", nargs="+", default=["grid2d:1e3", "grid2d:1e4", "lattice3d:1e3", "lattice3d:1e4"])
    p.add_argument("--repeat", type=int, default=3)
    p.add_argument("--cases", type=int, default=1, help="load cases in each generated model")
    p.add_argument("--reader", choices=["exchange"], default="exchange")
    p.add_argument("--timeout", type=float, default=1800)
    p.add_argument("--json", metavar="PATH", help="also write the raw runs as JSON")
    p.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    a = p.parse_args(argv)
    if a.child:
        res = _audit_child(a.child[1], a.child[2]) if a.child[0] == "audit" else _floor_child(a.child[1])
        print(json.dumps(res))
        return 0
    print(machine(), flush=True)
    raw: dict[str, list] = {}
    table = []
    for size in a.sizes:
        kind, members = size.split(":")
        path = _model_file(kind, members, a.cases)
        audits, floors = [], []
        for _ in range(a.repeat):
            audits.append(_run(["--child", "audit", str(path), a.reader], a.timeout))
            floors.append(_run(["--child", "floor", str(path)], a.timeout))
        raw[size] = [{"audit": x, "floor": y} for x, y in zip(audits, floors, strict=True)]
        table.append(_row(kind, audits, floors))
        print(_render_stage_row(kind, audits), flush=True)
    print()
    print(_render_table(table))
    if a.json:
        Path(a.json).write_text(json.dumps({"machine": machine(), "runs": raw}, indent=1), encoding="utf-8")
    return 0


def _med(values: list[float]) -> float:
    return statistics.median(values)


def _row(kind: str, audits: list[dict], floors: list[dict]) -> dict:
    a0 = audits[0]
    t_audit = _med([x["total"][0] for x in audits])
    m_audit = _med([x["total"][1] for x in audits])
    t_floor = _med([x["total"][0] for x in floors])
    m_floor = _med([x["total"][1] for x in floors])
    stages = {s: _med([x["stages"].get(s, [0.0, 0.0])[0] for x in audits]) for s in STAGES}
    stage_mem = {s: _med([x["stages"].get(s, [0.0, 0.0])[1] for x in audits]) for s in STAGES}
    return {
        "model": f"{kind} {a0['members']:,}",
        "dofs": a0["free"],
        "backend": a0["backend"],
        "found": f"{a0['perturbed_found']}/{a0['perturbed']}"
        + (f" (+{a0['other_flagged']})" if a0["other_flagged"] else ""),
        "stages": stages,
        "stage_mem": stage_mem,
        "audit": (t_audit, m_audit),
        "floor": (t_floor, m_floor),
        "runs": len(audits),
    }


def _render_stage_row(kind: str, audits: list[dict]) -> str:
    a0 = audits[0]
    parts = ", ".join(f"{s} {_med([x['stages'].get(s, [0, 0])[0] for x in audits]):.2f}" for s in STAGES)
    return f"{kind} {a0['members']:,}: {parts} s"


def _render_table(rows: list[dict]) -> str:
    head = ["model (members)", "free dofs", *STAGES, "audit", "floor", "ratio"]
    head += ["audit peak", "floor peak", "ratio", "found"]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for r in rows:
        ta, ma = r["audit"]
        tf, mf = r["floor"]
        cells = [
            r["model"],
            f"{r['dofs']:,}",
            *(f"{r['stages'][s]:.2f}" for s in STAGES),
            f"{ta:.2f} s",
            f"{tf:.2f} s",
            f"{ta / tf:.1f}×",
            f"{ma:,.0f} MiB",
            f"{mf:,.0f} MiB",
            f"{ma / mf:.1f}×",
            r["found"],
        ]
        lines.append("| " + " | ".join(cells) + " |")
    lines.append("")
    lines.append("Stage peak memory above the stage's start (MiB, median):")
    lines.append("")
    lines.append("| model | " + " | ".join(STAGES) + " |")
    lines.append("|" + "---|" * (len(STAGES) + 1))
    for r in rows:
        lines.append("| " + r["model"] + " | " + " | ".join(f"{r['stage_mem'][s]:,.0f}" for s in STAGES) + " |")
    return "\n".join(lines) + f"\n\nmedians of {rows[0]['runs'] if rows else 0} runs; stage times in seconds\n"


if __name__ == "__main__":
    sys.exit(main())
