"""Stage 3 of reading, the model itself: a shape-checked model document -> :class:`~audit.model.Model`.

Nodes and members (ids unique, ends known, lengths non-zero, E and A positive,
inline values before those of a material or section), then supports, load
cases, combinations, embedded results and stiffness from their own modules.
Every problem is added to one list; the caller raises it.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Iterator, Mapping
from dataclasses import replace
from typing import Any

import numpy as np

from ..model import AXES, Model, Units
from .additions import _member_additions, _self_weight
from .bulk import _MISSING, _Columns
from .cases import _case_ids, _combinations, _load_case
from .problems import Path_, _path_str, _Problems
from .reported import _Frame, _results, _stiffness
from .supports import _supports
from .values import _float, _floats, _one_float, _show, _texts


class _RangeIndex(Mapping[str, int]):
    """The index of ids written as the integers 0, 1, 2, ... in order, without a dict of them.

    A key is found exactly when it is the decimal text of one of those integers (``str(i)``: ASCII
    digits, no sign, no leading zero), as it is in the dict ``{str(i): i}`` it stands for.
    """

    def __init__(self, ids: list[str]) -> None:
        self.ids = ids

    def __getitem__(self, key: str) -> int:
        if type(key) is str and key.isascii() and key.isdigit() and (key[0] != "0" or key == "0"):
            i = int(key)
            if i < len(self.ids):
                return i
        raise KeyError(key)

    def __iter__(self) -> Iterator[str]:
        return iter(self.ids)

    def __len__(self) -> int:
        return len(self.ids)


def _index_ids(items: list[dict[str, Any]], key: str, what: str, base: Path_, probs: _Problems, cols: _Columns):
    """Ids as strings and the index of each (first occurrence wins); duplicates reported.

    Ids written as the integers 0, 1, 2, ... in order (as programs write them) are distinct: their index is a
    :class:`_RangeIndex` (a dict of 10^6 strings costs a good part of a second).
    """
    written = cols.column(items, key)
    ids = list(map(str, written))
    if written and type(written[0]) is int and written == list(range(len(written))):
        return ids, _RangeIndex(ids)
    index = dict(zip(ids, range(len(ids)), strict=True))
    if len(index) != len(ids):
        first: dict[str, int] = {}
        for i, k in enumerate(ids):
            if k in first:
                probs.add((*base, i, key), f"duplicate {what} id {k!r} (first at {_path_str((*base, first[k]))})")
            else:
                first[k] = i
        index = first
    return ids, index


def _given(items: list[dict[str, Any]], key: str, cols: _Columns) -> list[Any]:
    """The value of ``key`` in each item, None where it has none."""
    if not cols.any_has(items, key):
        return [None] * len(items)
    column = cols.column(items, key)
    return [None if v is _MISSING else v for v in column] if _MISSING in column else column


def _member_properties(doc: dict[str, Any], members: list[dict[str, Any]], probs: _Problems, cols: _Columns):
    """E, A, alpha per member (inline wins over the material or section) with texts."""
    materials: dict[str, dict[str, Any]] = doc.get("materials", {})
    sections: dict[str, dict[str, Any]] = doc.get("sections", {})
    for name, mat in materials.items():
        e = _one_float(mat["E"], ("materials", name, "E"), probs)
        if not e > 0 and math.isfinite(e):
            probs.add(("materials", name, "E"), f"E must be positive, got {_show(mat['E'])}")
        if "alpha" in mat:
            _one_float(mat["alpha"], ("materials", name, "alpha"), probs)
    for name, sec in sections.items():
        a = _one_float(sec["A"], ("sections", name, "A"), probs)
        if not a > 0 and math.isfinite(a):
            probs.add(("sections", name, "A"), f"A must be positive, got {_show(sec['A'])}")

    n = len(members)
    refs_of = {ref_key: _given(members, ref_key, cols) for ref_key in ("material", "section")}
    if not any(cols.any_has(members, key) for key in ("E", "A", "alpha")):
        found = _by_reference(refs_of["material"], materials, refs_of["section"], sections)
        if found is not None:
            return found
    values: dict[str, list[Any]] = {}
    inline: dict[str, list[int]] = {}
    has_alpha = [True] * n
    for ref_key, table in (("material", materials), ("section", sections)):
        refs = refs_of[ref_key]
        if not set(refs) <= set(table) | {None}:
            for i in (i for i, r in enumerate(refs) if r is not None and r not in table):
                probs.add(("members", i, ref_key), f"unknown {ref_key} {refs[i]!r}")
    sources = (("E", "material", materials), ("A", "section", sections), ("alpha", "material", materials))
    for key, ref_key, table in sources:
        refs = refs_of[ref_key]
        direct = _given(members, key, cols)
        from_table: dict[str | None, Any] = {name: entry.get(key) for name, entry in table.items()}
        vals: list[Any] = list(map(from_table.get, refs))
        inline[key] = []
        if n - direct.count(None):
            inline[key] = [i for i, v in enumerate(direct) if v is not None]
            for i in inline[key]:
                vals[i] = direct[i]
        if None in vals:
            if key == "alpha":  # an unknown material is reported once, not again as a missing alpha
                has_alpha = [
                    v is not None or (r is not None and r not in table) for v, r in zip(vals, refs, strict=True)
                ]
            else:
                for i in (i for i, v in enumerate(vals) if v is None):
                    if refs[i] is None or refs[i] in table:
                        probs.add(("members", i), f"no {key}: give {key!r} or a {ref_key!r}")
            vals = [0 if v is None else v for v in vals]
        values[key] = vals
    arrays = {}
    for key in ("E", "A", "alpha"):
        vals = values[key]
        own = set(inline[key])

        def where(i: int, key: str = key, own: set[int] = own) -> Path_ | None:
            return ("members", i, key) if i in own else None

        arr = _floats(vals, where, probs)
        arrays[key] = arr
        if key != "alpha" and inline[key]:
            own_idx = np.array(inline[key], dtype=np.int64)
            sub = arr[own_idx]
            for i in own_idx[~(sub > 0) & np.isfinite(sub)].tolist():
                probs.add(("members", i, key), f"{key} must be positive, got {_show(vals[i])}")
    texts = {key: tuple(_texts(values[key])) for key in values}
    return arrays, texts, has_alpha


def _by_reference(
    materials_of: list[Any], materials: dict[str, dict[str, Any]], sections_of: list[Any], sections: dict[str, Any]
):
    """What :func:`_member_properties` gives when no member has a value of its own: each value looked up by reference.

    Every member must name a known material and section (else None: the caller then reports what is
    missing, member by member).  Each distinct value is converted once, and the members take theirs by the
    code of their material or section: a few passes over the members instead of several per key.
    """
    arrays: dict[str, np.ndarray] = {}
    texts: dict[str, tuple[str, ...]] = {}
    has_alpha: list[bool] = []
    for refs, table, keys in ((materials_of, materials, ("E", "alpha")), (sections_of, sections, ("A",))):
        code = {name: c for c, name in enumerate(table)}
        try:
            codes = np.fromiter(map(code.__getitem__, refs), dtype=np.int64, count=len(refs))
        except (KeyError, TypeError):  # no reference (None) or an unknown one
            return None
        for key in keys:
            given = [entry.get(key) for entry in table.values()]
            raw = [0 if v is None else v for v in given]  # only alpha may be absent: 0, as when not given
            arrays[key] = np.array([_float(v) for v in raw], dtype=np.float64)[codes]
            texts[key] = tuple(np.array(_texts(raw), dtype=object)[codes].tolist())
            if key == "alpha":
                has_alpha = np.array([v is not None for v in given], dtype=bool)[codes].tolist()
    return arrays, texts, has_alpha


def _ends_as_written(node_written: list[Any], written: list[Any]) -> np.ndarray:
    """The node index of each end looked up by its id as written (no string made per member); -1 if not found.

    The caller looks those up again by their string form (``7`` is ``"7"``).  When the nodes' ids are the
    integers 0, 1, 2, ... in order (as programs write them), an integer end is its own index.
    """
    n = len(node_written)
    if n and type(node_written[0]) is int and node_written == list(range(n)) and set(map(type, written)) == {int}:
        try:
            ends = np.array(written, dtype=np.int64)
        except OverflowError:  # an integer beyond int64 names no node here
            pass
        else:
            ends[(ends < 0) | (ends >= n)] = -1
            return ends
    by_written = dict(zip(node_written, range(n), strict=True))
    found = map(by_written.get, written, itertools.repeat(-1, len(written)))
    return np.fromiter(found, dtype=np.int64, count=len(written))


def _build_model(doc: dict[str, Any], probs: _Problems, cols: _Columns) -> Model:
    dim: int = doc["dimensions"]
    u = doc["units"]
    units = Units(u["length"], u["force"], u.get("temperature"))
    nodes: list[dict[str, Any]] = doc["nodes"]
    members: list[dict[str, Any]] = doc["members"]
    if not nodes:
        probs.add(("nodes",), "a model needs at least one node")
    if not members:
        probs.add(("members",), "a model needs at least one member")

    node_ids, node_index = _index_ids(nodes, "id", "node", ("nodes",), probs, cols)
    z = cols.column(nodes, "z") if cols.any_has(nodes, "z") else [_MISSING] * len(nodes)
    if dim == 2:
        for i in (i for i, v in enumerate(z) if v is not _MISSING) if cols.any_has(nodes, "z") else ():
            probs.add(("nodes", i, "z"), "key 'z' is not allowed in a 2D model")
    else:
        for i in (i for i, v in enumerate(z) if v is _MISSING):
            probs.add(("nodes", i, "z"), "required key 'z' is missing (the model is 3D)")
    raw_cols = [cols.column(nodes, a) for a in AXES[:dim]]
    raw_cols = [[0 if v is _MISSING else v for v in col] if _MISSING in col else col for col in raw_cols]

    def node_path(axis: str) -> Callable[[int], Path_]:
        return lambda i: ("nodes", i, axis)

    coord_cols = [_floats(col, node_path(a), probs) for col, a in zip(raw_cols, AXES, strict=False)]
    coords = np.stack(coord_cols, axis=1) if nodes else np.zeros((0, dim))
    coords_text = tuple(zip(*(_texts(col) for col in raw_cols), strict=True))

    member_ids, member_index = _index_ids(members, "id", "member", ("members",), probs, cols)
    conn = np.empty((len(members), 2), dtype=np.int64)
    for col, key in enumerate(("start", "end")):
        written = cols.column(members, key)
        conn[:, col] = _ends_as_written(cols.column(nodes, "id"), written)
        for i in np.flatnonzero(conn[:, col] < 0).tolist():
            name = str(written[i])
            conn[i, col] = node_index.get(name, -1)
            if conn[i, col] < 0:
                probs.add(("members", i, key), f"unknown node {name!r}")
    known = (conn >= 0).all(axis=1)
    same = known & (conn[:, 0] == conn[:, 1])
    for i in np.flatnonzero(same).tolist():
        probs.add(("members", i, "end"), f"the member starts and ends at the same node {node_ids[conn[i, 0]]!r}")
    if len(conn) and len(coords):
        safe = np.where(conn >= 0, conn, 0)
        coincident = known & ~same & np.all(coords[safe[:, 0]] == coords[safe[:, 1]], axis=1)
        for i in np.flatnonzero(coincident).tolist():
            a, b = node_ids[conn[i, 0]], node_ids[conn[i, 1]]
            probs.add(("members", i), f"zero length: its end nodes {a!r} and {b!r} are at the same point")

    arrays, texts, has_alpha = _member_properties(doc, members, probs, cols)
    sup = _supports(doc, dim, node_index, probs)
    cases, combos = _case_ids(doc, probs)
    n, m = len(nodes), len(members)
    additions = _member_additions(doc, members, probs, cols)
    load_cases = tuple(
        replace(
            _load_case(lc, k, dim, units, node_index, member_index, has_alpha, sup, n, m, probs),
            **_self_weight(lc, ("load_cases", k), dim, additions, member_ids, probs),
        )
        for k, lc in enumerate(doc.get("load_cases", []))
    )
    combinations = _combinations(doc, cases, combos, probs)
    frame = _Frame(dim, units, node_index, member_index, frozenset(cases) | frozenset(combos), n, m)
    results = _results(doc["results"], frame, ("results",), probs) if "results" in doc else None
    stiffness = _stiffness(doc["stiffness"], frame, probs) if "stiffness" in doc else None
    return Model(
        title=doc.get("title", ""),
        dim=dim,
        units=units,
        node_ids=tuple(node_ids),
        coords=coords,
        member_ids=tuple(member_ids),
        conn=conn,
        E=arrays["E"],
        A=arrays["A"],
        alpha=arrays["alpha"],
        restraint_node=np.array(sup.node, dtype=np.int64),
        restraint_dir=np.array(sup.dirs, dtype=np.float64).reshape(-1, dim),
        restraint_label=tuple(sup.labels),
        spring_node=np.array(sup.spring_node, dtype=np.int64),
        spring_dir=np.array(sup.spring_dirs, dtype=np.float64).reshape(-1, dim),
        spring_k=np.array(sup.spring_k, dtype=np.float64),
        load_cases=load_cases,
        combinations=combinations,
        results=results,
        stiffness=stiffness,
        description=doc.get("description", ""),
        coords_text=coords_text,
        E_text=texts["E"],
        A_text=texts["A"],
        alpha_text=texts["alpha"],  # "0" where not given
        restraint_dir_text=tuple(sup.dir_texts),
        spring_dir_text=tuple(sup.spring_dir_texts),
        spring_k_text=tuple(sup.spring_k_text),
        unit_weight=additions.unit_weight,
        unit_weight_text=additions.unit_weight_text,
        behaviour=additions.behaviour,
    )
