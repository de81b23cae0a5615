"""The read stage of ``check`` on large JSON models: this tree against another, and the floor's ``json.load``.

Each measurement is a fresh process that reads one file the way ``truss-audit
check`` does (:func:`audit.sources.load_source`, model and embedded results)
and prints its seconds; the other tree (``--against``, e.g. the main checkout)
runs the same child with its own ``PYTHONPATH``.  The trees alternate in one
run, each taking every place in the order in turn (a process right after a
large one starts slower), so that a busy machine slows all alike; medians are
printed.  The
floor is the standard library's ``json.load`` of the same file (no decimal
texts, no validation): what any reader pays at the least.

Usage::

    python benchmarks/bench_read.py benchmarks/out/grid2d_4.8e5_c1.json --against /work/main --repeat 5
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

_CHILD = """
import json, sys, time
path, what = sys.argv[1], sys.argv[2]
if what == "floor":
    t = time.perf_counter()
    with open(path, "rb") as fh:
        json.load(fh)
else:
    from audit.exchange import shape
    from audit.sources import load_source

    shape._validator("model")  # imported and built before the clock starts, as check does before its read stage
    t = time.perf_counter()
    load_source(path)
print(json.dumps({"seconds": time.perf_counter() - t}))
"""


def _run(tree: Path, path: str, what: str) -> float:
    env = dict(os.environ, PYTHONPATH=str(tree))
    path = str(Path(path).resolve())
    # run in the tree itself: `python -c` puts the working directory first on sys.path, before PYTHONPATH
    out = subprocess.run(
        [sys.executable, "-c", _CHILD, path, what], env=env, cwd=tree, capture_output=True, text=True, check=True
    ).stdout
    seconds: float = json.loads(out.strip().splitlines()[-1])["seconds"]
    return seconds


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("files", nargs="+")
    ap.add_argument("--against", type=Path, help="another checkout of the project to compare with")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--no-floor", action="store_true", help="leave out the json.load floor")
    args = ap.parse_args(argv)
    runs = [("this", ROOT, "read")]
    if args.against is not None:
        runs.append(("against", args.against.resolve(), "read"))
    if not args.no_floor:
        runs.append(("floor", ROOT, "floor"))
    for path in args.files:
        times: dict[str, list[float]] = {label: [] for label, _, _ in runs}
        for r in range(args.repeat):
            for label, tree, what in runs[r % len(runs) :] + runs[: r % len(runs)]:  # each in every place in turn
                times[label].append(_run(tree, path, what))
        row = {label: round(statistics.median(ts), 3) for label, ts in times.items()}
        print(json.dumps({"file": Path(path).name, "repeat": args.repeat, "median_seconds": row}))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
