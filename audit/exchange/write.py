"""The writer: :func:`dump_results` and :func:`dump_model` in the exchange format (``FORMAT.md``).

Model numbers are written from their kept decimal texts, so a model
round-trips through the format unchanged; results are written from their
values (see :mod:`audit.exchange.numtext`).
"""

from __future__ import annotations

import json
import math
from collections.abc import Sequence
from typing import Any

from ..model import AXES, BEHAVIOUR_NAMES, FloatArray, LoadCase, Model, Results, Units
from .numtext import _numbers, _Raw
from .version import FORMAT_VERSION, MODEL_FORMAT, RESULTS_FORMAT


def _flat(v: Any) -> bool:
    if isinstance(v, dict):
        return all(not isinstance(x, (dict, list)) or (isinstance(x, list) and _flat(x)) for x in v.values())
    if isinstance(v, list):
        return all(not isinstance(x, (dict, list)) for x in v)
    return True


def _emit(v: Any, indent: int, out: list[str]) -> None:
    """Append the JSON text of ``v``: containers of scalars on one line, others one item per line."""
    if isinstance(v, _Raw):
        out.append(v)
    elif isinstance(v, str):
        out.append(json.dumps(v, ensure_ascii=False))
    elif isinstance(v, bool) or v is None:
        out.append(json.dumps(v))
    elif isinstance(v, int):
        out.append(str(v))
    elif isinstance(v, dict):
        if not v:
            out.append("{}")
            return
        inline = _flat(v)
        pad = "" if inline else "\n" + "  " * (indent + 1)
        out.append("{" + pad)
        for i, (k, x) in enumerate(v.items()):
            if i:
                out.append(", " if inline else "," + pad)
            out.append(json.dumps(k, ensure_ascii=False) + ": ")
            _emit(x, indent + 1, out)
        out.append("}" if inline else "\n" + "  " * indent + "}")
    elif isinstance(v, list):
        if not v:
            out.append("[]")
            return
        inline = _flat(v)
        pad = "" if inline else "\n" + "  " * (indent + 1)
        out.append("[" + pad)
        for i, x in enumerate(v):
            if i:
                out.append(", " if inline else "," + pad)
            _emit(x, indent + 1, out)
        out.append("]" if inline else "\n" + "  " * indent + "]")
    else:
        raise TypeError(f"cannot write {type(v).__name__} in JSON")


def _to_text(doc: Any) -> str:
    out: list[str] = []
    _emit(doc, 0, out)
    out.append("\n")
    return "".join(out)


def _units_dict(units: Units, with_temperature: bool = True) -> dict[str, str]:
    d = {"length": units.length, "force": units.force}
    if with_temperature and units.temperature is not None:
        d["temperature"] = units.temperature
    return d


def dump_results(model: Model, cases: Sequence[Any], *, source: str, digits: int | None = None) -> str:
    """A results document (``FORMAT.md``) for ``model``: every displacement, axial force and support reaction.

    Parameters
    ----------
    cases
        objects with ``case_id``, ``displacements`` (n_nodes, dim), ``axial_forces`` (n_members,) and
        ``reactions`` (n_nodes, dim), in model units, tension positive.  Entries may be floats or
        exact / high-precision numbers (``fractions.Fraction``, ``mpmath.mpf``, ``decimal.Decimal``).
    source
        free text saying where the results came from.
    digits
        ``None``: each value as a float in its shortest round-trip form; ``N``: the exact value
        rounded half-to-even to N significant digits (trailing zeros kept, as they are significant).
        Zero of either sign is written ``0``.
    """
    if digits is not None and digits < 1:
        raise ValueError(f"digits must be at least 1, got {digits}")
    dim, n, m = model.dim, model.n_nodes, model.n_members
    node_keys = [json.dumps(i, ensure_ascii=False) for i in model.node_ids]
    member_keys = [json.dumps(i, ensure_ascii=False) for i in model.member_ids]
    row = "{}: {{" + ", ".join(f'"{a}": {{}}' for a in AXES[:dim]) + "}}"
    supported = sorted(set(model.restraint_node.tolist()) | set(model.spring_node.tolist()))
    out = [
        "{\n",
        f'  "format": "{RESULTS_FORMAT}",\n',
        f'  "version": {FORMAT_VERSION},\n',
        f'  "source": {json.dumps(source, ensure_ascii=False)},\n',
        '  "sign_convention": "tension_positive",\n',
        f'  "units": {json.dumps(_units_dict(model.units, with_temperature=False))},\n',
        '  "cases": {',
    ]
    for k, case in enumerate(cases):
        disp = _numbers(case.displacements, digits)
        forces = _numbers(case.axial_forces, digits)
        reac = _numbers(case.reactions, digits)
        if len(disp) != n * dim or len(reac) != n * dim or len(forces) != m:
            raise ValueError(
                f"case {case.case_id!r}: expected displacements and reactions of shape ({n}, {dim}) "
                f"and {m} axial forces"
            )
        d_rows = [row.format(node_keys[i], *disp[i * dim : (i + 1) * dim]) for i in range(n)]
        f_rows = [f"{key}: {v}" for key, v in zip(member_keys, forces, strict=True)]
        r_rows = [row.format(node_keys[i], *reac[i * dim : (i + 1) * dim]) for i in supported]
        out.append(("," if k else "") + f"\n    {json.dumps(str(case.case_id), ensure_ascii=False)}: {{\n")
        out.append(f'      "displacements": {_block(d_rows, 6)},\n')
        out.append(f'      "axial_forces": {_block(f_rows, 6)},\n')
        out.append(f'      "reactions": {_block(r_rows, 6)}\n    }}')
    out.append("\n  }\n}\n" if cases else "}\n}\n")
    return "".join(out)


def _block(rows: list[str], indent: int) -> str:
    """A JSON object from its ``key: value`` rows, one per line."""
    if not rows:
        return "{}"
    pad = " " * (indent + 2)
    return "{\n" + pad + (",\n" + pad).join(rows) + "\n" + " " * indent + "}"


def _merge_order(first: list[int], second: list[int]) -> list[int]:
    """Nodes in an order that keeps the relative order of both lists (each node once)."""
    in_first, in_second = set(first), set(second)
    out: list[int] = []
    i = j = 0
    while i < len(first) or j < len(second):
        if i < len(first) and (j >= len(second) or first[i] == second[j] or first[i] not in in_second):
            if j < len(second) and first[i] == second[j]:
                j += 1
            out.append(first[i])
            i += 1
        elif j < len(second) and (i >= len(first) or second[j] not in in_first):
            out.append(second[j])
            j += 1
        else:  # both heads wait for each other: cannot come from one file; fall back to first-list order
            out.append(first[i])
            i += 1
    seen: set[int] = set()
    return [x for x in out if not (x in seen or seen.add(x))]  # type: ignore[func-returns-value]


def _raw_results_number(v: float) -> _Raw:
    return _Raw(repr(float(v)))


def dump_model(model: Model) -> str:
    """Write ``model`` back in the model format, every input number from its kept decimal text.

    Members get inline E, A and alpha (materials and sections are resolved on reading).  Reported
    results are written in model units, tension positive, each value in its shortest round-trip form.
    """
    dim = model.dim
    axes = AXES[:dim]
    ids = model.node_ids
    doc: dict[str, Any] = {"format": MODEL_FORMAT, "version": FORMAT_VERSION}
    if model.title:
        doc["title"] = model.title
    if model.description:
        doc["description"] = model.description
    doc["dimensions"] = dim
    doc["units"] = _units_dict(model.units)
    doc["nodes"] = [
        {"id": ids[i], **{axes[a]: _Raw(model.coords_text[i][a]) for a in range(dim)}} for i in range(model.n_nodes)
    ]
    doc["members"] = [
        {
            "id": model.member_ids[j],
            "start": ids[int(model.conn[j, 0])],
            "end": ids[int(model.conn[j, 1])],
            "E": _Raw(model.E_text[j]),
            "A": _Raw(model.A_text[j]),
            "alpha": _Raw(model.alpha_text[j]),
            **_member_additions(model, j),
        }
        for j in range(model.n_members)
    ]
    restrain: dict[int, list[Any]] = {}
    for r, ni in enumerate(model.restraint_node.tolist()):
        label = model.restraint_label[r]
        item = label if label in AXES else {"direction": [_Raw(t) for t in model.restraint_dir_text[r]]}
        restrain.setdefault(ni, []).append(item)
    springs: dict[int, list[Any]] = {}
    for s, ni in enumerate(model.spring_node.tolist()):
        springs.setdefault(ni, []).append(
            {"direction": [_Raw(t) for t in model.spring_dir_text[s]], "stiffness": _Raw(model.spring_k_text[s])}
        )
    supports = []
    for ni in _merge_order(list(restrain), list(springs)):
        entry: dict[str, Any] = {"node": ids[ni]}
        if ni in restrain:
            entry["restrain"] = restrain[ni]
        if ni in springs:
            entry["springs"] = springs[ni]
        supports.append(entry)
    if supports:
        doc["supports"] = supports
    if model.load_cases:
        doc["load_cases"] = [_dump_case(model, lc) for lc in model.load_cases]
    if model.combinations:
        doc["combinations"] = [
            {"id": c.id, "factors": {model.load_cases[k].id: _Raw(t) for k, _f, t in c.factors}}
            for c in model.combinations
        ]
    if model.results is not None:
        doc["results"] = _dump_embedded_results(model, model.results)
    if model.stiffness is not None:
        st = model.stiffness
        doc["stiffness"] = {
            "dofs": [[ids[ni], AXES[a]] for ni, a in zip(st.dof_node.tolist(), st.dof_axis.tolist(), strict=True)],
            "storage": st.storage,
            "entries": [
                [r, c, _raw_results_number(v)]
                for r, c, v in zip(st.rows.tolist(), st.cols.tolist(), st.values.tolist(), strict=True)
            ],
        }
    return _to_text(doc)


def _member_additions(model: Model, j: int) -> dict[str, Any]:
    """The member's ``unit_weight`` and ``behaviour`` (FORMAT.md additions), where it has them."""
    out: dict[str, Any] = {}
    if model.unit_weight_text and model.unit_weight_text[j]:
        out["unit_weight"] = _Raw(model.unit_weight_text[j])
    elif model.unit_weight.size and not math.isnan(model.unit_weight[j]):
        out["unit_weight"] = _Raw(repr(float(model.unit_weight[j])))
    if model.behaviour.size and model.behaviour[j]:
        out["behaviour"] = BEHAVIOUR_NAMES[int(model.behaviour[j])]
    return out


def _dump_case(model: Model, lc: LoadCase) -> dict[str, Any]:
    ids = model.node_ids
    out: dict[str, Any] = {"id": lc.id}
    if lc.title:
        out["title"] = lc.title
    if lc.load_text:
        out["loads"] = [{"node": ids[n], ("fx", "fy", "fz")[a]: _Raw(t)} for n, a, t in lc.load_text]
    if lc.temperature_text:
        out["temperature_changes"] = [{"member": model.member_ids[j], "delta": _Raw(t)} for j, t in lc.temperature_text]
    if lc.length_error_text:
        out["length_errors"] = [{"member": model.member_ids[j], "value": _Raw(t)} for j, t in lc.length_error_text]
    if lc.settlement_text:
        items: list[dict[str, Any]] = []
        for r, t in lc.settlement_text:
            node = ids[int(model.restraint_node[r])]
            label = model.restraint_label[r]
            if label in AXES:
                items.append({"node": node, label: _Raw(t)})
            else:
                items.append(
                    {"node": node, "direction": [_Raw(x) for x in model.restraint_dir_text[r]], "value": _Raw(t)}
                )
        out["support_displacements"] = items
    if lc.has_self_weight:
        sw: dict[str, Any] = {"factor": _Raw(lc.self_weight_text or repr(float(lc.self_weight)))}
        if lc.self_weight_direction:
            texts = lc.self_weight_direction_text or tuple(repr(float(c)) for c in lc.self_weight_direction)
            sw["direction"] = [_Raw(t) for t in texts]
        out["self_weight"] = sw
    return out


def _dump_embedded_results(model: Model, results: Results) -> dict[str, Any]:
    axes = AXES[: model.dim]

    def comps(arr: FloatArray) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for i, row in enumerate(arr.tolist()):
            c = {axes[a]: _raw_results_number(v) for a, v in enumerate(row) if not math.isnan(v)}
            if c:
                out[model.node_ids[i]] = c
        return out

    cases: dict[str, Any] = {}
    for c in results.cases:
        body: dict[str, Any] = {}
        if c.has_displacements:
            body["displacements"] = comps(c.displacements)
        if c.has_axial_forces:
            body["axial_forces"] = {
                model.member_ids[j]: _raw_results_number(v)
                for j, v in enumerate(c.axial_forces.tolist())
                if not math.isnan(v)
            }
        if c.has_reactions:
            body["reactions"] = comps(c.reactions)
        cases[c.case_id] = body
    out: dict[str, Any] = {}
    if results.source:
        out["source"] = results.source
    out["sign_convention"] = "tension_positive"
    out["units"] = _units_dict(model.units, with_temperature=False)
    out["cases"] = cases
    return out
