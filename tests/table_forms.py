"""The table forms of a neutral model, written for the tests from its JSON file (``TABLES.md``).

* ``csv``: a folder of CSV files with the contract's table and column names;
* ``trade``: CSV with the trade's words (``Joint``, ``Node I``, ``dx``, ``axial force`` ...), units in
  brackets (the model's own units, so that every decimal text stays as written), ``;`` between cells,
  a byte-order mark, every cell quoted, the rows in reverse order and the columns reversed;
* ``xlsx`` and ``ods``: workbooks (numbers stored as numbers);
* ``mapped``: CSV files and headers of a source's own naming, with a TOML mapping file.

The writer is :mod:`audit.tables.write` (openpyxl, odfpy), the same that ``truss-audit template`` uses.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from typing import Any

from audit.tables.write import model_tables, write_tables

FORMS = ("csv", "trade", "xlsx", "ods", "mapped")

#: contract column -> a word of the trade for it, per table (TABLES.md's list)
TRADE = {
    "nodes": {"id": "Joint"},
    "members": {"id": "Element", "start": "Node I", "end": "Node J"},
    "supports": {"node": "Joint"},
    "loads": {"node": "Point"},
    "displacements": {"node": "Joint", "ux": "dx", "uy": "dy", "uz": "dz"},
    "forces": {"member": "Bar", "N": "Axial Force"},
    "reactions": {"node": "Joint", "rx": "Fx", "ry": "Fy", "rz": "Fz"},
}

#: the quantity of a column, for its unit in brackets: (length power, force power), per table
_L, _F, _E, _AREA, _K = (1, 0), (0, 1), (-2, 1), (2, 0), (-1, 1)
QUANTITY = {
    "nodes": {"x": _L, "y": _L, "z": _L},
    "materials": {"E": _E},
    "sections": {"A": _AREA},
    "members": {"E": _E, "A": _AREA},
    "supports": {"kx": _K, "ky": _K, "kz": _K, "k": _K},
    "loads": {"fx": _F, "fy": _F, "fz": _F},
    "length_errors": {"value": _L},
    "settlements": {"x": _L, "y": _L, "z": _L, "value": _L},
}

#: the mapped form's own names: our table -> its file stem, our column -> its header
MAPPED_TABLES = {"nodes": "Joint Coordinates", "members": "Frame Elements", "forces": "Element Results"}
MAPPED_COLUMNS = {
    "nodes": {"id": "Pt", "x": "Xcoord", "y": "Ycoord", "z": "Zcoord"},
    "members": {"id": "Elem", "start": "Jt1", "end": "Jt2"},
    "forces": {"member": "Elem", "N": "Axial", "case": "Load Case"},
}


def _unit(units: dict[str, str], table: str, col: str) -> str | None:
    if col not in QUANTITY.get(table, {}):
        return None
    lp, fp = QUANTITY[table][col]
    num = []
    if fp:
        num.append(units["force"])
    if lp > 0:
        num.append(units["length"] + ("" if lp == 1 else str(lp)))
    text = "*".join(num) or "1"
    if lp < 0:
        text += "/" + units["length"] + ("" if lp == -1 else str(-lp))
    return text


def tables_of(model_path: Path, results_path: Path | None = None) -> dict[str, list[list[Any]]]:
    doc = json.loads(model_path.read_text(), parse_float=str)
    res = json.loads(results_path.read_text(), parse_float=str) if results_path else None
    return model_tables(doc, res)


def _trade(tables: dict[str, list[list[Any]]], units: dict[str, str]) -> dict[str, list[list[Any]]]:
    out = {}
    for name, (header, *rows) in tables.items():
        words = TRADE.get(name, {})
        new_header = []
        for col in header:
            base = col.split(" [")[0]
            word = words.get(base, base)
            unit = _unit(units, name, base)
            if " [" in col:
                new_header.append(f"{word} [{col.split(' [')[1]}")
            else:
                new_header.append(f"{word} [{unit}]" if unit else word)
        out[name] = [new_header[::-1]] + [list(r)[::-1] for r in reversed(rows)]
    return out


def _write_trade(folder: Path, tables: dict[str, list[list[Any]]]) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    for name, rows in tables.items():
        buf = io.StringIO(newline="")
        writer = csv.writer(buf, delimiter=";", quoting=csv.QUOTE_ALL, lineterminator="\r\n")
        for row in rows:
            writer.writerow(row)
        (folder / f"{name}.csv").write_bytes(b"\xef\xbb\xbf" + buf.getvalue().encode("utf-8"))


def _mapped(tables: dict[str, list[list[Any]]], folder: Path) -> Path:
    out = {}
    for name, (header, *rows) in tables.items():
        cols = MAPPED_COLUMNS.get(name, {})
        out[MAPPED_TABLES.get(name, name)] = [[cols.get(c.split(" [")[0], c) for c in header], *rows]
    write_tables(folder, out)
    lines = ["[tables]"]
    lines += [f'{ours} = "{theirs}"' for ours, theirs in MAPPED_TABLES.items() if ours in tables]
    for table, cols in MAPPED_COLUMNS.items():
        present = tables.get(table, [[]])[0]
        used = {k: v for k, v in cols.items() if k in present}
        if used:
            lines.append(f"[columns.{table}]")
            lines += [f'{ours} = "{theirs}"' for ours, theirs in used.items()]
    mapping = folder.parent / (folder.name + ".map.toml")
    mapping.write_text("\n".join(lines) + "\n")
    return mapping


def write_form(form: str, model_path: Path, results_path: Path | None, target: Path) -> tuple[Path, Path | None]:
    """Write ``form`` of the model (and results) under ``target``; returns (source path, mapping file or None)."""
    tables = tables_of(model_path, results_path)
    units = json.loads(model_path.read_text())["units"]
    if form == "csv":
        write_tables(target, tables)
        return target, None
    if form == "trade":
        _write_trade(target, _trade(tables, units))
        return target, None
    if form in ("xlsx", "ods"):
        path = target.with_suffix("." + form)
        write_tables(path, tables)
        return path, None
    if form == "mapped":
        return target, _mapped(tables, target)
    raise ValueError(form)
