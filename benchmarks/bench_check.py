"""The whole ``truss-audit check`` as a user runs it, against the floor, as whole processes side by side.

For each size and repeat, two fresh processes run one after the other (never
in parallel): the *floor* (``floor.py``: standard-library JSON read, numpy
assembly of the restrained K, one PARDISO SPD factorisation and solve) and the
*audit* (``python -m audit check FILE --quiet --timings --json OUT``, with
this tree first on the path).  Wall time and peak resident memory of each
process come from ``/usr/bin/time`` (``%e``, ``%M``), so interpreter start,
imports, reading and writing the report all count.  The audit's stage times
come from its own ``--timings`` lines on stderr.  The table gives medians over
the repeats and the ratios audit / floor; ``found`` counts the perturbed
members that the audit flagged with an error (and any other member flagged).

Usage::

    python benchmarks/bench_check.py --sizes grid2d:4.8e5 lattice3d:2e5 --repeat 3
    python benchmarks/bench_check.py --sizes lattice3d:1e6 --repeat 1 --digits 30 60

Model files are generated once into ``benchmarks/out/`` (``generate.py``) and reused.
"""

from __future__ import annotations

import argparse
import json
import os
import re
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
OUT = HERE / "out"
STAGES = (
    "read",
    "build",
    "factorise",
    "stability",
    "recompute",
    "refine",
    "certificate",
    "checks",
    "diagnosis",
    "report",
)
_STAGE_LINE = re.compile(r"^\s+(\w+)\s+([0-9.]+) s")


def _model_file(kind: str, members: str) -> Path:
    OUT.mkdir(exist_ok=True)
    path = OUT / f"{kind}_{members}_c1.json"
    if not path.exists():
        print(f"generating {path.name} ...", file=sys.stderr, flush=True)
        env = dict(os.environ, PYTHONPATH=str(ROOT))
        subprocess.run(
            [sys.executable, str(HERE / "generate.py"), kind, members, "-o", str(path)],
            check=True,
            stdout=subprocess.DEVNULL,
            env=env,
        )
    return path


def _tree_env(tree: Path) -> dict[str, str]:
    """The environment of a process run from ``tree``: the tree first on the path, its modules compiled.

    ``pip install`` compiles every module to bytecode when it installs it, so
    a user's ``truss-audit`` never compiles our sources at start-up.  A tree
    run from its sources does, at every start when ``PYTHONDONTWRITEBYTECODE``
    is set (0.43 s of a check, measured with cProfile: 109 modules compiled),
    so the tree's ``audit`` package is compiled once here (into its
    ``__pycache__`` folders, which git ignores), as an install would.
    """
    env = dict(os.environ, PYTHONPATH=str(tree))
    if tree not in _COMPILED:
        cmd = [sys.executable, "-m", "compileall", "-q", "-j", "0", str(tree / "audit")]
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, env=env)
        _COMPILED.add(tree)
    return env


_COMPILED: set[Path] = set()


def _timed(cmd: list[str], timeout: float, tree: Path = ROOT) -> tuple[float, float, str, str, int]:
    """Run ``cmd`` under /usr/bin/time: (seconds, peak MiB, stdout, stderr, exit code), ``tree`` first on the path."""
    with tempfile.NamedTemporaryFile("r", suffix=".time", delete=False) as fh:
        tfile = fh.name
    try:
        env = _tree_env(tree)
        p = subprocess.run(
            ["/usr/bin/time", "-o", tfile, "-f", "%e %M", *cmd],
            capture_output=True,
            text=True,
            timeout=timeout,
            env=env,
            check=False,
            cwd=tree,  # `python -m` puts the working directory first on sys.path: run in the tree measured
        )
        secs, kib = Path(tfile).read_text(encoding="ascii").split()[-2:]
    finally:
        os.unlink(tfile)
    return float(secs), int(kib) / 1024, p.stdout, p.stderr, p.returncode


def _floor(path: Path, timeout: float) -> dict:
    secs, mib, out, err, code = _timed([sys.executable, str(HERE / "floor.py"), str(path)], timeout)
    if code != 0:
        raise RuntimeError(f"floor failed on {path}:\n{err[-3000:]}")
    return {"seconds": secs, "peak_mib": mib, **json.loads(out.strip().splitlines()[-1])}


def _audit(path: Path, digits: int, timeout: float, tree: Path = ROOT) -> dict:
    with tempfile.TemporaryDirectory() as tmp:
        report = Path(tmp) / "report.json"
        cmd = [sys.executable, "-m", "audit", "check", str(path), "--quiet", "--timings", "--json", str(report)]
        cmd += ["--digits", str(digits)]
        secs, mib, _out, err, code = _timed(cmd, timeout, tree)
        if code not in (0, 1):
            raise RuntimeError(f"audit exited {code} on {path}:\n{err[-3000:]}")
        doc = json.loads(report.read_text(encoding="utf-8"))
    stages = {}
    for line in err.splitlines():
        m = _STAGE_LINE.match(line)
        if m:
            stages[m.group(1)] = float(m.group(2))
    tail = path.read_bytes()[-4000:].decode("utf-8").split('"x-benchmark": ', 1)[1]
    perturbed = {str(m) for m in json.JSONDecoder().raw_decode(tail)[0]["perturbed_members"]}
    flagged = {
        str(f["location"]["member"])
        for f in doc["findings"]
        if f["severity"] == "error" and f["location"].get("member") is not None
    }
    backend = re.search(r"(pardiso|cholmod|splu)", json.dumps(doc.get("precision", {})))
    return {
        "seconds": secs,
        "peak_mib": mib,
        "stages": stages,
        "verdict": doc["verdict"],
        "found": len(perturbed & flagged),
        "perturbed": len(perturbed),
        "other": len(flagged - perturbed),
        "members": doc["model"]["members"] if "members" in doc.get("model", {}) else None,
        "backend": backend.group(1) if backend else "?",
        "certificate": doc.get("precision", {}).get("lambda_certificate"),
    }


def _med(xs: list[float]) -> float:
    return statistics.median(xs)


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description="whole check against the floor, as processes")
    p.add_argument("--sizes", nargs="+", default=["grid2d:1e4", "lattice3d:1e4"])
    p.add_argument("--repeat", type=int, default=3)
    p.add_argument("--digits", type=int, nargs="+", default=[30], help="--digits of each audit run")
    p.add_argument(
        "--tree",
        action="append",
        default=[],
        metavar="LABEL=PATH",
        help="audit this source tree too (e.g. before=/tmp/old); default: this tree only, labelled 'this'",
    )
    p.add_argument("--timeout", type=float, default=1800)
    p.add_argument("--json", metavar="PATH", help="also write the raw runs as JSON")
    a = p.parse_args(argv)
    trees = {"this": ROOT} if not a.tree else {k: Path(v) for k, _, v in (x.partition("=") for x in a.tree)}
    print(f"load average at start {os.getloadavg()[0]:.1f} ({os.cpu_count()} cores)", flush=True)
    rows, raw = [], {}
    for size in a.sizes:
        kind, members = size.split(":")
        path = _model_file(kind, members)
        floors: list[dict] = []
        audits: dict[tuple[str, int], list[dict]] = {(t, d): [] for t in trees for d in a.digits}
        for _ in range(a.repeat):
            floors.append(_floor(path, a.timeout))
            for t, d in audits:
                audits[(t, d)].append(_audit(path, d, a.timeout, trees[t]))
        raw[size] = {"floor": floors, "audit": {f"{t} {d}": v for (t, d), v in audits.items()}}
        tf = _med([f["seconds"] for f in floors])
        mf = _med([f["peak_mib"] for f in floors])
        for (t, d), runs in audits.items():
            r0 = runs[0]
            ta = _med([r["seconds"] for r in runs])
            ma = _med([r["peak_mib"] for r in runs])
            stages = {s: _med([r["stages"].get(s, 0.0) for r in runs]) for s in STAGES}
            row = {
                "model": f"{kind} {r0['members']:,}" if r0["members"] else size,
                "tree": t,
                "digits": d,
                "stages": stages,
                "audit": ta,
                "floor": tf,
                "audit_mib": ma,
                "floor_mib": mf,
                "found": f"{r0['found']}/{r0['perturbed']}" + (f" (+{r0['other']})" if r0["other"] else ""),
                "backend": r0["backend"],
                "runs": len(runs),
            }
            rows.append(row)
            print(_line(row), flush=True)
        if a.json:  # after every size, so that a run stopped early keeps what it measured
            Path(a.json).write_text(json.dumps(raw, indent=1), encoding="utf-8")
    print()
    print(render(rows))
    print(f"load average at end {os.getloadavg()[0]:.1f}")
    if a.json:
        Path(a.json).write_text(json.dumps(raw, indent=1), encoding="utf-8")
    return 0


def _line(r: dict) -> str:
    parts = ", ".join(f"{s} {r['stages'][s]:.2f}" for s in STAGES)
    head = f"{r['model']} ({r['tree']}, digits {r['digits']})"
    peaks = f"peak {r['audit_mib']:,.0f} / {r['floor_mib']:,.0f} MiB, found {r['found']}"
    return f"{head}: audit {r['audit']:.2f} s, floor {r['floor']:.2f} s, {peaks}; {parts}"


def render(rows: list[dict]) -> str:
    head = ["model (members)", "tree", "digits", *STAGES, "audit", "floor", "ratio", "peak audit / floor", "found"]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for r in rows:
        cells = [
            r["model"],
            r["tree"],
            str(r["digits"]),
            *(f"{r['stages'][s]:.2f}" for s in STAGES),
            f"{r['audit']:.2f}",
            f"{r['floor']:.2f}",
            f"{r['audit'] / r['floor']:.2f}×",
            f"{r['audit_mib']:,.0f} / {r['floor_mib']:,.0f} MiB ({r['audit_mib'] / r['floor_mib']:.2f}×)",
            r["found"],
        ]
        lines.append("| " + " | ".join(cells) + " |")
    runs = sorted({r["runs"] for r in rows})
    return "\n".join(lines) + f"\n\nwhole processes; medians of {'/'.join(map(str, runs))} runs; seconds\n"


if __name__ == "__main__":
    sys.exit(main())
