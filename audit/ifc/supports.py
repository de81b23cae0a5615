"""Supports: the ``IfcBoundaryNodeCondition`` applied to a point connection.

A translational condition that is ``True`` (fixed) is a restraint, a stiffness value a spring, ``False``
or a zero stiffness a free direction.  The directions are the global axes, or the axes of the
connection's own ``ConditionCoordinateSystem`` (an inclined restraint or spring).  Rotational
conditions do not act on a pin-jointed truss: they are counted for a note, and otherwise ignored.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .geometry import axes_of
from .places import Issues
from .units import STIFFNESS, Units, number_text


@dataclass
class Support:
    entity: Any  #: the connection
    condition: Any
    restrain: list[np.ndarray] = field(default_factory=list)  #: global unit directions (3,)
    springs: list[tuple[np.ndarray, bytes]] = field(default_factory=list)  #: direction, stiffness text
    rotations: bool = False


def _kind(v: Any) -> tuple[str, Any]:
    if v is None:
        return "free", None
    if hasattr(v, "is_a"):
        inner = v.wrappedValue
        if v.is_a("IfcBoolean") or v.is_a("IfcLogical") or isinstance(inner, bool):
            return ("fixed" if inner is True else "free"), None
        v = inner
    if isinstance(v, bool):
        return ("fixed" if v else "free"), None
    if isinstance(v, (int, float)):
        return "spring", float(v)
    return "unknown", v


def read_support(conn: Any, units: Units, issues: Issues) -> Support | None:
    cond = conn.AppliedCondition
    if cond is None:
        return None
    if not cond.is_a("IfcBoundaryNodeCondition"):
        issues.problem(conn, f"its AppliedCondition is an {cond.is_a()}, not an IfcBoundaryNodeCondition")
        return None
    system = getattr(conn, "ConditionCoordinateSystem", None)
    axes = axes_of(system) if system is not None else np.eye(3)
    sup = Support(conn, cond)
    scale = units.scale(STIFFNESS, "LINEARSTIFFNESSUNIT")
    for i, a in enumerate("XYZ"):
        # IFC2X3 names them LinearStiffness and has no "fixed" flag: its values are stiffnesses (springs)
        kind, value = _kind(getattr(cond, f"TranslationalStiffness{a}", getattr(cond, f"LinearStiffness{a}", None)))
        if kind == "fixed":
            sup.restrain.append(axes[i])
        elif kind == "spring":
            if value < 0:
                issues.problem(cond, f"TranslationalStiffness{a} is negative ({value!r})")
            elif value > 0:
                sup.springs.append((axes[i], number_text(value, scale)))
        elif kind == "unknown":
            issues.problem(cond, f"TranslationalStiffness{a} is neither a boolean nor a stiffness")
        rk, rv = _kind(getattr(cond, f"RotationalStiffness{a}", None))
        if rk == "fixed" or (rk == "spring" and rv):
            sup.rotations = True
    return sup
