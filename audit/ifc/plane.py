"""Plane or space truss: which global axes the model's x, y (and z) are.

A model of type ``IN_PLANE_LOADING_2D`` is a plane truss in the plane of its ``OrientationOf2DPlane``
(the global X-Y plane when it has none).  Any other model is a plane truss when its joints all lie in
one coordinate plane (X-Y, X-Z or Y-Z, tried in that order), every support direction lies in that
plane or across it, and every load across the plane acts on a joint restrained across it: the
out-of-plane translations are then all restrained or unloaded, and the plane reading loses nothing.
Otherwise it is a space truss.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

_AXES = ("X", "Y", "Z")
_TOL = 1e-12


@dataclass(frozen=True)
class Frame:
    """How global components become the model's: ``rows`` (dim, 3) projects a global vector."""

    dim: int
    rows: np.ndarray  #: (dim, 3) float64
    origin: np.ndarray  #: (3,)
    #: per model axis, (global axis index, sign) when the axis is a global one, for exact texts
    picks: tuple[tuple[int, int], ...] | None
    words: str  #: "x = X, y = Z" and the like

    def vector(self, v: np.ndarray, texts: tuple[bytes | None, ...] | None) -> list[bytes | None]:
        """A global vector (force, displacement) in model components, as decimal texts (None: not given)."""
        if self.picks is not None and texts is not None:
            return [None if texts[i] is None else _signed(texts[i], s) for i, s in self.picks]  # type: ignore[arg-type]
        return [repr(float(c)).encode("ascii") for c in self.rows @ v]

    def point(self, p: np.ndarray, texts: tuple[bytes, ...]) -> list[bytes]:
        if self.picks is not None and not np.any(self.rows @ self.origin):
            return [_signed(texts[i], s) for i, s in self.picks]
        return [repr(float(c)).encode("ascii") for c in self.rows @ (p - self.origin)]


def _signed(text: bytes, sign: int) -> bytes:
    if sign > 0:
        return text
    return text[1:] if text.startswith(b"-") else b"-" + text


def _picks(rows: np.ndarray) -> tuple[tuple[int, int], ...] | None:
    out = []
    for r in rows:
        nz = np.flatnonzero(r)
        if len(nz) != 1 or abs(r[nz[0]]) != 1.0:
            return None
        out.append((int(nz[0]), int(np.sign(r[nz[0]]))))
    return tuple(out)


def frame_of(rows: np.ndarray, origin: np.ndarray) -> Frame:
    picks = _picks(rows)
    names = "xyz"
    if picks is not None:
        words = ", ".join(f"{names[k]} = {'-' if s < 0 else ''}{_AXES[i]}" for k, (i, s) in enumerate(picks))
    else:
        words = ", ".join(f"{names[k]} along ({', '.join(f'{c:.6g}' for c in r)})" for k, r in enumerate(rows))
    return Frame(len(rows), rows, origin, picks, words)


SPACE = frame_of(np.eye(3), np.zeros(3))


def coordinate_planes(points: np.ndarray) -> list[int]:
    """The global axes (Z first, then Y, X) along which all points share a coordinate: the normals of the
    coordinate planes they lie in (two for points on one line)."""
    if len(points) == 0:
        return [2]
    size = float(np.max(np.abs(points))) or 1.0
    return [axis for axis in (2, 1, 0) if np.ptp(points[:, axis]) <= _TOL * size]


def plane_frame(normal_axis: int, offset: float) -> Frame:
    keep = [a for a in range(3) if a != normal_axis]
    rows = np.zeros((2, 3))
    rows[0, keep[0]] = 1.0
    rows[1, keep[1]] = 1.0
    origin = np.zeros(3)
    origin[normal_axis] = offset
    return frame_of(rows, origin)


def across(v: np.ndarray, normal: np.ndarray) -> tuple[bool, bool]:
    """Whether a vector has a component across the plane, and one in it."""
    n = float(np.linalg.norm(v)) or 1.0
    out = abs(float(v @ normal)) > _TOL * n
    inside = float(np.linalg.norm(v - (v @ normal) * normal)) > _TOL * n
    return out, inside
