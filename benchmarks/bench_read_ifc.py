"""Reading an IFC structural analysis model against reading the same model's JSON, side by side.

The model is a generated plane grid (``generate.py grid2d``, invented data) with its reported
results; the IFC4 file is written from its JSON by the tests' writer (``tests/ifc_writer.py``, through
ifcopenshell's entity API: vertex-point connections, edge members, one material profile set per
section, point actions, result groups with point and curve reactions).  Each read runs in a fresh
process, JSON and IFC alternately, ``--repeat`` times; the medians and their ratio are printed
(target: IFC <= 3x JSON).  The IFC read is split into its stages to show where the time goes:
``ifcopenshell.open`` (parsing the STEP file, ifcopenshell's own C++), our traversal of the entities,
and the format's meaning stage over the tree.

Usage::

    python benchmarks/bench_read_ifc.py --members 1e5 --repeat 3
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "benchmarks" / "out"

_READ_JSON = """
import time, sys
from audit import exchange
t = time.perf_counter(); m = exchange.load_model(sys.argv[1]); t = time.perf_counter() - t
print({"total": t, "members": m.n_members})
"""

_READ_IFC = """
import time, sys
import ifcopenshell
t0 = time.perf_counter(); f = ifcopenshell.open(sys.argv[1]); t_open = time.perf_counter() - t0
del f
import audit.ifc.tree as tree
stage = {}
meaning = tree._meaning
def timed(*a, **k):
    t = time.perf_counter(); out = meaning(*a, **k); stage["meaning"] = time.perf_counter() - t; return out
tree._meaning = timed
from audit.ifc import read_ifc
t = time.perf_counter(); r = read_ifc(sys.argv[1]); total = time.perf_counter() - t
print({"total": total, "open": t_open, "meaning": stage["meaning"], "members": r.model.n_members})
"""


def _run(code: str, path: Path) -> dict[str, float]:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = subprocess.run([sys.executable, "-c", code, str(path)], env=env, check=True, capture_output=True, text=True)
    return eval(out.stdout.strip().splitlines()[-1])  # our own dict literal, printed by the child


def _files(members: float) -> tuple[Path, Path]:
    OUT.mkdir(parents=True, exist_ok=True)
    tag = f"{members:.0e}".replace("+0", "").replace("+", "")
    json_path = OUT / f"ifcbench_grid2d_{tag}.json"
    ifc_path = OUT / f"ifcbench_grid2d_{tag}.ifc"
    if not json_path.exists():
        sys.path.insert(0, str(ROOT / "benchmarks"))
        import generate

        generate.write(str(json_path), "grid2d", members)
    if not ifc_path.exists():
        sys.path.insert(0, str(ROOT / "tests"))
        from ifc_writer import write_ifc

        t = time.perf_counter()
        doc = json.loads(json_path.read_text(encoding="utf-8"))
        write_ifc(doc, "si").write(str(ifc_path))
        print(f"wrote {ifc_path.name} in {time.perf_counter() - t:.1f} s")
    return json_path, ifc_path


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--members", type=float, default=1e5)
    p.add_argument("--repeat", type=int, default=3)
    a = p.parse_args(argv)
    json_path, ifc_path = _files(a.members)
    js, ifc = [], []
    for _ in range(a.repeat):  # side by side: one of each, alternately
        js.append(_run(_READ_JSON, json_path))
        ifc.append(_run(_READ_IFC, ifc_path))
    mj = statistics.median(r["total"] for r in js)
    mi = statistics.median(r["total"] for r in ifc)
    mo = statistics.median(r["open"] for r in ifc)
    mm = statistics.median(r["meaning"] for r in ifc)
    size_j, size_i = json_path.stat().st_size / 2**20, ifc_path.stat().st_size / 2**20
    print(f"model: {int(js[0]['members'])} members; JSON {size_j:.1f} MiB, IFC {size_i:.1f} MiB; {a.repeat} runs each")
    print(f"JSON read (load_model)            median {mj:8.3f} s")
    print(f"IFC read (read_ifc)               median {mi:8.3f} s   ratio IFC/JSON {mi / mj:5.2f}x (target <= 3x)")
    print(f"  ifcopenshell.open alone         median {mo:8.3f} s   ({mo / mj:5.2f}x the whole JSON read)")
    print(f"  meaning stage over the tree     median {mm:8.3f} s")
    print(f"  our traversal of the entities   median {mi - mo - mm:8.3f} s   (the rest)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
