"""Where a truss lands on the drawing: projection of model coordinates and the fit to the page.

A plane truss is drawn in its own plane (x right, y up).  A space truss is
drawn in an isometric view: z up, x toward the lower right and y toward the
lower left, each 30° below the horizontal, all three axes at full scale, so a
model point (x, y, z) lands on the drawing plane at
u = (x − y)·cos 30°, v = z − (x + y)·sin 30° (the isometric axonometry; common practice).
Then ``X = x0 + scale·(u − u0)``, ``Y = y0 − scale·(v − v0)`` in SVG pixels (y down).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from audit.model import FloatArray, Model

#: width of every drawing, SVG pixels
WIDTH = 960.0

_C30, _S30 = math.cos(math.pi / 6), math.sin(math.pi / 6)
ISOMETRIC = np.array([[_C30, -_C30, 0.0], [-_S30, -_S30, 1.0]])
PLANE = np.eye(2)
ISOMETRIC_TEXT = (
    "isometric view: z up, x toward the lower right and y toward the lower left (each 30° below the "
    "horizontal), all axes at full scale"
)


@dataclass(frozen=True)
class Transform:
    """Model coordinates → SVG pixels.

    ``(u, v) = projection @ p`` puts a model point on the drawing plane (u right,
    v up); then ``X = x0 + scale·(u − u0)`` and ``Y = y0 − scale·(v − v0)``
    (SVG's y axis points down).
    """

    projection: FloatArray  #: (2, dim)
    scale: float  #: pixels per model length unit
    u0: float
    v0: float
    x0: float
    y0: float
    view: str  #: the projection in words

    def plane(self, points: FloatArray) -> FloatArray:
        """(k, dim) model points → (k, 2) drawing-plane coordinates (model units)."""
        return np.asarray(points, dtype=np.float64) @ self.projection.T

    def apply(self, points: FloatArray) -> FloatArray:
        """(k, dim) model points → (k, 2) SVG pixel coordinates."""
        uv = self.plane(points)
        return np.column_stack(
            [self.x0 + self.scale * (uv[:, 0] - self.u0), self.y0 - self.scale * (uv[:, 1] - self.v0)]
        )

    def vector(self, vectors: FloatArray) -> FloatArray:
        """(k, dim) model vectors → (k, 2) pixel vectors (no translation)."""
        uv = self.plane(vectors)
        return np.column_stack([self.scale * uv[:, 0], -self.scale * uv[:, 1]])


def projection_for(dim: int) -> tuple[FloatArray, str]:
    if dim == 3:
        return ISOMETRIC, ISOMETRIC_TEXT
    return PLANE, "plane view: x to the right, y up"


def fit_transform(coords: FloatArray, dim: int, width: float = WIDTH, margin: float = 76.0) -> tuple[Transform, float]:
    """The transform that fits ``coords`` into ``width`` pixels, and the drawing area's height.

    The height follows the model's aspect ratio, between 220 and 640 px.
    """
    P, view = projection_for(dim)
    uv = np.asarray(coords, dtype=np.float64).reshape(-1, dim) @ P.T
    if uv.shape[0] == 0:
        return Transform(P, 1.0, 0.0, 0.0, width / 2, 120.0, view), 240.0
    lo, hi = uv.min(axis=0), uv.max(axis=0)
    span = np.maximum(hi - lo, 1e-12)
    size = max(float(span.max()), 1e-12)
    span = np.maximum(span, 1e-3 * size)
    avail_w = width - 2 * margin
    height = float(np.clip(avail_w * span[1] / span[0] + 2 * margin, 220.0, 640.0))
    scale = min(avail_w / span[0], (height - 2 * margin) / span[1])
    centre = (lo + hi) / 2
    return Transform(P, float(scale), float(centre[0]), float(centre[1]), width / 2, height / 2, view), height


def model_span(model: Model) -> float:
    """The largest side of the model's bounding box (model length units)."""
    if model.n_nodes == 0:
        return 1.0
    ext = model.coords.max(axis=0) - model.coords.min(axis=0)
    return float(max(ext.max(), 1e-12))


def nice_factor(x: float) -> float:
    """The largest 1, 2 or 5 × 10ⁿ not above ``x`` (x > 0): a scale factor people can read."""
    if not math.isfinite(x) or x <= 0.0:
        return 1.0
    e = math.floor(math.log10(x))
    for m in (5.0, 2.0, 1.0):
        if m * 10.0**e <= x * (1 + 1e-12):
            return m * 10.0**e
    return 10.0**e


__all__ = [
    "ISOMETRIC",
    "ISOMETRIC_TEXT",
    "PLANE",
    "WIDTH",
    "Transform",
    "fit_transform",
    "model_span",
    "nice_factor",
    "projection_for",
]
