"""Stage 3 of reading, what another program reported: its results (per case) and its stiffness matrix.

Results are converted to model units and to tension positive; each value keeps
the half unit of its last written digit as its rounding quantum.  Both are read
against a :class:`_Frame`: what they need to know of the model they belong to.
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..model import AXES, FORCE_UNITS, LENGTH_UNITS, CaseResults, Model, Results, SourceStiffness, Units
from .bulk import _MISSING, _uniform_columns
from .fastread import ScannedMap, ScanRefusedError, numbers_of
from .problems import Path_, _Problems
from .values import _floats, _id, _quanta


@dataclass
class _Frame:
    """What results and stiffness need to know about the model they belong to."""

    dim: int
    units: Units
    node_index: Mapping[str, int]
    member_index: Mapping[str, int]
    case_ids: frozenset[str]
    n_nodes: int
    n_members: int


def _frame_of(model: Model) -> _Frame:
    return _Frame(
        model.dim,
        model.units,
        model.node_index(),
        model.member_index(),
        frozenset(model.all_case_ids()),
        model.n_nodes,
        model.n_members,
    )


def _results(body: dict[str, Any], frame: _Frame, base: Path_, probs: _Problems) -> Results:
    declared = body.get("units", {})
    units = Units(
        length=declared.get("length", frame.units.length),
        force=declared.get("force", frame.units.force),
        temperature=declared.get("temperature", frame.units.temperature),
    )
    lf = float(LENGTH_UNITS[units.length] / LENGTH_UNITS[frame.units.length])
    ff = float(FORCE_UNITS[units.force] / FORCE_UNITS[frame.units.force])
    sign_convention = body.get("sign_convention", "tension_positive")
    axial_sign = -1.0 if sign_convention == "compression_positive" else 1.0
    n, m, dim = frame.n_nodes, frame.n_members, frame.dim
    out = []
    for cid, case in body["cases"].items():
        cp = (*base, "cases", cid)
        if cid not in frame.case_ids:
            probs.add(cp, f"unknown load case or combination {cid!r}")

        def components(key: str, factor: float, cp: Path_ = cp, case: dict[str, Any] = case):
            values = np.full((n, dim), np.nan)
            quantum = np.full((n, dim), np.nan)
            table: dict[str, Any] = case.get(key, {})
            if type(table) is ScannedMap:
                rows, (vals, quanta) = _rows(table, frame.node_index, n), _numbers(table)
                if np.any(table.axis >= dim):
                    raise ScanRefusedError
                values[rows[table.entry], table.axis] = vals * factor
                quantum[rows[table.entry], table.axis] = quanta * factor
                return values, quantum
            names = list(table)
            comps = list(table.values())
            idx = list(map(frame.node_index.get, names))
            all_known = None not in idx
            if not all_known:
                for i in (i for i, v in enumerate(idx) if v is None):
                    probs.add((*cp, key, names[i]), f"unknown node {names[i]!r}")
            uniform = _uniform_columns(comps) if comps else None
            for axis, a in enumerate(AXES):
                if axis >= dim:
                    if uniform is None or a in uniform:
                        for i in (i for i, c in enumerate(comps) if a in c):
                            probs.add((*cp, key, names[i], a), f"axis {a!r} does not exist in a {dim}D model")
                    continue
                if uniform is not None and all_known:  # every entry has this axis or none has
                    if a not in uniform:
                        continue
                    raw = uniform[a]
                    rows = np.array(idx, dtype=np.int64)
                    sel: range | list[int] = range(len(comps))
                else:
                    column = [c.get(a, _MISSING) for c in comps]
                    sel = [i for i, v in enumerate(column) if v is not _MISSING and idx[i] is not None]
                    if not sel:
                        continue
                    raw = [column[i] for i in sel]
                    rows = np.array([idx[i] for i in sel], dtype=np.int64)

                def where(j: int, sel: range | list[int] = sel, a: str = a) -> Path_:
                    return (*cp, key, names[sel[j]], a)

                values[rows, axis] = _floats(raw, where, probs) * factor
                quantum[rows, axis] = _quanta(raw) * factor
            return values, quantum

        disp, disp_q = components("displacements", lf)
        reac, reac_q = components("reactions", ff)
        forces = np.full(m, np.nan)
        forces_q = np.full(m, np.nan)
        table_f: dict[str, Any] = case.get("axial_forces", {})
        if type(table_f) is ScannedMap:
            rows_s, (vals_f, quanta_f) = _rows(table_f, frame.member_index, m), _numbers(table_f)
            forces[rows_s] = vals_f * (ff * axial_sign)
            forces_q[rows_s] = quanta_f * ff
            table_f = {}
        names_f = list(table_f)
        idx_f = list(map(frame.member_index.get, names_f))
        raw_f = list(table_f.values())
        keep: range | list[int] = range(len(names_f))
        if None in idx_f:
            for i in (i for i, v in enumerate(idx_f) if v is None):
                probs.add((*cp, "axial_forces", names_f[i]), f"unknown member {names_f[i]!r}")
            keep = [i for i, v in enumerate(idx_f) if v is not None]
            raw_f = [raw_f[i] for i in keep]
            idx_f = [idx_f[i] for i in keep]
        if keep:
            rows_f = np.array(idx_f, dtype=np.int64)

            def where_f(j: int, keep: range | list[int] = keep, cp: Path_ = cp, names_f: list[str] = names_f) -> Path_:
                return (*cp, "axial_forces", names_f[keep[j]])

            forces[rows_f] = _floats(raw_f, where_f, probs) * (ff * axial_sign)
            forces_q[rows_f] = _quanta(raw_f) * ff
        out.append(
            CaseResults(
                case_id=cid,
                displacements=disp,
                displacement_quantum=disp_q,
                axial_forces=forces,
                axial_force_quantum=forces_q,
                reactions=reac,
                reaction_quantum=reac_q,
                has_displacements="displacements" in case,
                has_axial_forces="axial_forces" in case,
                has_reactions="reactions" in case,
            )
        )
    return Results(
        source=body.get("source", ""),
        sign_convention=sign_convention,
        units=units,
        length_factor=lf,
        force_factor=ff,
        cases=tuple(out),
    )


def _numbers(table: ScannedMap) -> tuple[np.ndarray, np.ndarray]:
    found = numbers_of(table.texts)
    if found is None:  # a number beyond float64: the tree's reading reports it with its place
        raise ScanRefusedError
    return found


def _rows(table: ScannedMap, index: Mapping[str, int], count: int) -> np.ndarray:
    """The index of each name of a scanned map (ScanRefusedError if one is unknown or given twice)."""
    ids = list(index)
    names = table.names
    if len(names) == len(ids) and "\x00" not in "".join(ids):
        try:
            if np.array_equal(names, np.array(ids, dtype=np.bytes_)):  # written in the model's order
                return np.arange(len(ids), dtype=np.int64)
        except UnicodeEncodeError:  # a non-ASCII id (the names are ASCII)
            pass
    rows = np.fromiter(
        map(index.get, map(bytes.decode, names.tolist()), itertools.repeat(-1)), dtype=np.int64, count=len(names)
    )
    if len(rows) and (rows.min() < 0 or np.bincount(rows, minlength=count).max() > 1):
        raise ScanRefusedError
    return rows


def _stiffness(st: dict[str, Any], frame: _Frame, probs: _Problems) -> SourceStiffness:
    base: Path_ = ("stiffness",)
    dof_node: list[int] = []
    dof_axis: list[int] = []
    seen: dict[tuple[int, int], int] = {}
    for i, (nid_raw, axis_name) in enumerate(st["dofs"]):
        nid = _id(nid_raw)
        ni = frame.node_index.get(nid)
        axis = AXES.index(axis_name)
        if ni is None:
            probs.add((*base, "dofs", i, 0), f"unknown node {nid!r}")
            ni = -1
        if axis >= frame.dim:
            probs.add((*base, "dofs", i, 1), f"axis {axis_name!r} does not exist in a {frame.dim}D model")
        elif ni >= 0:
            if (ni, axis) in seen:
                probs.add((*base, "dofs", i), f"degree of freedom [{nid!r}, {axis_name!r}] is listed twice")
            seen.setdefault((ni, axis), i)
        dof_node.append(ni)
        dof_axis.append(axis)
    entries = st["entries"]
    n_dofs = len(dof_node)
    rows = np.array([e[0] for e in entries], dtype=object)
    cols = np.array([e[1] for e in entries], dtype=object)
    values = _floats([e[2] for e in entries], lambda i: (*base, "entries", i, 2), probs)
    for pos, arr in ((0, rows), (1, cols)):
        if len(arr):
            for i in np.flatnonzero((arr < 0) | (arr >= n_dofs)).tolist():
                probs.add((*base, "entries", i, pos), f"index {arr[i]} is out of range: there are {n_dofs} dofs")
    if st["storage"] == "upper" and len(entries):
        for i in np.flatnonzero(rows > cols).tolist():
            probs.add((*base, "entries", i), "an entry below the diagonal, but storage is 'upper'")
    if probs:
        rows_i = np.zeros(len(entries), dtype=np.int64)
        cols_i = np.zeros(len(entries), dtype=np.int64)
    else:
        rows_i = rows.astype(np.int64)
        cols_i = cols.astype(np.int64)
    return SourceStiffness(
        dof_node=np.array(dof_node, dtype=np.int64),
        dof_axis=np.array(dof_axis, dtype=np.int64),
        storage=st["storage"],
        rows=rows_i,
        cols=cols_i,
        values=values,
    )
