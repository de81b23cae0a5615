"""The neutral JSON tree of an IFC model, and the format's own meaning stage run over it.

The tree is exactly what :mod:`audit.exchange.jsonread` makes of a model file (numbers as decimal
``bytes``), so every rule of the format (ids unique, lengths non-zero, E and A positive, supports
independent, combinations naming known cases, results keyed by known ids ...) applies to an IFC
model unchanged.  :class:`~audit.ifc.places.Places` maps each JSON path back to its entity, so a
problem found there names ``#1234 IfcStructuralCurveMember 'D3'``.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..errors import InputError, Problem
from ..exchange.build import _build_model
from ..exchange.bulk import _Columns
from ..exchange.jsonread import _Json
from ..exchange.problems import _Problems
from ..exchange.shape import _check_document
from ..model import AXES
from ..sources import SourceNote, SourceRead
from .geometry import Joint, axes_of, origin_of
from .loads import LoadRead
from .members import MemberRead
from .notes import NOTE_ASSIGNMENT, NOTE_PIN_JOINTED, NOTE_PLANE
from .places import Issues, Places, label
from .plane import SPACE, Frame, across, coordinate_planes, frame_of, plane_frame
from .results import CaseResult
from .supports import Support
from .units import Units

_NAMES = ("X-Y", "X-Z", "Y-Z")


def _decide_frame(model: Any, joints: dict[int, Joint], supports: list[Support], loads: LoadRead, issues: Issues):
    points = np.array([j.xyz for j in joints.values()]).reshape(-1, 3)
    if str(model.PredefinedType) == "IN_PLANE_LOADING_2D":
        plane = model.OrientationOf2DPlane
        if plane is None:
            frame = plane_frame(2, float(points[0, 2]) if len(points) else 0.0)
            why = "an IN_PLANE_LOADING_2D model without OrientationOf2DPlane: the global X-Y plane"
        else:
            axes = axes_of(plane)
            frame = frame_of(axes[:2], origin_of(plane))
            why = "an IN_PLANE_LOADING_2D model, in the plane of its OrientationOf2DPlane"
        normal = np.cross(frame.rows[0], frame.rows[1])
        size = float(np.max(np.abs(points))) if len(points) else 1.0
        for j in joints.values():
            if abs(float((j.xyz - frame.origin) @ normal)) > 1e-9 * (size or 1.0):
                issues.problem(j.entity, "lies outside the plane of the IN_PLANE_LOADING_2D analysis model")
        issues.note(NOTE_PLANE, f"read as a plane truss ({why}; {frame.words})", model)
        return frame
    normals = coordinate_planes(points)
    if not normals:
        issues.note(NOTE_PLANE, "read as a space truss: the joints do not lie in one coordinate plane", model)
        return SPACE
    # joints on one line lie in two coordinate planes: prefer one with nothing across it, then one where
    # what is across it is restrained
    verdicts = [(axis, *_plane_verdict(axis, joints, supports, loads)) for axis in normals]
    for wanted in ("clean", "restrained"):
        for axis, verdict, _why in verdicts:
            if verdict == wanted:
                frame = plane_frame(axis, float(points[0, axis]) if len(points) else 0.0)
                issues.note(
                    NOTE_PLANE,
                    f"read as a plane truss: the joints lie in the {_NAMES[2 - axis]} plane and every translation "
                    f"across it is restrained or unloaded ({frame.words})",
                    model,
                )
                return frame
    issues.note(NOTE_PLANE, f"read as a space truss: {verdicts[0][2]}", model)
    return SPACE


def _plane_verdict(axis: int, joints: dict[int, Joint], supports: list[Support], loads: LoadRead) -> tuple[str, str]:
    """``clean`` (nothing acts across the plane), ``restrained`` (only on joints restrained across it) or
    ``space`` (with the reason)."""
    normal = np.zeros(3)
    normal[axis] = 1.0
    plane_name = _NAMES[2 - axis]
    restrained_across: set[int] = set()
    for s in supports:
        for d in [*s.restrain, *(d for d, _ in s.springs)]:
            out, inside = across(d, normal)
            if out and inside:
                where = label(s.entity)
                return (
                    "space",
                    f"the joints lie in the {plane_name} plane, but a support direction at {where} is inclined to it",
                )
        if any(across(d, normal)[0] for d in [*s.restrain, *(d for d, _ in s.springs)]):
            restrained_across.add(s.entity.id())
    for case in loads.cases:
        for a in case.actions:
            if a.kind != "temperature" and across(a.force, normal)[0] and a.conn.id() not in restrained_across:
                why = (
                    f"the joints lie in the {plane_name} plane, but {label(a.entity)} loads {label(a.conn)} across "
                    "it and the joint is not restrained there"
                )
                return "space", why
    weight = [c for c in loads.cases if c.self_weight is not None and across(c.self_weight, normal)[0]]
    if weight and len(restrained_across) < len(joints):
        why = (
            f"the joints lie in the {plane_name} plane, but the self weight of {label(weight[0].entity)} acts "
            "across it and not every joint is restrained there"
        )
        return "space", why
    return ("restrained" if restrained_across else "clean"), ""


def _direction(frame: Frame, d: np.ndarray) -> Any:
    """A support direction in model axes: an axis name when it is one, else ``{"direction": [...]}``."""
    comps = frame.rows @ d
    nz = np.flatnonzero(np.abs(comps) > 1e-15)
    if len(nz) == 1 and abs(abs(float(comps[nz[0]])) - 1.0) < 1e-15:
        return AXES[int(nz[0])]
    return {"direction": [repr(float(c)).encode("ascii") for c in comps]}


def _in_frame(frame: Frame, d: np.ndarray) -> bool:
    """Whether a support direction acts in the model's axes at all (a plane truss drops those across it)."""
    return bool(np.linalg.norm(frame.rows @ d) > 1e-12)


def assemble(
    file: Any,
    model: Any,
    joints: dict[int, Joint],
    mem: MemberRead,
    rigid_ends: list[Any],
    supports: list[Support],
    loads: LoadRead,
    results: list[CaseResult],
    units: Units,
    issues: Issues,
) -> SourceRead:
    frame = _decide_frame(model, joints, supports, loads, issues)
    issues.raise_if_any()
    places = Places(model)
    dim = frame.dim
    doc: dict[str, Any] = {"format": "truss-audit-model", "version": 1}
    doc["title"] = model.Name or ""
    if model.Description:
        doc["description"] = model.Description
    doc["dimensions"] = dim
    doc["units"] = {"length": units.length, "force": units.force}
    nodes = []
    for i, j in enumerate(joints.values()):
        node: dict[str, Any] = {"id": j.name}
        node.update(zip(AXES[:dim], frame.point(j.xyz, j.texts), strict=True))
        nodes.append(node)
        places.add(("nodes", i), j.entity)
    doc["nodes"] = nodes
    if mem.materials:
        doc["materials"] = mem.materials
        for name, e in mem.material_entity.items():
            places.add(("materials", name), e)
    if mem.sections:
        doc["sections"] = mem.sections
        for name, e in mem.section_entity.items():
            places.add(("sections", name), e)
    doc["members"] = mem.rows
    for i, e in enumerate(mem.entities):
        places.add(("members", i), e)
    joint_name = {cid: j.name for cid, j in joints.items()}
    member_name = {e.id(): row["id"] for e, row in zip(mem.entities, mem.rows, strict=True)}
    support_of = {s.entity.id(): s for s in supports}
    if units.uses_temperature:
        doc["units"]["temperature"] = units.temperature
    sups: list[dict[str, Any]] = []
    for s in supports:
        entry: dict[str, Any] = {"node": joint_name[s.entity.id()]}
        restrain = [_direction(frame, d) for d in s.restrain if _in_frame(frame, d)]
        springs = []
        for d, stiff in s.springs:
            if _in_frame(frame, d):
                where = _direction(frame, d)
                springs.append(
                    {"axis": where, "stiffness": stiff} if isinstance(where, str) else {**where, "stiffness": stiff}
                )
        if restrain:
            entry["restrain"] = restrain
        if springs:
            entry["springs"] = springs
        if restrain or springs:
            places.add(("supports", len(sups)), s.entity)
            sups.append(entry)
    if sups:
        doc["supports"] = sups
    cases = []
    for k, case in enumerate(loads.cases):
        lc: dict[str, Any] = {"id": case.entity.Name or f"#{case.entity.id()}"}
        if not case.entity.Name:
            issues.problem(case.entity, "has no Name (the load case's id)")
        if case.entity.Description:
            lc["title"] = case.entity.Description
        parts: dict[str, list[dict[str, Any]]] = {"loads": [], "support_displacements": [], "temperature_changes": []}
        for a in case.actions:
            if a.kind == "temperature" and a.conn.id() not in member_name:
                issues.problem(a.entity, f"acts on {label(a.conn)}, which is not a member of the analysis model")
                continue
            if a.kind == "temperature":
                key, row = "temperature_changes", {"member": member_name[a.conn.id()], "delta": a.texts[0]}  # type: ignore[index]
            elif a.kind == "load":
                comps = frame.vector(a.force, a.texts)
                key, row = "loads", {"node": joint_name[a.conn.id()]}
                row.update((f"f{ax}", c) for ax, c in zip(AXES[:dim], comps, strict=True) if float(c) != 0.0)
            else:
                for row in _settlements(a, frame, support_of.get(a.conn.id()), joint_name, issues):
                    places.add(
                        ("load_cases", k, "support_displacements", len(parts["support_displacements"])), a.entity
                    )
                    parts["support_displacements"].append(row)
                continue
            places.add(("load_cases", k, key, len(parts[key])), a.entity)
            parts[key].append(row)
        lc.update((key, rows) for key, rows in parts.items() if rows)
        if case.self_weight is not None:
            lc["self_weight"] = _self_weight(case, frame, issues)
        places.add(("load_cases", k), case.entity)
        cases.append(lc)
    if cases:
        doc["load_cases"] = cases
    combos = []
    for k, combo in enumerate(loads.combos):
        cid = combo.entity.Name or f"#{combo.entity.id()}"
        if not combo.entity.Name:
            issues.problem(combo.entity, "has no Name (the combination's id)")
        factors: dict[str, bytes] = {}
        for case_group, text, rel in combo.factors:
            key = case_group.Name or f"#{case_group.id()}"
            if key in factors:  # the same case twice (through nested combinations): factors add
                text = repr(float(factors[key]) + float(text)).encode("ascii")
            factors[key] = text
            places.add(("combinations", k, "factors", key), rel)
        places.add(("combinations", k), combo.entity)
        combos.append({"id": cid, "factors": factors})
    if combos:
        doc["combinations"] = combos
    if loads.flattened:
        issues.note(NOTE_ASSIGNMENT, f"{loads.flattened} combination(s) nested in combinations are flattened", model)
    if loads.moments:
        issues.note(NOTE_PIN_JOINTED, f"moments and rotations of {loads.moments} action(s) are ignored", model)
    if results:
        doc["results"] = _results_tree(results, frame, joint_name, member_name, places, issues)
    rigid = {m.id(): m for m in [*mem.rigid, *rigid_ends]}
    if rigid:
        first = next(iter(rigid.values()))
        issues.note(
            NOTE_PIN_JOINTED,
            f"{len(rigid)} member(s) are meant to carry bending (rigid joints, e.g. {label(first)}): the model is "
            "audited as a pin-jointed truss, so its bending results are not checked",
            first,
        )
    rotations = [s for s in supports if s.rotations]
    if rotations:
        issues.note(
            NOTE_PIN_JOINTED,
            f"rotational conditions at {len(rotations)} support(s) are ignored (a pin-jointed truss has no rotations)",
            rotations[0].entity,
        )
    issues.raise_if_any()
    return _meaning(doc, places, issues)


def _self_weight(case: Any, frame: Frame, issues: Issues) -> dict[str, Any]:
    """``SelfWeightCoefficients`` (factors of the weight along global X, Y, Z) as a factor and a direction."""
    c = case.self_weight
    factor = float(np.linalg.norm(c))
    inside = frame.rows @ c
    if abs(float(np.linalg.norm(inside)) - factor) > 1e-12 * factor:
        issues.problem(case.entity, "its SelfWeightCoefficients act across the plane of the plane truss")
    return {
        "factor": repr(factor).encode("ascii"),
        "direction": [repr(float(v / factor)).encode("ascii") for v in inside],
    }


def _settlements(
    a: Any, frame: Frame, support: Support | None, joint_name: dict[int, str], issues: Issues
) -> list[dict[str, Any]]:
    """A prescribed displacement of a support, along each of its restraints (none elsewhere)."""
    node = joint_name[a.conn.id()]
    dirs = [d for d in (support.restrain if support is not None else []) if _in_frame(frame, d)]
    if not dirs:
        issues.problem(a.entity, f"prescribes a displacement of {label(a.conn)}, which is not restrained")
        return []
    rows: list[dict[str, Any]] = []
    comps = frame.vector(a.force, a.texts)
    free = a.force.copy()
    for d in dirs:
        where = _direction(frame, d)
        if isinstance(where, str):
            rows.append({"node": node, where: comps[AXES.index(where)]})
        else:
            rows.append({"node": node, **where, "value": repr(float(a.force @ d)).encode("ascii")})
        free = free - (free @ d) * d
    if float(np.linalg.norm(frame.rows @ free)) > 1e-12 * (float(np.linalg.norm(a.force)) or 1.0):
        issues.problem(a.entity, f"prescribes a displacement of {label(a.conn)} along a direction it is free in")
    return [r for r in rows if float(next(v for k, v in r.items() if k in AXES or k == "value")) != 0.0] or rows[:1]


def _results_tree(
    results: list[CaseResult],
    frame: Frame,
    joint_name: dict[int, str],
    member_name: dict[int, str],
    places: Places,
    issues: Issues,
) -> dict[str, Any]:
    out: dict[str, Any] = {}
    dim = frame.dim
    for res in results:
        cid = res.case.Name or f"#{res.case.id()}"
        if cid in out:
            issues.problem(res.group, f"reports {cid!r} again (another result group reports it too)")
            continue
        body: dict[str, Any] = {}
        places.add(("results", "cases", cid), res.group)
        for p in res.points:
            node = joint_name.get(p.conn.id())
            if node is None:
                issues.problem(p.entity, f"is on {label(p.conn)}, which is not a joint of the analysis model")
                continue
            comps = {a: v for a, v in zip(AXES[:dim], frame.vector(p.values, p.texts), strict=True) if v is not None}
            part = body.setdefault(p.kind, {})
            if node in part:
                issues.problem(p.entity, f"gives {p.kind} of {node!r} a second time in one result group")
                continue
            part[node] = comps
            places.add(("results", "cases", cid, p.kind, node), p.entity)
        for item, member, text in res.axial:
            mid = member_name.get(member.id())
            if mid is None:
                issues.problem(item, f"is on {label(member)}, which is not a member of the analysis model")
                continue
            body.setdefault("axial_forces", {})[mid] = text
            places.add(("results", "cases", cid, "axial_forces", mid), item)
        out[cid] = body
    return {"source": "IfcStructuralResultGroup", "cases": out}


def _meaning(doc: dict[str, Any], places: Places, issues: Issues) -> SourceRead:
    parsed = _Json(doc, [], 0)
    probs = _Problems()
    cols = _Columns()
    _check_document(parsed, "model", probs, cols)
    model = None
    if not probs.blocking:
        model = _build_model(doc, probs, cols)
    if probs or model is None:
        found = [Problem(label(places.entity(path)), msg) for path, msg in probs.items]
        raise InputError(list(dict.fromkeys(found)), issues.file)
    notes = tuple(SourceNote(code, message, place) for code, message, place in issues.notes)
    return SourceRead(model=model, results=model.results, notes=notes, kind="ifc")
