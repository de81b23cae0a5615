"""Stage 3 of reading, load cases and combinations: loads, temperature changes, length errors, support displacements.

Several entries for one node or member add up; a support displacement must
lie along a restraint of its node (the same label, or a parallel direction with
its sign) and may be given only once per restraint; a combination combines
load cases only, never other combinations.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..model import AXES, Combination, FloatArray, LoadCase, Units
from .problems import Path_, _path_str, _Problems
from .supports import _axis_vector, _direction, _Supports
from .values import _floats, _id, _one_float, _text

_PARALLEL = 1.0 - 1e-9  # |cos| above which two unit directions count as parallel


def _neg_text(text: str) -> str:
    return text[1:] if text.startswith("-") else "-" + text


def _load_case(
    lc: dict[str, Any],
    k: int,
    dim: int,
    units: Units,
    node_index: Mapping[str, int],
    member_index: Mapping[str, int],
    has_alpha: list[bool],
    sup: _Supports,
    n_nodes: int,
    n_members: int,
    probs: _Problems,
) -> LoadCase:
    base: Path_ = ("load_cases", k)
    loads = np.zeros((n_nodes, dim), dtype=np.float64)
    load_terms: list[tuple[int, int, str]] = []
    load_vals: list[Any] = []
    load_paths: list[Path_] = []
    for j, ld in enumerate(lc.get("loads", [])):
        p = (*base, "loads", j)
        nid = _id(ld["node"])
        ni = node_index.get(nid)
        if ni is None:
            probs.add((*p, "node"), f"unknown node {nid!r}")
        for axis, key in enumerate(("fx", "fy", "fz")):
            if key not in ld:
                continue
            if axis >= dim:
                probs.add((*p, key), f"key {key!r} is not allowed in a {dim}D model")
            elif ni is not None:
                load_terms.append((ni, axis, _text(ld[key])))
                load_vals.append(ld[key])
                load_paths.append((*p, key))
    if load_terms:
        vals = _floats(load_vals, load_paths.__getitem__, probs)
        idx = np.array([(t[0], t[1]) for t in load_terms], dtype=np.int64)
        np.add.at(loads, (idx[:, 0], idx[:, 1]), vals)

    def per_member(key: str, value_key: str) -> tuple[FloatArray, tuple[tuple[int, str], ...]]:
        arr = np.zeros(n_members, dtype=np.float64)
        terms: list[tuple[int, str]] = []
        raw: list[Any] = []
        paths: list[Path_] = []
        entries = lc.get(key, [])
        if key == "temperature_changes" and entries and units.temperature is None:
            probs.add((*base, key), "temperature changes need 'units.temperature' (degC, K or degF)")
        for j, item in enumerate(entries):
            p = (*base, key, j)
            mid = _id(item["member"])
            mi = member_index.get(mid)
            if mi is None:
                probs.add((*p, "member"), f"unknown member {mid!r}")
                continue
            if key == "temperature_changes" and not has_alpha[mi]:
                probs.add(
                    (*p, "member"),
                    f"member {mid!r} has a temperature change but no alpha "
                    "(give 'alpha' on the member or its material)",
                )
            terms.append((mi, _text(item[value_key])))
            raw.append(item[value_key])
            paths.append((*p, value_key))
        if terms:
            vals = _floats(raw, paths.__getitem__, probs)
            np.add.at(arr, np.array([t[0] for t in terms], dtype=np.int64), vals)
        return arr, tuple(terms)

    temperature, temperature_text = per_member("temperature_changes", "delta")
    length_error, length_error_text = per_member("length_errors", "value")

    settle: dict[int, tuple[float, str]] = {}
    for j, sd in enumerate(lc.get("support_displacements", [])):
        p = (*base, "support_displacements", j)
        nid = _id(sd["node"])
        ni = node_index.get(nid)
        if ni is None:
            probs.add((*p, "node"), f"unknown node {nid!r}")
        comps = [a for a in AXES if a in sd]
        wanted: list[tuple[Path_, str, tuple[float, ...], Any]] = []  # path, label, unit direction, value
        if "direction" in sd:
            if comps:
                probs.add(p, "give axis components (x, y, z) or 'direction' with 'value', not both")
                continue
            if "value" not in sd:
                probs.add((*p, "value"), "required key 'value' is missing (it goes with 'direction')")
                continue
            got = _direction(sd["direction"], dim, (*p, "direction"), probs)
            if got is None:
                continue
            label = "dir(" + ",".join(got[1]) + ")"
            wanted.append(((*p, "value"), label, got[0], sd["value"]))
        else:
            if "value" in sd:
                probs.add((*p, "value"), "'value' goes with 'direction'; use x, y or z for an axis")
                continue
            if not comps:
                probs.add(p, "a support displacement needs x, y, z, or 'direction' with 'value'")
                continue
            for a in comps:
                axis = AXES.index(a)
                if axis >= dim:
                    probs.add((*p, a), f"key {a!r} is not allowed in a {dim}D model")
                    continue
                wanted.append(((*p, a), a, _axis_vector(axis, dim)[0], sd[a]))
        if ni is None:
            continue
        rows = sup.by_node.get(ni, [])
        for vpath, label, unit, value in wanted:
            match = next((r for r in rows if sup.labels[r] == label), None)
            sign = 1.0
            if match is None:
                for r in rows:
                    cos = sum(a * b for a, b in zip(unit, sup.dirs[r], strict=True))
                    if abs(cos) >= _PARALLEL:
                        match, sign = r, (1.0 if cos > 0 else -1.0)
                        break
            if match is None:
                probs.add(
                    vpath,
                    f"node {nid!r} is not restrained along {label}; a support displacement needs a restraint there",
                )
                continue
            if match in settle:
                probs.add(vpath, f"a support displacement along {sup.labels[match]} at node {nid!r} is given twice")
                continue
            f = _one_float(value, vpath, probs)
            text = _text(value)
            settle[match] = (sign * f, text if sign > 0 else _neg_text(text))
    settlement = np.zeros(len(sup.node), dtype=np.float64)
    for r, (f, _t) in settle.items():
        settlement[r] = f
    return LoadCase(
        id=_id(lc["id"]),
        title=lc.get("title", ""),
        loads=loads,
        temperature=temperature,
        length_error=length_error,
        settlement=settlement,
        load_text=tuple(load_terms),
        temperature_text=temperature_text,
        length_error_text=length_error_text,
        settlement_text=tuple((r, t) for r, (_f, t) in sorted(settle.items())),
    )


def _case_ids(doc: dict[str, Any], probs: _Problems) -> tuple[dict[str, int], dict[str, int]]:
    cases: dict[str, int] = {}
    combos: dict[str, int] = {}
    first: dict[str, Path_] = {}
    for key, table in (("load_cases", cases), ("combinations", combos)):
        for i, item in enumerate(doc.get(key, [])):
            cid = _id(item["id"])
            if cid in first:
                probs.add(
                    (key, i, "id"), f"duplicate load case or combination id {cid!r} (first at {_path_str(first[cid])})"
                )
            else:
                first[cid] = (key, i)
                table[cid] = i
    return cases, combos


def _combinations(
    doc: dict[str, Any], cases: dict[str, int], combos: dict[str, int], probs: _Problems
) -> tuple[Combination, ...]:
    out = []
    for i, comb in enumerate(doc.get("combinations", [])):
        factors = []
        for cid, factor in comb["factors"].items():
            p: Path_ = ("combinations", i, "factors", cid)
            f = _one_float(factor, p, probs)
            if cid in cases:
                factors.append((cases[cid], f, _text(factor)))
            elif cid in combos:
                probs.add(p, f"{cid!r} is a combination; combinations of combinations are not allowed")
            else:
                probs.add(p, f"unknown load case {cid!r}")
        out.append(Combination(id=_id(comb["id"]), factors=tuple(factors)))
    return tuple(out)
