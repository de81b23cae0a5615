"""The model tables -> the neutral model tree (``FORMAT.md``), with the place of every part recorded.

One row per node, material, section, member; supports grouped by node (their restraints and springs
add up); load cases gathered by their ids from the loads, self_weight, temperatures, length_errors and
settlements tables in the order they first appear; combinations by their ids.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from ..exchange.problems import Path_
from ..exchange.version import FORMAT_VERSION, MODEL_FORMAT
from .names import MODEL_TABLES
from .places import Place
from .recognise import Table
from .rows import Reader

_AXES = ("x", "y", "z")


def _at(top: str, key: str) -> Callable[[int], Path_]:
    """The tree path of row ``i``'s ``key`` in the list ``top``."""
    return lambda i: (top, i, key)


def nodes(r: Reader, t: Table, dim: int) -> list[dict[str, Any]]:
    keys = ("id", *_AXES[:dim])
    r.require_columns(t, keys)
    cols = [r.column(t, k, _at("nodes", k)) for k in keys]
    out = [dict(zip(keys, values, strict=True)) for values in zip(*cols, strict=True)]
    r.rows_of(t, ("nodes",), {i: row for i, (row, _c) in enumerate(t.rows)}, {k: k for k in keys})
    return out


def named(r: Reader, t: Table, top: str, keys: tuple[str, ...]) -> dict[str, dict[str, Any]]:
    """Materials or sections: a map name -> properties; a name given twice is an error."""
    out: dict[str, dict[str, Any]] = {}
    r.require_columns(t, ("name", keys[0]))
    rows: dict[str | int, int] = {}
    for row, cells in t.rows:
        name = r.value(t, row, cells, "name", (top, len(out)))
        if name in out:
            r.probs.add(t.place(row, "name"), f"{top[:-1]} {name!r} is given twice (first in row {rows[name]})")
            continue
        item = {}
        for k in keys:
            v = r.value(t, row, cells, k, (top, name, k))
            if v is not None:
                item[k] = v
        out[name] = item
        rows[name] = row
    r.rows_of(t, (top,), rows, {k: k for k in keys})
    return out


def members(r: Reader, t: Table) -> list[dict[str, Any]]:
    keys = ("id", "start", "end", "E", "A", "material", "section", "alpha", "unit_weight", "behaviour")
    r.require_columns(t, ("id", "start", "end"))
    present = [k for k in keys if k in t.columns or k in ("id", "start", "end")]
    cols = [r.column(t, k, _at("members", k)) for k in present]
    full = [k for k, col in zip(present, cols, strict=True) if None not in col]
    if len(full) == len(present):  # no empty cell: each row is one dict of all the columns
        out = [dict(zip(present, values, strict=True)) for values in zip(*cols, strict=True)]
    else:
        out = [
            {k: v for k, v in zip(present, values, strict=True) if v is not None} for values in zip(*cols, strict=True)
        ]
    r.rows_of(t, ("members",), {i: row for i, (row, _c) in enumerate(t.rows)}, {k: k for k in keys})
    return out


def supports(r: Reader, t: Table, dim: int) -> list[dict[str, Any]]:
    r.require_columns(t, ("node",))
    axes = _AXES[:dim]
    entries: dict[str, dict[str, Any]] = {}
    index: dict[str, int] = {}
    for row, cells in t.rows:
        node = r.value(t, row, cells, "node", ("supports", len(entries), "node"))
        if node not in entries:
            index[node] = len(entries)
            entries[node] = {"node": node}
            r.at(("supports", index[node]), t.place(row, "node"))
        k = index[node]
        entry = entries[node]
        direction = r.value(t, row, cells, "direction", ("supports", k, "direction"))
        flags = []
        for a in _AXES:
            flag = r.value(t, row, cells, a, ("supports", k, a))
            if flag and a not in axes:
                r.probs.add(t.place(row, a), f"a {a} restraint in a {dim}D model")
            elif flag:
                flags.append(a)
        spring = r.value(t, row, cells, "k", ("supports", k, "k"))
        if direction is not None:
            if flags:
                r.probs.add(
                    t.place(row, "direction"),
                    "a row with a direction takes no axis flags: give the axis restraints in a row of their own",
                )
            elif spring is not None:
                entry.setdefault("springs", []).append({"direction": direction, "stiffness": spring})
                r.at(("supports", k, "springs", len(entry["springs"]) - 1), t.place(row, "k"))
            else:
                entry.setdefault("restrain", []).append({"direction": direction})
                r.at(("supports", k, "restrain", len(entry["restrain"]) - 1), t.place(row, "direction"))
        elif spring is not None:
            r.probs.add(t.place(row, "k"), "a spring 'k' needs a 'direction' in the same row (or use kx, ky, kz)")
        for a in flags:
            entry.setdefault("restrain", []).append(a)
            r.at(("supports", k, "restrain", len(entry["restrain"]) - 1), t.place(row, a))
        for a in _AXES:
            stiffness = r.value(t, row, cells, "k" + a, ("supports", k, "k" + a))
            if stiffness is None:
                continue
            if a not in axes:
                r.probs.add(t.place(row, "k" + a), f"a spring along {a} in a {dim}D model")
                continue
            entry.setdefault("springs", []).append({"axis": a, "stiffness": stiffness})
            r.at(("supports", k, "springs", len(entry["springs"]) - 1), t.place(row, "k" + a))
    return list(entries.values())


class _Cases:
    """Load cases by id, in the order they first appear."""

    def __init__(self, r: Reader) -> None:
        self.r = r
        self.items: dict[str, dict[str, Any]] = {}
        self.index: dict[str, int] = {}

    def case(self, t: Table, row: int, cells: tuple[Any, ...]) -> tuple[int, dict[str, Any]]:
        cid = self.r.value(t, row, cells, "case", ("load_cases", len(self.items), "id"))
        if cid not in self.index:
            self.index[cid] = len(self.items)
            self.items[cid] = {"id": cid}
            self.r.at(("load_cases", self.index[cid]), t.place(row, "case"))
        return self.index[cid], self.items[cid]


def _case_rows(r: Reader, t: Table, cases: _Cases, key: str, cols: dict[str, str], required: tuple[str, ...]) -> None:
    """Rows of a per-case table appended to ``key`` of their load case; ``cols``: tree key -> column."""
    r.require_columns(t, ("case", *required))
    # the place of a cell is recorded per case below; a problem found here names the row directly
    columns = {tree_key: r.column(t, col, _at(key, "\x00")) for tree_key, col in cols.items()}
    rows_by_case: dict[int, dict[str | int, int]] = {}
    for n, (row, cells) in enumerate(t.rows):
        k, lc = cases.case(t, row, cells)
        items = lc.setdefault(key, [])
        j = len(items)
        item = {tree_key: values[n] for tree_key, values in columns.items() if values[n] is not None}
        items.append(item)
        rows_by_case.setdefault(k, {})[j] = row
    for k, rows in rows_by_case.items():
        r.rows_of(t, ("load_cases", k, key), rows, cols)


def load_cases(r: Reader, tables: dict[str, Table], dim: int) -> list[dict[str, Any]]:
    cases = _Cases(r)
    axes = _AXES[:dim]
    if "loads" in tables:
        force_cols = {f"f{a}": f"f{a}" for a in _AXES if f"f{a}" in tables["loads"].columns}
        _case_rows(r, tables["loads"], cases, "loads", {"node": "node", **force_cols}, ("node",))
    if "self_weight" in tables:
        t = tables["self_weight"]
        r.require_columns(t, ("case", "factor"))
        for row, cells in t.rows:
            k, lc = cases.case(t, row, cells)
            if "self_weight" in lc:
                r.probs.add(t.place(row, "case"), f"a second self_weight row for case {lc['id']!r}")
                continue
            sw: dict[str, Any] = {"factor": r.value(t, row, cells, "factor", ("load_cases", k, "self_weight"))}
            direction = r.value(t, row, cells, "direction", ("load_cases", k, "self_weight", "direction"))
            if direction is not None:
                sw["direction"] = direction
            lc["self_weight"] = sw
            r.at(("load_cases", k, "self_weight"), t.place(row, "factor"))
            r.at(("load_cases", k, "self_weight", "direction"), t.place(row, "direction"))
    if "temperatures" in tables:
        cols = {"member": "member", "delta": "delta"}
        _case_rows(r, tables["temperatures"], cases, "temperature_changes", cols, ("member", "delta"))
    if "length_errors" in tables:
        cols = {"member": "member", "value": "value"}
        _case_rows(r, tables["length_errors"], cases, "length_errors", cols, ("member", "value"))
    if "settlements" in tables:
        t = tables["settlements"]
        cols = {"node": "node", **{a: a for a in axes if a in t.columns}}
        cols |= {k: k for k in ("direction", "value") if k in t.columns}
        _case_rows(r, t, cases, "support_displacements", cols, ("node",))
        for k, lc in enumerate(cases.items.values()):
            for j, item in enumerate(lc.get("support_displacements", ())):
                if len(item) == 1:
                    place = r.prov.place(("load_cases", k, "support_displacements", j))
                    r.probs.add(
                        place or Place(t.where),
                        "no settlement given: fill x, y (z) or direction and value",
                        covers=[("load_cases", k, "support_displacements", j)],
                    )
    return list(cases.items.values())


def combinations(r: Reader, t: Table) -> list[dict[str, Any]]:
    r.require_columns(t, ("combination", "case", "factor"))
    out: dict[str, dict[str, Any]] = {}
    index: dict[str, int] = {}
    rows: dict[str, dict[str | int, int]] = {}
    for row, cells in t.rows:
        cid = r.value(t, row, cells, "combination", ("combinations", len(out), "id"))
        if cid not in out:
            index[cid] = len(out)
            r.at(("combinations", len(out)), t.place(row, "combination"))
            out[cid] = {"id": cid, "factors": {}}
            rows[cid] = {}
        k = index[cid]
        case = r.value(t, row, cells, "case", ("combinations", k, "factors"))
        if case in out[cid]["factors"]:
            first = rows[cid][case]
            r.probs.add(t.place(row, "case"), f"case {case!r} is given twice in combination {cid!r} (row {first})")
            continue
        out[cid]["factors"][case] = r.value(t, row, cells, "factor", ("combinations", k, "factors", case))
        rows[cid][case] = row
    for k, cid in enumerate(out):
        r.rows_of(t, ("combinations", k, "factors"), rows[cid], {}, "factor")
    return list(out.values())


def model_document(
    r: Reader, tables: dict[str, Table], dim: int, settings: dict[str, tuple[str, Place]]
) -> dict[str, Any]:
    """The model tree from the model tables (``nodes`` and ``members`` must be there)."""
    doc: dict[str, Any] = {"format": MODEL_FORMAT, "version": FORMAT_VERSION}
    if "title" in settings:
        doc["title"] = settings["title"][0]
        r.at(("title",), settings["title"][1])
    doc["dimensions"] = dim
    units = {k: u for k, u in zip(("length", "force", "temperature"), r.units.chosen, strict=True) if u}
    doc["units"] = units
    doc["nodes"] = nodes(r, tables["nodes"], dim) if "nodes" in tables else []
    r.at(("nodes",), Place(tables["nodes"].where) if "nodes" in tables else Place(""))
    for top, keys in (("materials", ("E", "alpha", "unit_weight")), ("sections", ("A",))):
        if top in tables:
            doc[top] = named(r, tables[top], top, keys)
            r.at((top,), Place(tables[top].where))
    doc["members"] = members(r, tables["members"]) if "members" in tables else []
    r.at(("members",), Place(tables["members"].where) if "members" in tables else Place(""))
    if "supports" in tables:
        doc["supports"] = supports(r, tables["supports"], dim)
        r.at(("supports",), Place(tables["supports"].where))
    cases = load_cases(r, tables, dim)
    if cases:
        doc["load_cases"] = cases
    if "combinations" in tables:
        doc["combinations"] = combinations(r, tables["combinations"])
        r.at(("combinations",), Place(tables["combinations"].where))
    return doc


assert set(MODEL_TABLES) >= {"nodes", "members"}
