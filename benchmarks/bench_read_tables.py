"""Reading a model from a workbook (and a CSV folder) against reading the same model's JSON, side by side.

The model is a generated plane grid (``generate.py grid2d``, invented data) with its reported results
embedded; the workbook (``.xlsx``, every table one sheet: nodes, materials, sections, members, supports,
loads, displacements, forces, reactions) and the CSV folder are written from its JSON by
``audit.tables.write``.  Each read runs in a fresh process, JSON, workbook and CSV in turn, ``--repeat``
times; the medians and the ratios are printed (target: workbook <= 3x JSON).  The workbook read is split
to show where the time goes: python-calamine's parse of the file (compiled), and the rest (our tables ->
tree, and the format's shape and meaning stages over the tree).

Usage::

    python benchmarks/bench_read_tables.py --members 1e5 --repeat 5
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

_READ_TABLES = """
import time, sys
from pathlib import Path
from audit.tables import grid, read_tables
parse = 0.0
if sys.argv[1].endswith(".xlsx"):
    t = time.perf_counter(); grid.read_workbook(Path(sys.argv[1])); parse = time.perf_counter() - t
t = time.perf_counter(); r = read_tables(sys.argv[1]); total = time.perf_counter() - t
print({"total": total, "parse": parse, "members": r.model.n_members})
"""


def _run(code: str, path: Path) -> dict[str, float]:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = subprocess.run([sys.executable, "-c", code, str(path)], env=env, check=True, capture_output=True, text=True)
    return eval(out.stdout.strip().splitlines()[-1])  # our own dict literal, printed by the child


def _files(members: float) -> tuple[Path, Path, Path]:
    OUT.mkdir(parents=True, exist_ok=True)
    tag = f"{members:.0e}".replace("+0", "").replace("+", "")
    json_path = OUT / f"tablesbench_grid2d_{tag}.json"
    book = OUT / f"tablesbench_grid2d_{tag}.xlsx"
    folder = OUT / f"tablesbench_grid2d_{tag}_csv"
    if not json_path.exists():
        sys.path.insert(0, str(ROOT / "benchmarks"))
        import generate

        generate.write(str(json_path), "grid2d", members)
    if not book.exists() or not folder.exists():
        sys.path.insert(0, str(ROOT))
        from audit.tables.write import model_tables, write_tables

        t = time.perf_counter()
        doc = json.loads(json_path.read_text(encoding="utf-8"), parse_float=str)
        tables = model_tables(doc)
        write_tables(book, tables)
        write_tables(folder, tables)
        print(f"wrote {book.name} and {folder.name}/ in {time.perf_counter() - t:.1f} s")
    return json_path, book, folder


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--members", type=float, default=1e5)
    p.add_argument("--repeat", type=int, default=5)
    a = p.parse_args(argv)
    json_path, book, folder = _files(a.members)
    js, wb, cs = [], [], []
    for _ in range(a.repeat):  # side by side: one of each, in turn
        js.append(_run(_READ_JSON, json_path))
        wb.append(_run(_READ_TABLES, book))
        cs.append(_run(_READ_TABLES, folder))
    mj = statistics.median(r["total"] for r in js)
    mw = statistics.median(r["total"] for r in wb)
    mp = statistics.median(r["parse"] for r in wb)
    mc = statistics.median(r["total"] for r in cs)
    assert js[0]["members"] == wb[0]["members"] == cs[0]["members"]
    size_j, size_w = json_path.stat().st_size / 2**20, book.stat().st_size / 2**20
    size_c = sum(f.stat().st_size for f in folder.iterdir()) / 2**20
    print(
        f"model: {int(js[0]['members'])} members; JSON {size_j:.1f} MiB, xlsx {size_w:.1f} MiB, "
        f"CSV {size_c:.1f} MiB; {a.repeat} runs each"
    )
    print(f"JSON read (load_model)              median {mj:8.3f} s")
    print(f"workbook read (read_tables, .xlsx)  median {mw:8.3f} s   ratio xlsx/JSON {mw / mj:5.2f}x (target <= 3x)")
    print(f"  python-calamine parse alone       median {mp:8.3f} s")
    print(f"  tables -> tree -> model           median {mw - mp:8.3f} s   (the rest)")
    print(f"CSV folder read (read_tables)       median {mc:8.3f} s   ratio CSV/JSON  {mc / mj:5.2f}x")
    return 0


if __name__ == "__main__":
    sys.exit(main())
