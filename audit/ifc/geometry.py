"""Joints: the vertex geometry of each ``IfcStructuralPointConnection``, placed in the model's global axes.

A connection's position is the ``IfcCartesianPoint`` of the ``IfcVertexPoint`` in its topology
representation, carried through its ``ObjectPlacement`` (a chain of ``IfcLocalPlacement``).  When the
placement is the identity (the usual case), the coordinates keep their stored text exactly; otherwise
they are transformed in float64 and written as shortest round-trip text.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import ifcopenshell.util.placement as placement_util
import numpy as np

from .links import attr_index
from .places import Issues, label
from .units import number_text

_EYE = np.eye(4)


@dataclass
class Joint:
    entity: Any
    name: str
    texts: tuple[bytes, bytes, bytes]  #: x, y, z in model length units, as decimal text
    xyz: np.ndarray  #: (3,) float64, the same values


class Placements:
    """4x4 matrices of object placements, computed once per placement entity."""

    def __init__(self) -> None:
        self._cache: dict[int, np.ndarray] = {}

    def matrix(self, placement: Any) -> np.ndarray:
        if placement is None:
            return _EYE
        key = placement.id()
        m = self._cache.get(key)
        if m is None:
            try:
                m = np.asarray(placement_util.get_local_placement(placement), dtype=np.float64)
            except Exception:  # a placement ifcopenshell cannot evaluate: treated by the caller as unreadable
                m = np.full((4, 4), np.nan)
            self._cache[key] = m
        return m


def axes_of(a2p: Any) -> np.ndarray:
    """(3, 3) rows: the unit x, y, z axes of an ``IfcAxis2Placement3D`` (its rotation only)."""
    m = np.asarray(placement_util.get_axis2placement(a2p), dtype=np.float64)
    return m[:3, :3].T.copy()


def origin_of(a2p: Any) -> np.ndarray:
    m = np.asarray(placement_util.get_axis2placement(a2p), dtype=np.float64)
    return m[:3, 3].copy()


class Positions:
    """Attribute positions used for every joint (read by index: named access costs a lookup per call)."""

    def __init__(self, file: Any) -> None:
        self.name = attr_index(file, "IfcStructuralPointConnection", "Name")
        self.placement = attr_index(file, "IfcStructuralPointConnection", "ObjectPlacement")
        self.representation = attr_index(file, "IfcStructuralPointConnection", "Representation")
        self.representations = attr_index(file, "IfcProductDefinitionShape", "Representations")
        self.items = attr_index(file, "IfcTopologyRepresentation", "Items")
        self.geometry = attr_index(file, "IfcVertexPoint", "VertexGeometry")


def _vertex_point(entity: Any, pos: Positions) -> Any:
    rep = entity.get_argument(pos.representation)
    if rep is None or not rep.is_a("IfcProductDefinitionShape"):
        return None
    for r in rep.get_argument(pos.representations) or ():
        for item in r.get_argument(pos.items) or ():
            if item.is_a() == "IfcVertexPoint":
                return item.get_argument(pos.geometry)
    return None


def read_joint(
    conn: Any, name: str, scale: Fraction, placements: Placements, issues: Issues, pos: Positions
) -> Joint | None:
    point = _vertex_point(conn, pos)
    if point is None or point.is_a() != "IfcCartesianPoint":
        issues.problem(
            conn, "has no vertex geometry (an IfcVertexPoint with an IfcCartesianPoint in its Representation)"
        )
        return None
    coords = point.get_argument(0)
    if not coords or len(coords) > 3:
        issues.problem(conn, f"its vertex point {label(point)} has no usable Coordinates")
        return None
    raw = tuple(float(c) for c in coords) + (0.0,) * (3 - len(coords))
    m = placements.matrix(conn.get_argument(pos.placement))
    if not np.all(np.isfinite(m)):
        issues.problem(conn, "its ObjectPlacement cannot be evaluated")
        return None
    if m is _EYE or np.array_equal(m, _EYE):
        values = raw
    else:
        p = m[:3, :3] @ np.array(raw) + m[:3, 3]
        values = tuple(float(v) for v in p)
    texts = tuple(number_text(v, scale) for v in values)
    return Joint(conn, name, texts, np.array([float(t) for t in texts]))  # type: ignore[arg-type]
