"""Load cases and combinations: ``IfcStructuralLoadGroup`` / ``IfcStructuralLoadCase`` and their point actions.

A load case is a group of type ``LOAD_CASE`` (or an ``IfcStructuralLoadCase``); its loads are the
``IfcStructuralPointAction`` s with an ``IfcStructuralLoadSingleForce`` assigned to it
(``IfcRelAssignsToGroup``), directly or through nested ``LOAD_GROUP`` s, each acting on the point
connection it is connected to (``IfcRelConnectsStructuralActivity``).  A combination is a group of
type ``LOAD_COMBINATION``; its factors come from ``IfcRelAssignsToGroupByFactor`` (1 for a plain
assignment), and a combination nested in a combination is flattened with the factors multiplied.

Cases are found through the analysis model's ``LoadedBy`` (which, per the standard, may list only the
combinations), through the combinations, and by type: a case whose actions act on the model's
connections belongs to it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .links import Links
from .places import Issues
from .units import FORCE, LENGTH, TEMPERATURE, Units, number_text


@dataclass
class Action:
    entity: Any
    conn: Any  #: the point connection it acts on (the curve member, for a temperature change)
    force: np.ndarray  #: (3,) global components, model force (or length, for a settlement) units
    texts: tuple[bytes, bytes, bytes] | None  #: exact texts when no rotation was applied
    kind: str = "load"  #: "load", "settlement" (a prescribed support displacement) or "temperature"


@dataclass
class Case:
    entity: Any
    actions: list[Action] = field(default_factory=list)
    #: (3,) global factors of the self weight (IfcStructuralLoadCase.SelfWeightCoefficients), or None
    self_weight: np.ndarray | None = None


@dataclass
class Combo:
    entity: Any
    factors: list[tuple[Any, bytes, Any]] = field(default_factory=list)  #: (case group, factor text, rel)


@dataclass
class LoadRead:
    cases: list[Case] = field(default_factory=list)
    combos: list[Combo] = field(default_factory=list)
    ignored: dict[str, int] = field(default_factory=dict)  #: entity kind -> count not read
    moments: int = 0
    flattened: int = 0


def _type(group: Any) -> str:
    t = str(group.PredefinedType or "")
    if group.is_a("IfcStructuralLoadCase") and t in ("", "NOTDEFINED", "USERDEFINED"):
        return "LOAD_CASE"
    return t


def _members(group: Any, links: Links) -> list[tuple[Any, Any]]:
    """(object, relationship) assigned to a group."""
    return links.group_objects.get(group.id(), [])


def _factor(rel: Any) -> float:
    return float(rel.Factor) if rel.is_a("IfcRelAssignsToGroupByFactor") else 1.0


def _connection_of(activity: Any, links: Links) -> Any:
    return links.activity_target.get(activity.id())


def _rotation(activity: Any, placements: Any) -> np.ndarray | None:
    if str(activity.GlobalOrLocal) != "LOCAL_COORDS":
        return None
    m = placements.matrix(activity.ObjectPlacement)
    r = m[:3, :3]
    return None if np.array_equal(r, np.eye(3)) else r


def read_action(act: Any, units: Units, placements: Any, issues: Issues, load: LoadRead, links: Links) -> Action | None:
    """A point force, a prescribed support displacement or a member's uniform temperature change."""
    applied = act.AppliedLoad
    target = _connection_of(act, links)
    if act.is_a("IfcStructuralCurveAction") and applied is not None and applied.is_a("IfcStructuralLoadTemperature"):
        if target is None or not target.is_a("IfcStructuralCurveMember"):
            issues.problem(act, "acts on no curve member (IfcRelConnectsStructuralActivity)")
            return None
        if applied.DeltaTY or applied.DeltaTZ:
            load.ignored["temperature gradients (DeltaTY, DeltaTZ)"] = load.ignored.get("temperature gradients", 0) + 1
        text = number_text(
            float(applied.DeltaTConstant or 0.0), units.scale(TEMPERATURE, "THERMODYNAMICTEMPERATUREUNIT")
        )
        units.uses_temperature = True
        return Action(act, target, np.array([float(text), 0.0, 0.0]), (text, b"0", b"0"), "temperature")
    spec = {"IfcStructuralLoadSingleForce": ("load", "Force", FORCE, "FORCEUNIT"),
            "IfcStructuralLoadSingleDisplacement": ("settlement", "Displacement", LENGTH, "LENGTHUNIT")}  # fmt: skip
    kind_of = next((v for k, v in spec.items() if applied is not None and applied.is_a(k)), None)
    if not act.is_a("IfcStructuralPointAction") or kind_of is None:
        kind = f"{act.is_a()} with {applied.is_a() if applied is not None else 'no load'}"
        load.ignored[kind] = load.ignored.get(kind, 0) + 1
        return None
    if target is None or not target.is_a("IfcStructuralPointConnection"):
        issues.problem(act, "acts on no point connection (IfcRelConnectsStructuralActivity)")
        return None
    kind, prefix, dim, unit_type = kind_of
    scale = units.scale(dim, unit_type)
    raw = [float(getattr(applied, f"{prefix}{a}") or 0.0) for a in "XYZ"]
    rot_names = ("Moment",) if kind == "load" else ("RotationalDisplacementR",)
    if any(getattr(applied, f"{rot_names[0]}{a}", None) for a in "XYZ"):
        load.moments += 1
    rot = _rotation(act, placements)
    if rot is None:
        texts = tuple(number_text(v, scale) for v in raw)
        return Action(act, target, np.array([float(t) for t in texts]), texts, kind)  # type: ignore[arg-type]
    return Action(act, target, rot @ np.array(raw) * float(scale), None, kind)


def read_loads(
    model: Any, file: Any, joints: set[int], units: Units, placements: Any, issues: Issues, links: Links
) -> LoadRead:
    load = LoadRead()
    top = list(model.LoadedBy or ())
    single = len(file.by_type("IfcStructuralAnalysisModel")) == 1
    groups = file.by_type("IfcStructuralLoadGroup")

    def actions_of(group: Any, seen: set[int]) -> list[Any]:
        acts: list[Any] = []
        for obj, _rel in _members(group, links):
            if obj.is_a("IfcStructuralAction"):
                acts.append(obj)
            elif (
                obj.is_a("IfcStructuralLoadGroup")
                and _type(obj) not in ("LOAD_CASE", "LOAD_COMBINATION")
                and obj.id() not in seen
            ):
                seen.add(obj.id())
                acts.extend(actions_of(obj, seen))
        return acts

    def acts_on_model(group: Any) -> bool:
        for act in actions_of(group, {group.id()}):
            conn = _connection_of(act, links)
            if conn is not None and conn.id() in joints:
                return True
        return False

    chosen: dict[int, Any] = {}
    for g in top:
        chosen[g.id()] = g
    for g in groups:
        t = _type(g)
        if t == "LOAD_CASE" and g.id() not in chosen and (single or acts_on_model(g)):
            chosen[g.id()] = g
    # the cases and combinations reached from the combinations
    stack = [g for g in chosen.values() if _type(g) == "LOAD_COMBINATION"]
    while stack:
        g = stack.pop()
        for obj, _rel in _members(g, links):
            if obj.is_a("IfcStructuralLoadGroup") and obj.id() not in chosen:
                chosen[obj.id()] = obj
                if _type(obj) == "LOAD_COMBINATION":
                    stack.append(obj)
    if single:
        for g in groups:
            if _type(g) == "LOAD_COMBINATION" and g.id() not in chosen:
                chosen[g.id()] = g
    ordered = sorted(chosen.values(), key=lambda g: g.id())
    for g in ordered:
        t = _type(g)
        if t == "LOAD_COMBINATION":
            combo = Combo(g)
            for case, factor, rel in _flatten(g, 1.0, set(), load, issues, links):
                combo.factors.append((case, repr(factor).encode("ascii"), rel))
            load.combos.append(combo)
        elif t == "LOAD_CASE" or actions_of(g, {g.id()}):
            case = Case(g)
            coefficients = getattr(g, "SelfWeightCoefficients", None)
            if coefficients and any(coefficients):
                case.self_weight = np.array([float(c) for c in coefficients], dtype=np.float64)
            for act in actions_of(g, {g.id()}):
                a = read_action(act, units, placements, issues, load, links)
                if a is None:
                    continue
                if a.kind != "temperature" and a.conn.id() not in joints:
                    issues.problem(act, "acts on a connection that is not a joint of the analysis model")
                    continue
                case.actions.append(a)
            load.cases.append(case)
    return load


def _flatten(
    group: Any, outer: float, seen: set[int], load: LoadRead, issues: Issues, links: Links
) -> list[tuple[Any, float, Any]]:
    out: list[tuple[Any, float, Any]] = []
    if group.id() in seen:
        issues.problem(group, "is a combination that contains itself")
        return out
    seen = seen | {group.id()}
    for obj, rel in _members(group, links):
        if not obj.is_a("IfcStructuralLoadGroup"):
            continue
        f = outer * _factor(rel)
        if _type(obj) == "LOAD_COMBINATION":
            load.flattened += 1
            out.extend(_flatten(obj, f, seen, load, issues, links))
        else:
            out.append((obj, f, rel))
    return out
