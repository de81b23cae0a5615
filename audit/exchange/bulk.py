"""Fast shape checks for the large parts of a document (nodes, members, loads, results, stiffness entries).

A bulk check per key proves many items valid in a few passes over columns
instead of one schema validation per item, so a 10^6-member model reads in
seconds.  Each check returns True only when the schema certainly accepts every
item; otherwise the items are handed to the schema one by one for exact
messages.  The columns taken here (:class:`_Columns`) are reused by the
meaning stage.
"""

from __future__ import annotations

import operator
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from ..model import AXES
from .fastread import ScannedMap
from .problems import Path_


def _ok_id(v: object) -> bool:
    return type(v) is int or (type(v) is str and v != "")


class _Missing:
    """Marks a key that an object does not have."""


_MISSING = _Missing()
_KIND_TYPES: dict[str, frozenset[type]] = {
    "id": frozenset((str, int)),
    "num": frozenset((int, bytes)),
    "str": frozenset((str,)),
    "x-": frozenset((str, int, bytes, bool, type(None))),  # a source's own scalar data
}


class _Columns:
    """Values of one key across a large list of objects, taken once and shared by the shape and meaning stages."""

    def __init__(self) -> None:
        self.cache: dict[tuple[int, str], list[Any]] = {}
        self.keys: dict[int, frozenset[str]] = {}  #: every key used in a list that passed the bulk check

    def column(self, items: list[Any], key: str) -> list[Any]:
        """``item.get(key, _MISSING)`` for every item."""
        found = self.cache.get((id(items), key))
        if found is None:
            found = self.cache[(id(items), key)] = [it.get(key, _MISSING) for it in items]
        return found

    def any_has(self, items: list[Any], key: str) -> bool:
        keys = self.keys.get(id(items))
        return key in keys if keys is not None else any(key in it for it in items)


def _uniform_columns(items: list[dict[str, Any]]) -> dict[str, list[Any]] | None:
    """Every key's column when all items have the first item's keys (the usual case), else None.

    One C-level pass per key (``itemgetter``); all items have the same number of keys and each has every
    key of the first, so they all have the same keys.
    """
    first = items[0]
    if set(map(len, items)) != {len(first)}:
        return None
    try:
        return {k: list(map(operator.itemgetter(k), items)) for k in first}
    except KeyError:
        return None


Bulk = Callable[[list[Any], "_Columns | None"], bool]


def _bulk_flat(spec: dict[str, str], required: tuple[str, ...]) -> Bulk:
    """A check of many flat objects at once: one pass per key instead of one call per object."""
    allowed = frozenset(spec)
    req = frozenset(required)

    def bulk(items: list[Any], cols: _Columns | None) -> bool:
        if not items:
            return True
        if set(map(type, items)) != {dict}:
            return False
        uniform = _uniform_columns(items)
        present: set[str] = set(uniform) if uniform is not None else set()
        for keys in [frozenset(present)] if uniform is not None else set(map(frozenset, set(map(tuple, items)))):
            if not req <= keys or not all(k in allowed or k.startswith("x-") for k in keys):
                return False
            present |= keys
        for k in present:
            column = uniform[k] if uniform is not None else [it.get(k, _MISSING) for it in items]
            types = set(map(type, column))
            types.discard(_Missing)
            if not types <= _KIND_TYPES[spec.get(k, "x-")]:
                return False
            if spec.get(k) == "id" and str in types and "" in column:
                return False
            if cols is not None and k in spec:
                cols.cache[(id(items), k)] = column
        if cols is not None:
            cols.keys[id(items)] = frozenset(present)
        return True

    return bulk


_bulk_node = _bulk_flat({"id": "id", "x": "num", "y": "num", "z": "num"}, ("id", "x", "y"))
_bulk_member = _bulk_flat(
    {
        "id": "id",
        "start": "id",
        "end": "id",
        "E": "num",
        "A": "num",
        "alpha": "num",
        "material": "str",
        "section": "str",
        "unit_weight": "num",
        "behaviour": "str",  # its value is checked in the meaning stage (build.py), with the allowed names
    },
    ("id", "start", "end"),
)
_bulk_load = _bulk_flat({"node": "id", "fx": "num", "fy": "num", "fz": "num"}, ("node",))
_bulk_temperature = _bulk_flat({"member": "id", "delta": "num"}, ("member", "delta"))
_bulk_length_error = _bulk_flat({"member": "id", "value": "num"}, ("member", "value"))
_bulk_support_displacement = _bulk_flat({"node": "id", "x": "num", "y": "num", "z": "num"}, ("node",))
_bulk_components = _bulk_flat({"x": "num", "y": "num", "z": "num"}, ())
_AXIS_NAMES = frozenset(AXES)


def _ok_support(item: object) -> bool:
    if type(item) is not dict or not item.keys() <= {"node", "restrain"} or not _ok_id(item.get("node")):
        return False
    restrain = item.get("restrain", [])
    return type(restrain) is list and all(type(r) is str and r in _AXIS_NAMES for r in restrain)


def _bulk_supports(items: list[Any], _cols: _Columns | None) -> bool:
    return all(map(_ok_support, items))


def _bulk_numbers(items: list[Any], _cols: _Columns | None = None) -> bool:
    return set(map(type, items)) <= _KIND_TYPES["num"]


def _ok_dof(item: object) -> bool:
    return type(item) is list and len(item) == 2 and _ok_id(item[0]) and type(item[1]) is str and item[1] in AXES


def _bulk_dofs(items: list[Any], _cols: _Columns | None) -> bool:
    return all(map(_ok_dof, items))


def _bulk_entries(items: list[Any], _cols: _Columns | None) -> bool:
    if not items:
        return True
    if set(map(type, items)) != {list} or set(map(len, items)) != {3}:
        return False
    rows, cols, vals = zip(*items, strict=True)
    return set(map(type, rows)) == {int} and set(map(type, cols)) == {int} and _bulk_numbers(list(vals))


@dataclass
class _Hot:
    """A large array or map taken out of the document so that the schema sees a small one."""

    path: Path_
    items: list[Any] | dict[str, Any]
    ref: str
    bulk: Bulk  #: True only if the schema certainly accepts every item


def _take(parent: dict[str, Any], key: str, path: Path_, ref: str, bulk: Bulk, hot: list[_Hot]) -> None:
    value = parent.get(key)
    if type(value) is ScannedMap:  # its shape is proven by the scan: names, and numbers where the schema has them
        parent[key] = {}
    elif type(value) is list or type(value) is dict:
        hot.append(_Hot((*path, key), value, ref, bulk))
        parent[key] = type(value)()


def _light_results(body: Any, path: Path_, hot: list[_Hot]) -> Any:
    if type(body) is not dict or type(body.get("cases")) is not dict:
        return body
    light = dict(body)
    cases: dict[str, Any] = {}
    for cid, case in body["cases"].items():
        if type(case) is dict:
            case = dict(case)
            p = (*path, "cases", cid)
            _take(case, "displacements", p, "results#components", _bulk_components, hot)
            _take(case, "axial_forces", p, "results#number", _bulk_numbers, hot)
            _take(case, "reactions", p, "results#components", _bulk_components, hot)
        cases[cid] = case
    light["cases"] = cases
    return light


def _light_model(doc: Any, hot: list[_Hot]) -> Any:
    if type(doc) is not dict:
        return doc
    light = dict(doc)
    _take(light, "nodes", (), "model#node", _bulk_node, hot)
    _take(light, "members", (), "model#member", _bulk_member, hot)
    _take(light, "supports", (), "model#support", _bulk_supports, hot)
    if type(light.get("load_cases")) is list:
        cases = []
        for i, lc in enumerate(light["load_cases"]):
            if type(lc) is dict:
                lc = dict(lc)
                p: Path_ = ("load_cases", i)
                _take(lc, "loads", p, "model#load", _bulk_load, hot)
                _take(lc, "temperature_changes", p, "model#temperature_change", _bulk_temperature, hot)
                _take(lc, "length_errors", p, "model#length_error", _bulk_length_error, hot)
                _take(lc, "support_displacements", p, "model#support_displacement", _bulk_support_displacement, hot)
            cases.append(lc)
        light["load_cases"] = cases
    if "results" in light:
        light["results"] = _light_results(light["results"], ("results",), hot)
    if type(light.get("stiffness")) is dict:
        st = dict(light["stiffness"])
        _take(st, "dofs", ("stiffness",), "model#dof", _bulk_dofs, hot)
        _take(st, "entries", ("stiffness",), "model#entry", _bulk_entries, hot)
        light["stiffness"] = st
    return light
