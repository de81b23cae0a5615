"""Reported results: ``IfcStructuralResultGroup`` s of the analysis model.

Each result group reports one load case or combination (``ResultForLoadGroup``).  Its
``IfcStructuralPointReaction`` s, each connected to a point connection, carry reactions
(``IfcStructuralLoadSingleForce``: the force the support exerts on the structure) or displacements
(``IfcStructuralLoadSingleDisplacement``), in global axes unless ``LOCAL_COORDS``.  Member axial forces
come from ``IfcStructuralCurveReaction`` s on a curve member: ``ForceX`` of an
``IfcStructuralLoadSingleForce`` (or of every value of an ``IfcStructuralLoadConfiguration``, which
must then agree) in the member's local axes, where x runs along the member; tension is positive.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .links import Links, attr_index
from .loads import _connection_of, _members, _rotation
from .places import Issues
from .units import FORCE, LENGTH, Units, number_text


@dataclass
class PointResult:
    entity: Any
    conn: Any
    kind: str  #: "reactions" or "displacements"
    values: np.ndarray  #: (3,) global, model units
    texts: tuple[bytes | None, bytes | None, bytes | None] | None  #: None for a component not reported


@dataclass
class CaseResult:
    group: Any  #: the result group
    case: Any  #: the load group it reports
    points: list[PointResult] = field(default_factory=list)
    axial: list[tuple[Any, Any, bytes]] = field(default_factory=list)  #: (reaction, member, N text)


_SINGLE = {"IfcStructuralLoadSingleForce": ("reactions", "Force", FORCE, "FORCEUNIT")}
_SINGLE["IfcStructuralLoadSingleDisplacement"] = ("displacements", "Displacement", LENGTH, "LENGTHUNIT")


def _axial(applied: Any, item: Any, issues: Issues) -> float | None:
    if applied.is_a() in ("IfcStructuralLoadSingleForce", "IfcStructuralLoadSingleForceWarping"):
        return float(applied.get_argument(1) or 0.0)  # ForceX, after Name
    if applied.is_a("IfcStructuralLoadConfiguration"):
        values = [float(v.ForceX or 0.0) for v in applied.Values or () if v.is_a("IfcStructuralLoadSingleForce")]
        if not values:
            issues.problem(item, "its IfcStructuralLoadConfiguration holds no IfcStructuralLoadSingleForce")
            return None
        if max(values) - min(values) > 1e-9 * max(map(abs, values)):
            issues.problem(item, "the axial force varies along the member; a truss member carries one force")
            return None
        return values[0]
    issues.problem(item, f"its {applied.is_a()} is not a force")
    return None


def read_results(
    model: Any, file: Any, units: Units, placements: Any, issues: Issues, links: Links
) -> list[CaseResult]:
    groups = list(model.HasResults or ())
    if len(file.by_type("IfcStructuralAnalysisModel")) == 1:
        known = {g.id() for g in groups}
        groups += [g for g in file.by_type("IfcStructuralResultGroup") if g.id() not in known]
    out: list[CaseResult] = []
    applied_i = attr_index(file, "IfcStructuralActivity", "AppliedLoad")
    for g in sorted(groups, key=lambda g: g.id()):
        case = g.ResultForLoadGroup
        if case is None:
            issues.problem(g, "reports no load case (ResultForLoadGroup is empty)")
            continue
        res = CaseResult(g, case)
        for item, _rel in _members(g, links):
            kind_of_item = item.is_a()
            if kind_of_item not in ("IfcStructuralPointReaction", "IfcStructuralCurveReaction"):
                continue
            applied = item.get_argument(applied_i)
            if applied is None:
                continue
            if kind_of_item == "IfcStructuralPointReaction":
                spec = _SINGLE.get(applied.is_a())
                conn = _connection_of(item, links)
                if spec is None or conn is None:
                    issues.problem(item, "is not a force or displacement on a point connection")
                    continue
                kind, prefix, dim, unit_type = spec
                scale = units.scale(dim, unit_type)
                given = [getattr(applied, f"{prefix}{a}") for a in "XYZ"]
                raw = [float(v or 0.0) for v in given]
                rot = _rotation(item, placements)
                if rot is None:
                    texts = tuple(None if w is None else number_text(v, scale) for w, v in zip(given, raw, strict=True))
                    vals = np.array([0.0 if t is None else float(t) for t in texts])
                    res.points.append(PointResult(item, conn, kind, vals, texts))  # type: ignore[arg-type]
                else:
                    res.points.append(PointResult(item, conn, kind, rot @ np.array(raw) * float(scale), None))
            else:
                member = _connection_of(item, links)
                n = _axial(applied, item, issues)
                if member is None:
                    issues.problem(item, "is not connected to a member (IfcRelConnectsStructuralActivity)")
                elif n is not None:
                    res.axial.append((item, member, number_text(n, units.scale(FORCE, "FORCEUNIT"))))
        out.append(res)
    return out
