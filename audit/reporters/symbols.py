"""The symbols of our drawings: joints, supports, loads, labels, legend, caption and axes glyph.

Colours and limits live here; :mod:`audit.reporters.drawing` composes the
symbols into scenes.  See that module's docstring for the visual language.
"""

from __future__ import annotations

import textwrap

import numpy as np

from audit.model import FloatArray, Model
from audit.reporters import _shared
from audit.reporters.geometry import Transform
from audit.reporters.scene import Dots, Item, Label, Polygons, Segments

MAX_DRAWN_MEMBERS = 20_000
MAX_LABELS = 30
MAX_NODE_MARKERS = 3_000
MAX_LOAD_ARROWS = 200
MAX_LOAD_LABELS = 12
DENSITY_CELL = 12.0
LEGEND_HEIGHT = 64.0

INK = "#1f2a36"
SLATE = "#6b7f91"
OCHRE = "#b07a00"
CRIMSON = "#b5123e"
TEAL = "#00766c"
VIOLET = "#6a2c91"
BLUE = "#1f5fa8"
ORANGE = "#c4501b"
PALE = "#aab6c0"
GREY = "#8a8a8a"


def legend_row(y: float, entries: list[tuple[str, str, float, str, bool]]) -> list[Item]:
    """A row of swatches: (label, colour, width, dash, hollow)."""
    items: list[Item] = []
    x = 24.0
    for text, colour, width, dash, hollow in entries:
        seg = np.array([[[x, y], [x + 30, y]]])
        items.append(Segments(seg, colour, width, dash, hollow=hollow, kind="legend"))
        items.append(Label(x + 36, y + 4, text, 11.0, INK, halo=False, kind="legend"))
        x += 36 + 6.6 * len(text) + 22
    return items


def wrap_caption(lines: list[str], width: int = 140) -> list[str]:
    """Caption lines wrapped to fit the drawing's width at 11 px."""
    return [part for line in lines for part in textwrap.wrap(line, width)]


def caption(y: float, lines: list[str]) -> list[Item]:
    return [Label(24.0, y + 14.0 * i, line, 11.0, INK, halo=False, kind="caption") for i, line in enumerate(lines)]


def joints(T: Transform, model: Model, coords: FloatArray | None = None) -> list[Item]:
    if model.n_nodes > MAX_NODE_MARKERS:
        return []
    pts = T.apply(model.coords if coords is None else coords)
    return [Dots(pts, 2.6, INK, ids=model.node_ids, kind="joint")]


def support_symbols(T: Transform, model: Model) -> list[Item]:
    """Restraint stubs with solid squares, springs as zig-zags with open squares."""
    items: list[Item] = []
    if model.n_restraints + model.spring_node.size > 4 * MAX_NODE_MARKERS:
        return items
    pts = T.apply(model.coords)

    def unit2(direction: FloatArray) -> FloatArray:
        v = T.vector(direction.reshape(1, -1))[0]
        n = float(np.hypot(*v))
        return v / n if n > 1e-9 else np.array([0.0, 1.0])

    stubs, squares = [], []
    for node, d in zip(model.restraint_node.tolist(), model.restraint_dir, strict=True):
        e = unit2(d)
        p = pts[node]
        q = p - 16.0 * e  # the stub points away from the joint, against the restrained direction
        stubs.append([p, q])
        n = np.array([-e[1], e[0]])
        squares.append(np.array([q + 4 * n, q + 4 * n - 7 * e, q - 4 * n - 7 * e, q - 4 * n]))
    if stubs:
        items.append(Segments(np.array(stubs), TEAL, 2.0, kind="restraint"))
        items.append(Polygons(tuple(squares), TEAL, kind="restraint"))
    zigzags, boxes = [], []
    for node, d in zip(model.spring_node.tolist(), model.spring_dir, strict=True):
        e = unit2(d)
        n = np.array([-e[1], e[0]])
        p = pts[node]
        path = [p] + [p - (3 + 2.5 * k) * e + (4 if k % 2 else -4) * n for k in range(1, 7)] + [p - 22 * e]
        zigzags.append(np.array(path))
        q = p - 22 * e
        boxes.append(np.array([q + 4 * n, q + 4 * n - 7 * e, q - 4 * n - 7 * e, q - 4 * n]))
    if zigzags:
        items.append(Polygons(tuple(zigzags), "none", TEAL, 1.4, closed=False, kind="spring"))
        items.append(Polygons(tuple(boxes), "#ffffff", TEAL, 1.4, kind="spring"))
    return items


def load_arrows(T: Transform, model: Model, loads: FloatArray | None) -> list[Item]:
    if loads is None:
        return []
    mag = np.sqrt(np.einsum("ij,ij->i", loads, loads))
    nodes = np.nonzero(mag > 0)[0]
    if nodes.size == 0:
        return []
    nodes = nodes[np.argsort(-mag[nodes], kind="stable")][:MAX_LOAD_ARROWS]
    pts = T.apply(model.coords)
    fmax = float(mag[nodes].max())
    shafts: list[list[FloatArray]] = []
    heads: list[FloatArray] = []
    items: list[Item] = []
    labelled = 0
    for i in sorted(nodes.tolist()):
        v = T.vector(loads[i].reshape(1, -1))[0]
        n = float(np.hypot(*v))
        tip = pts[i]
        if n < 1e-9 * fmax * T.scale:  # a load along the viewing direction: a ringed dot
            items.append(Dots(tip.reshape(1, 2), 5.0, "none", VIOLET, kind="load"))
            continue
        e = v / n
        length = 22.0 + 34.0 * mag[i] / fmax
        tail = tip - (length + 3) * e
        base = tip - 3 * e
        shafts.append([tail, base - 7 * e])
        nrm = np.array([-e[1], e[0]])
        heads.append(np.array([base, base - 9 * e + 4 * nrm, base - 9 * e - 4 * nrm]))
        if labelled < MAX_LOAD_LABELS and nodes.size <= MAX_LOAD_LABELS:
            unit = model.units.force
            items.append(Label(tail[0], tail[1] - 4, f"{_shared.fmt_number(mag[i], 4)} {unit}", 10.0, VIOLET, "middle"))
            labelled += 1
    if shafts:
        items.insert(0, Segments(np.array(shafts), VIOLET, 1.8, kind="load"))
        items.insert(1, Polygons(tuple(heads), VIOLET, kind="load"))
    return items


def member_labels(T: Transform, model: Model, idx: list[int], text: list[str], colour: str) -> list[Label]:
    """At most :data:`MAX_LABELS` labels beside the members' midpoints, in the order given (most important
    first); a label that would overlap one already placed is left out and the next candidate tried.
    """
    pts = T.apply(model.coords)
    out: list[Label] = []
    boxes: list[tuple[float, float, float, float]] = []
    for i, t in zip(idx, text, strict=True):
        a, b = pts[model.conn[i, 0]], pts[model.conn[i, 1]]
        mid = (a + b) / 2
        d = b - a
        n = np.array([-d[1], d[0]]) / max(float(np.hypot(*d)), 1e-9)
        if n[1] > 0:
            n = -n
        x, y = float(mid[0] + 7 * n[0]), float(mid[1] + 7 * n[1] + 4)
        half = 3.4 * len(t) + 2
        box = (x - half, y - 11, x + half, y + 2)
        if any(box[0] < o[2] and o[0] < box[2] and box[1] < o[3] and o[1] < box[3] for o in boxes):
            continue
        boxes.append(box)
        out.append(Label(x, y, t, 11.0, colour, "middle", bold=True))
        if len(out) >= MAX_LABELS:
            break
    return out


def axes_glyph(T: Transform, dim: int, x: float, y: float) -> list[Item]:
    """Small arrows showing the model axes' directions on the drawing, with their names."""
    items: list[Item] = []
    vec = T.vector(np.eye(dim))
    segs, heads = [], []
    for a in range(dim):
        v = vec[a]
        n = float(np.hypot(*v))
        if n < 1e-12:
            continue
        e = v / n
        tip = np.array([x, y]) + 26 * e
        segs.append([[x, y], tip - 4 * e])
        nrm = np.array([-e[1], e[0]])
        heads.append(np.array([tip, tip - 6 * e + 3 * nrm, tip - 6 * e - 3 * nrm]))
        items.append(Label(tip[0] + 8 * e[0], tip[1] + 8 * e[1] + 4, "xyz"[a], 11.0, INK, "middle", kind="axes"))
    return [Segments(np.array(segs), INK, 1.2, kind="axes"), Polygons(tuple(heads), INK, kind="axes"), *items]


__all__ = [
    "axes_glyph",
    "caption",
    "joints",
    "legend_row",
    "load_arrows",
    "member_labels",
    "support_symbols",
    "wrap_caption",
]
