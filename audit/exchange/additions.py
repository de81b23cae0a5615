"""Stage 3 of reading, the optional additions to version 1 (``FORMAT.md``): unit weight, self weight, behaviour.

* ``unit_weight`` on a material or inline on a member (inline wins), not negative;
* ``behaviour`` on a member: ``"linear"`` (default), ``"tension_only"`` or ``"compression_only"``;
* ``self_weight`` on a load case: ``{"factor": f}`` with an optional ``direction`` (not the zero vector);
  every member must then have a unit weight (the error names those that have none).

A file that uses none of them gives empty :attr:`Model.unit_weight` / :attr:`Model.behaviour`.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..model import BEHAVIOURS, FloatArray, IntArray
from .bulk import _MISSING, _Columns
from .problems import Path_, _Problems
from .supports import _direction
from .values import _floats, _one_float, _show, _text, _texts

#: members named in one "has no unit_weight" message; the rest are counted
_NAMED = 10


@dataclass(frozen=True)
class _Additions:
    unit_weight: FloatArray  #: (m,) NaN where not given; empty when no member has one
    unit_weight_text: tuple[str, ...]  #: "" where not given; () when no member has one
    behaviour: IntArray  #: (m,) codes; empty when every member is linear


def _allowed_behaviours() -> str:
    return ", ".join(json.dumps(b) for b in BEHAVIOURS)


def _member_additions(doc: dict[str, Any], members: list[dict[str, Any]], probs: _Problems, cols: _Columns):
    materials: dict[str, dict[str, Any]] = doc.get("materials", {})
    for name, mat in materials.items():
        if "unit_weight" in mat:
            w = _one_float(mat["unit_weight"], ("materials", name, "unit_weight"), probs)
            if w < 0:
                probs.add(
                    ("materials", name, "unit_weight"),
                    f"unit_weight must not be negative, got {_show(mat['unit_weight'])}",
                )
    n = len(members)
    from_material = {name: mat["unit_weight"] for name, mat in materials.items() if "unit_weight" in mat}
    inline = cols.any_has(members, "unit_weight")
    uw_text: tuple[str, ...] = ()
    uw: FloatArray = np.zeros(0, dtype=np.float64)
    if inline or (from_material and cols.any_has(members, "material")):
        direct = cols.column(members, "unit_weight") if inline else [_MISSING] * n
        refs = cols.column(members, "material") if cols.any_has(members, "material") else [_MISSING] * n
        raw: list[Any] = []
        for d, r in zip(direct, refs, strict=True):
            raw.append(d if d is not _MISSING else from_material.get(r, _MISSING) if type(r) is str else _MISSING)
        given = [i for i, v in enumerate(raw) if v is not _MISSING]
        if given:
            uw = np.full(n, np.nan, dtype=np.float64)
            vals = [raw[i] for i in given]
            own = {i for i in given if direct[i] is not _MISSING}

            def where(k: int) -> Path_ | None:
                i = given[k]
                return ("members", i, "unit_weight") if i in own else None

            arr = _floats(vals, where, probs)
            uw[np.array(given, dtype=np.int64)] = arr
            for k in np.flatnonzero(arr < 0).tolist():
                i = given[k]
                if i in own:
                    probs.add(("members", i, "unit_weight"), f"unit_weight must not be negative, got {_show(vals[k])}")
            texts = [""] * n
            for i, t in zip(given, _texts(vals), strict=True):
                texts[i] = t
            uw_text = tuple(texts)
    behaviour: IntArray = np.zeros(0, dtype=np.int64)
    if cols.any_has(members, "behaviour"):
        col = cols.column(members, "behaviour")
        codes = np.zeros(n, dtype=np.int64)
        for i, b in enumerate(col):
            if b is _MISSING:
                continue
            code = BEHAVIOURS.get(b) if type(b) is str else None
            if code is None:
                probs.add(
                    ("members", i, "behaviour"),
                    f"{_show(b)} is not a member behaviour; use one of {_allowed_behaviours()}",
                )
            else:
                codes[i] = code
        if np.any(codes):
            behaviour = codes
    return _Additions(uw, uw_text, behaviour)


def _self_weight(
    lc: dict[str, Any], base: Path_, dim: int, additions: _Additions, member_ids: list[str], probs: _Problems
) -> dict[str, Any]:
    """The LoadCase fields of a case's ``self_weight`` (an empty dict when it has none)."""
    sw = lc.get("self_weight")
    if sw is None:
        return {}
    p: Path_ = (*base, "self_weight")
    factor = _one_float(sw["factor"], (*p, "factor"), probs)
    out: dict[str, Any] = {"self_weight": factor, "self_weight_text": _text(sw["factor"])}
    if "direction" in sw:
        got = _direction(sw["direction"], dim, (*p, "direction"), probs)
        if got is not None:
            out["self_weight_direction"] = got[0]
            out["self_weight_direction_text"] = got[1]
    m = len(member_ids)
    missing = (
        list(range(m)) if additions.unit_weight.size == 0 else np.flatnonzero(np.isnan(additions.unit_weight)).tolist()
    )
    if missing and m:
        names = ", ".join(repr(member_ids[i]) for i in missing[:_NAMED])
        more = f" and {len(missing) - _NAMED} more" if len(missing) > _NAMED else ""
        probs.add(
            p,
            f"self weight needs a unit_weight on every member (on the member or its material); "
            f"{len(missing)} of {m} have none: {names}{more}",
        )
    if not math.isfinite(factor):
        out["self_weight"] = 0.0
    return out
