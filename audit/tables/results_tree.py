"""The results tables (displacements, forces, reactions) -> the neutral results tree (``FORMAT.md``).

One row per node (or member) and case; the case comes from the ``case`` column, or from the about
table's ``case`` for a table without one.  An empty component cell is a quantity not reported.  A node
or member given twice for one case is an error.
"""

from __future__ import annotations

import operator
from collections.abc import Callable
from typing import Any

from ..exchange.problems import Path_
from .places import Place
from .recognise import Table
from .rows import Reader

#: table -> (the key in a case, the id column, tree key -> column)
_PARTS: dict[str, tuple[str, str, dict[str, str]]] = {
    "displacements": ("displacements", "node", {"x": "ux", "y": "uy", "z": "uz"}),
    "forces": ("axial_forces", "member", {}),
    "reactions": ("reactions", "node", {"x": "rx", "y": "ry", "z": "rz"}),
}


def _constant(path: Path_) -> Callable[[int], Path_]:
    return lambda _i: path


def results_document(
    r: Reader, tables: dict[str, Table], settings: dict[str, tuple[str, Place]], prefix: Path_
) -> dict[str, Any]:
    """The results tree (without ``format``/``version``) from the results tables in ``tables``."""
    doc: dict[str, Any] = {}
    for key in ("source", "sign_convention"):
        if key in settings:
            doc[key] = settings[key][0]
            r.at((*prefix, key), settings[key][1])
    doc["units"] = {k: u for k, u in zip(("length", "force"), r.units.chosen[:2], strict=True) if u}
    cases: dict[str, dict[str, Any]] = {}
    doc["cases"] = cases
    r.at((*prefix, "cases"), Place(""))
    default_case = settings.get("case")
    for name, (part, id_col, comps) in _PARTS.items():
        t = tables.get(name)
        if t is None:
            continue
        r.at((*prefix, "cases"), Place(t.where))
        r.require_columns(t, (id_col,))
        if "case" not in t.columns and default_case is None:
            r.probs.add(
                Place(t.where, t.header_row, None, (t.order, t.header_row, 0)),
                "no 'case' column, and no 'case' in the about table to say which load case these results are",
            )
        value_cols = [c for c in comps.values() if c in t.columns] if comps else ["N"]
        if comps and not value_cols:
            r.probs.add(
                Place(t.where, t.header_row, None, (t.order, t.header_row, 0)),
                f"no component columns: give {', '.join(comps.values())}",
            )
        elif not comps and "N" not in t.columns:
            r.probs.add(Place(t.where, t.header_row, None, (t.order, t.header_row, 0)), "no 'N' column")
        rows: dict[str, dict[str | int, int]] = {}
        nowhere = _constant((*prefix, "cases", "\x00"))  # a cell's problem is reported at its place
        case_col = r.column(t, "case", nowhere) if "case" in t.columns else None
        id_values = r.column(t, id_col, nowhere)
        comp_values = {axis: r.column(t, col, nowhere) for axis, col in comps.items()}
        n_values = r.column(t, "N", nowhere) if not comps else None
        fixed_case = default_case[0] if default_case else ""
        case_list = case_col if case_col is not None else [fixed_case] * len(t.rows)
        pairs = list(zip(case_list, id_values, strict=True))
        if len(set(pairs)) == len(pairs):  # no item twice in a case: the rows go straight in
            _straight(r, t, prefix, part, cases, rows, case_list, id_values, comp_values, n_values)
            for case, case_rows in rows.items():
                r.rows_of(t, (*prefix, "cases", case, part), case_rows, comps, id_col)
            continue
        for n, (row, _cells) in enumerate(t.rows):
            case = case_col[n] if case_col is not None else fixed_case
            body = cases.get(case)
            if body is None:
                body = cases[case] = {}
                if (*prefix, "cases", case) not in r.prov.exact:
                    r.at((*prefix, "cases", case), t.place(row, "case") if case_col is not None else t.place(row))
            entries = body.setdefault(part, {})
            case_rows = rows.setdefault(case, {})
            item_id = id_values[n]
            if item_id in entries:
                r.probs.add(
                    t.place(row, id_col),
                    f"{id_col} {item_id!r} is given twice for case {case!r} (first in row {case_rows[item_id]})",
                )
                continue
            if n_values is None:
                item = {axis: values[n] for axis, values in comp_values.items() if values[n] is not None}
                if not item:
                    continue  # a row with nothing reported
                entries[item_id] = item
            else:
                if n_values[n] is None:
                    continue
                entries[item_id] = n_values[n]
            case_rows[item_id] = row
        for case, case_rows in rows.items():
            r.rows_of(t, (*prefix, "cases", case, part), case_rows, comps, id_col)
    return doc


def _straight(
    r: Reader,
    t: Table,
    prefix: Path_,
    part: str,
    cases: dict[str, dict[str, Any]],
    rows: dict[str, dict[str | int, int]],
    case_list: list[Any],
    id_values: list[Any],
    comp_values: dict[str, list[Any]],
    n_values: list[Any] | None,
) -> None:
    """The rows of a results table with no item given twice in a case, into ``cases`` (and ``rows``)."""
    numbers = list(map(operator.itemgetter(0), t.rows))
    for case in dict.fromkeys(case_list):
        cases.setdefault(case, {}).setdefault(part, {})
        rows.setdefault(case, {})
    first: dict[Any, int] = {}
    for k, case in enumerate(case_list):
        first.setdefault(case, k)
    for case, k in first.items():
        if (*prefix, "cases", case) not in r.prov.exact:
            row = numbers[k]
            r.at((*prefix, "cases", case), t.place(row, "case") if "case" in t.columns else t.place(row))
    if n_values is not None:
        for case, item_id, v, row in zip(case_list, id_values, n_values, numbers, strict=True):
            if v is not None:
                cases[case][part][item_id] = v
                rows[case][item_id] = row
        return
    axes = list(comp_values)
    columns = [comp_values[a] for a in axes]
    full = all(None not in col for col in columns)
    for case, item_id, row, *values in zip(case_list, id_values, numbers, *columns, strict=True):
        if full:
            item = dict(zip(axes, values, strict=True))
        else:
            item = {a: v for a, v in zip(axes, values, strict=True) if v is not None}
        if item:
            cases[case][part][item_id] = item
            rows[case][item_id] = row
