"""Writing tables: a neutral model (and results) as the contract's tables, and the blank template.

:func:`model_tables` lays a model document (as parsed JSON) out as the contract's tables (header row
first); :func:`write_tables` writes them as a folder of CSV files, an ``.xlsx`` workbook (openpyxl) or
an ``.ods`` workbook (odfpy).  Numbers given as decimal texts are written to CSV as they are, and to a
workbook as numbers (their stored value is the text's nearest float).  :func:`write_template` writes
the empty tables with their headers and an ``about`` sheet, to send to whoever produces the results.
Every file is written whole or not at all (:mod:`audit.fileio`).
"""

from __future__ import annotations

import csv
import io
import re
import tempfile
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from ..fileio import atomic_write_bytes, atomic_write_text

Rows = list[list[Any]]

_AXES = ("x", "y", "z")
_NUMBER = re.compile(r"-?\d+(\.\d+)?([eE][+-]?\d+)?")


def _t(v: Any) -> Any:
    """A JSON value as a cell: numbers kept as read (decimal texts stay text), ids as strings."""
    return v if isinstance(v, (str, int, float)) else str(v)


def _direction(d: Sequence[Any]) -> str:
    return " ".join(str(x) for x in d)


def model_tables(doc: Mapping[str, Any], results: Mapping[str, Any] | None = None) -> dict[str, Rows]:
    """The contract's tables of a model document (and of a results document), header rows first."""
    dim = int(doc["dimensions"])
    axes = _AXES[:dim]
    units = doc["units"]
    out: dict[str, Rows] = {}
    about: Rows = [["key", "value"]]
    if doc.get("title"):
        about.append(["title", doc["title"]])
    about.append(["dimensions", str(dim)])
    about += [[k, units[k]] for k in ("length", "force", "temperature") if k in units]
    out["about"] = about
    out["nodes"] = [["id", *axes]] + [[str(n["id"]), *(_t(n[a]) for a in axes)] for n in doc["nodes"]]
    if doc.get("materials"):
        keys = [k for k in ("E", "alpha", "unit_weight") if any(k in m for m in doc["materials"].values())]
        out["materials"] = [["name", *keys]] + [
            [name, *(_t(m.get(k, "")) for k in keys)] for name, m in doc["materials"].items()
        ]
    if doc.get("sections"):
        out["sections"] = [["name", "A"]] + [[name, _t(s["A"])] for name, s in doc["sections"].items()]
    keys = [
        k
        for k in ("material", "section", "E", "A", "alpha", "unit_weight", "behaviour")
        if any(k in m for m in doc["members"])
    ]
    out["members"] = [["id", "start", "end", *keys]] + [
        [str(m["id"]), str(m["start"]), str(m["end"]), *(_t(m.get(k, "")) for k in keys)] for m in doc["members"]
    ]
    sup = _supports(doc.get("supports", []), axes)
    if len(sup) > 1:
        out["supports"] = sup
    _cases(doc.get("load_cases", []), axes, out)
    if doc.get("combinations"):
        out["combinations"] = [["combination", "case", "factor"]] + [
            [str(c["id"]), str(case), _t(f)] for c in doc["combinations"] for case, f in c["factors"].items()
        ]
    res = results if results is not None else doc.get("results")
    if res is not None:
        _results(res, axes, out)
    return out


def _supports(supports: list[dict[str, Any]], axes: tuple[str, ...]) -> Rows:
    rows: Rows = [["node", *axes, *(f"k{a}" for a in axes), "k", "direction"]]
    blank = ["" for _ in range(2 * len(axes) + 2)]
    for s in supports:
        node = str(s["node"])
        flags = {a for a in s.get("restrain", []) if isinstance(a, str)}
        ks = {sp["axis"]: sp["stiffness"] for sp in s.get("springs", []) if "axis" in sp}
        if flags or ks:
            rows.append([node, *("1" if a in flags else "0" for a in axes), *(_t(ks.get(a, "")) for a in axes), "", ""])
        for r in s.get("restrain", []):
            if isinstance(r, dict):
                rows.append([node, *blank[:-1], _direction(r["direction"])])
        for sp in s.get("springs", []):
            if "direction" in sp:
                rows.append([node, *blank[:-2], _t(sp["stiffness"]), _direction(sp["direction"])])
    return rows


def _cases(cases: list[dict[str, Any]], axes: tuple[str, ...], out: dict[str, Rows]) -> None:
    loads: Rows = [["case", "node", *(f"f{a}" for a in axes)]]
    temps: Rows = [["case", "member", "delta"]]
    errors: Rows = [["case", "member", "value"]]
    settle: Rows = [["case", "node", *axes, "direction", "value"]]
    weight: Rows = [["case", "factor", "direction"]]
    for lc in cases:
        cid = str(lc["id"])
        for ld in lc.get("loads", []):
            loads.append([cid, str(ld["node"]), *(_t(ld.get(f"f{a}", "")) for a in axes)])
        for tc in lc.get("temperature_changes", []):
            temps.append([cid, str(tc["member"]), _t(tc["delta"])])
        for le in lc.get("length_errors", []):
            errors.append([cid, str(le["member"]), _t(le["value"])])
        for sd in lc.get("support_displacements", []):
            if "direction" in sd:
                settle.append([cid, str(sd["node"]), *("" for _ in axes), _direction(sd["direction"]), _t(sd["value"])])
            else:
                settle.append([cid, str(sd["node"]), *(_t(sd.get(a, "")) for a in axes), "", ""])
        if "self_weight" in lc:
            sw = lc["self_weight"]
            weight.append([cid, _t(sw["factor"]), _direction(sw["direction"]) if "direction" in sw else ""])
    for name, rows in (
        ("loads", loads),
        ("self_weight", weight),
        ("temperatures", temps),
        ("length_errors", errors),
        ("settlements", settle),
    ):
        if len(rows) > 1:
            out[name] = rows


def _results(res: Mapping[str, Any], axes: tuple[str, ...], out: dict[str, Rows]) -> None:
    units = res.get("units", {})
    about = out.setdefault("about", [["key", "value"]])
    for key in ("source", "sign_convention"):
        if key in res:
            about.append([key, res[key]])
    lu = f" [{units['length']}]" if "length" in units else ""
    fu = f" [{units['force']}]" if "force" in units else ""
    disp: Rows = [["case", "node", *(f"u{a}{lu}" for a in axes)]]
    forces: Rows = [["case", "member", f"N{fu}"]]
    reac: Rows = [["case", "node", *(f"r{a}{fu}" for a in axes)]]
    for cid, body in res["cases"].items():
        for node, c in body.get("displacements", {}).items():
            disp.append([cid, node, *(_t(c.get(a, "")) for a in axes)])
        for member, n in body.get("axial_forces", {}).items():
            forces.append([cid, member, _t(n)])
        for node, c in body.get("reactions", {}).items():
            reac.append([cid, node, *(_t(c.get(a, "")) for a in axes)])
    for name, rows in (("displacements", disp), ("forces", forces), ("reactions", reac)):
        if len(rows) > 1:
            out[name] = rows


def blank_tables(dim: int) -> dict[str, Rows]:
    """The contract's tables with their headers only, and an about table to fill in."""
    axes = _AXES[:dim]
    about: Rows = [["key", "value"], ["title", ""], ["dimensions", str(dim)], ["length", ""], ["force", ""]]
    about += [["temperature", ""], ["source", ""], ["sign_convention", "tension_positive"], ["case", ""]]
    return {
        "about": about,
        "nodes": [["id", *axes]],
        "materials": [["name", "E", "alpha", "unit_weight"]],
        "sections": [["name", "A"]],
        "members": [["id", "start", "end", "material", "section", "E", "A", "alpha", "behaviour"]],
        "supports": [["node", *axes, *(f"k{a}" for a in axes), "k", "direction"]],
        "loads": [["case", "node", *(f"f{a}" for a in axes)]],
        "self_weight": [["case", "factor", "direction"]],
        "temperatures": [["case", "member", "delta"]],
        "length_errors": [["case", "member", "value"]],
        "settlements": [["case", "node", *axes, "direction", "value"]],
        "combinations": [["combination", "case", "factor"]],
        "displacements": [["case", "node", *(f"u{a}" for a in axes)]],
        "forces": [["case", "member", "N"]],
        "reactions": [["case", "node", *(f"r{a}" for a in axes)]],
    }


def _cell_value(v: Any) -> Any:
    """A workbook cell: a decimal text becomes a number (its stored value), other text stays text."""
    if isinstance(v, str) and _NUMBER.fullmatch(v):
        return float(v) if any(ch in v for ch in ".eE") else int(v)
    return v


def csv_text(rows: Rows, delimiter: str = ",") -> str:
    buf = io.StringIO(newline="")
    writer = csv.writer(buf, delimiter=delimiter, lineterminator="\n")
    for row in rows:
        writer.writerow(["" if v is None else v for v in row])
    return buf.getvalue()


def _xlsx_bytes(tables: Mapping[str, Rows], numbers: bool) -> bytes:
    import openpyxl

    book = openpyxl.Workbook()
    book.remove(book.active)
    for name, rows in tables.items():
        sheet = book.create_sheet(title=name[:31])
        for row in rows:
            sheet.append([_cell_value(v) if numbers else v for v in row])
    buf = io.BytesIO()
    book.save(buf)
    return buf.getvalue()


def _ods_bytes(tables: Mapping[str, Rows], numbers: bool) -> bytes:
    from odf.opendocument import OpenDocumentSpreadsheet
    from odf.table import Table, TableCell, TableRow
    from odf.text import P

    doc = OpenDocumentSpreadsheet()
    for name, rows in tables.items():
        table = Table(name=name)
        for row in rows:
            tr = TableRow()
            for v in row:
                value = _cell_value(v) if numbers else v
                if isinstance(value, (int, float)) and not isinstance(value, bool):
                    cell = TableCell(valuetype="float", value=repr(value) if isinstance(value, float) else str(value))
                    cell.addElement(P(text=str(v)))
                elif value in ("", None):
                    cell = TableCell()
                else:
                    cell = TableCell(valuetype="string")
                    cell.addElement(P(text=str(value)))
                tr.addElement(cell)
            table.addElement(tr)
        doc.spreadsheet.addElement(table)
    with tempfile.TemporaryDirectory() as tmp:
        target = Path(tmp) / "book.ods"
        doc.save(str(target))
        return target.read_bytes()


def write_tables(path: str | Path, tables: Mapping[str, Rows], *, numbers: bool = True, delimiter: str = ",") -> None:
    """Write ``tables`` as a workbook (by suffix ``.xlsx`` / ``.ods``) or as CSV files in a folder."""
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix == ".xlsx":
        atomic_write_bytes(str(p), _xlsx_bytes(tables, numbers))
    elif suffix == ".ods":
        atomic_write_bytes(str(p), _ods_bytes(tables, numbers))
    else:
        p.mkdir(parents=True, exist_ok=True)
        for name, rows in tables.items():
            atomic_write_text(str(p / f"{name}.csv"), csv_text(rows, delimiter))


def write_template(path: str | Path, dim: int) -> int:
    """Write the blank template (workbook or CSV folder); returns the number of tables written."""
    tables = blank_tables(dim)
    write_tables(path, tables, numbers=False)
    return len(tables)
