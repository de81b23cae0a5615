"""A small backend-neutral drawing: primitives in SVG pixel coordinates, and their SVG text.

:mod:`audit.reporters.drawing` builds a :class:`Scene` from a model;
:func:`to_svg` writes it as inline SVG (HTML report, ``--plot`` SVG files) and
:mod:`audit.reporters.plots` paints the very same primitives with matplotlib
for PNG files.  Coordinates are pixels, x to the right, y *down*.
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field

import numpy as np

from audit.model import FloatArray

#: members drawn as separate <line> elements (with an id and a tooltip) up to this many per layer;
#: beyond, a layer is one <path> per style
DETAIL_LIMIT = 3000

FONT = "ui-sans-serif, system-ui, sans-serif"


@dataclass(frozen=True)
class Segments:
    """Straight strokes: ``xy`` is (k, 2, 2), start and end point of each."""

    xy: FloatArray
    stroke: str
    width: float
    dash: str = ""
    opacity: float = 1.0
    hollow: bool = False  #: drawn as an outlined band: a stroke of ``width`` with a white core
    ids: tuple[str, ...] = ()  #: member ids, for tooltips and ``data-member``
    kind: str = ""  #: class name in SVG


@dataclass(frozen=True)
class Dots:
    xy: FloatArray  #: (k, 2)
    radius: float
    fill: str
    stroke: str = "none"
    ids: tuple[str, ...] = ()  #: node ids, for tooltips and ``data-node``
    kind: str = ""


@dataclass(frozen=True)
class Polygons:
    shapes: tuple[FloatArray, ...]  #: each (k, 2), closed when ``closed``
    fill: str
    stroke: str = "none"
    width: float = 1.0
    closed: bool = True
    kind: str = ""


@dataclass(frozen=True)
class Cells:
    """Density shading: axis-aligned squares of side ``size`` with one opacity each."""

    xy: FloatArray  #: (k, 2) top-left corners
    size: float
    alpha: FloatArray  #: (k,) in (0, 1]
    fill: str
    kind: str = "density"


@dataclass(frozen=True)
class Label:
    x: float
    y: float
    text: str
    size: float = 11.0
    fill: str = "#1f2a36"
    anchor: str = "start"  #: "start", "middle" or "end"
    bold: bool = False
    halo: bool = True  #: a white outline so that the text reads over lines
    kind: str = "label"


Item = Segments | Dots | Polygons | Cells | Label


@dataclass(frozen=True)
class Scene:
    width: float
    height: float
    title: str
    caption: tuple[str, ...]
    items: tuple[Item, ...] = field(default_factory=tuple)
    notes: dict[str, object] = field(default_factory=dict)  #: counts (drawn, aggregated, labelled)


# --------------------------------------------------------------------- SVG
def _f(v: float, digits: int) -> str:
    text = f"{v:.{digits}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _attr(text: str) -> str:
    return html.escape(text, quote=True)


def _path_d(xy: FloatArray, digits: int) -> str:
    parts = []
    for (x1, y1), (x2, y2) in xy.tolist():
        parts.append(f"M{_f(x1, digits)} {_f(y1, digits)}L{_f(x2, digits)} {_f(y2, digits)}")
    return "".join(parts)


def _stroke_attrs(stroke: str, width: float, dash: str, opacity: float) -> str:
    out = f'stroke="{stroke}" stroke-width="{_f(width, 2)}" stroke-linecap="round" fill="none"'
    if dash:
        out += f' stroke-dasharray="{dash}"'
    if opacity < 1.0:
        out += f' stroke-opacity="{_f(opacity, 3)}"'
    return out


def _segments_svg(s: Segments, digits: int) -> list[str]:
    if s.xy.shape[0] == 0:
        return []
    layers = [(s.stroke, s.width, s.dash, s.opacity)]
    if s.hollow:
        layers.append(("#ffffff", max(s.width - 1.8, s.width * 0.35), "", 1.0))
    out = [f'<g class="{_attr(s.kind)}">']
    detailed = bool(s.ids) and s.xy.shape[0] <= DETAIL_LIMIT
    for k, (stroke, width, dash, opacity) in enumerate(layers):
        attrs = _stroke_attrs(stroke, width, dash if k == 0 else "", opacity)
        if detailed and k == 0:
            out.append(f"<g {attrs}>")
            for (p, q), mid in zip(s.xy.tolist(), s.ids, strict=True):
                out.append(
                    f'<line data-member="{_attr(mid)}" x1="{_f(p[0], digits)}" y1="{_f(p[1], digits)}" '
                    f'x2="{_f(q[0], digits)}" y2="{_f(q[1], digits)}"><title>member {html.escape(mid)}</title></line>'
                )
            out.append("</g>")
        else:
            out.append(f'<path {attrs} d="{_path_d(s.xy, digits)}"/>')
    out.append("</g>")
    return out


def _dots_svg(d: Dots, digits: int) -> list[str]:
    if d.xy.shape[0] == 0:
        return []
    out = [f'<g class="{_attr(d.kind)}" fill="{d.fill}" stroke="{d.stroke}">']
    ids = d.ids if d.ids and len(d.ids) == d.xy.shape[0] else ("",) * d.xy.shape[0]
    for (x, y), nid in zip(d.xy.tolist(), ids, strict=True):
        tag = f' data-node="{_attr(nid)}"' if nid else ""
        tip = f"<title>node {html.escape(nid)}</title>" if nid else ""
        out.append(f'<circle{tag} cx="{_f(x, digits)}" cy="{_f(y, digits)}" r="{_f(d.radius, 2)}">{tip}</circle>')
    out.append("</g>")
    return out


def _polygons_svg(p: Polygons) -> list[str]:
    if not p.shapes:
        return []
    d = []
    for shape in p.shapes:
        pts = shape.tolist()
        d.append("M" + "L".join(f"{_f(x, 2)} {_f(y, 2)}" for x, y in pts) + ("Z" if p.closed else ""))
    return [
        f'<path class="{_attr(p.kind)}" fill="{p.fill}" stroke="{p.stroke}" stroke-width="{_f(p.width, 2)}" '
        f'stroke-linejoin="round" d="{"".join(d)}"/>'
    ]


def _cells_svg(c: Cells) -> list[str]:
    if c.xy.shape[0] == 0:
        return []
    levels = np.clip(np.ceil(c.alpha * 8), 1, 8).astype(int)
    out = [f'<g class="{_attr(c.kind)}" fill="{c.fill}">']
    for level in range(1, 9):
        sel = c.xy[levels == level]
        if sel.shape[0] == 0:
            continue
        h = _f(c.size, 2)
        d = "".join(f"M{_f(x, 1)} {_f(y, 1)}h{h}v{h}h-{h}z" for x, y in sel.tolist())
        out.append(f'<path fill-opacity="{_f(level / 8, 3)}" d="{d}"/>')
    out.append("</g>")
    return out


def _label_svg(lab: Label) -> list[str]:
    weight = ' font-weight="bold"' if lab.bold else ""
    halo = ' stroke="#ffffff" stroke-width="3" paint-order="stroke" stroke-linejoin="round"' if lab.halo else ""
    return [
        f'<text class="{_attr(lab.kind)}" x="{_f(lab.x, 2)}" y="{_f(lab.y, 2)}" font-size="{_f(lab.size, 1)}" '
        f'text-anchor="{lab.anchor}" fill="{lab.fill}"{weight}{halo}>{html.escape(lab.text)}</text>'
    ]


def to_svg(scene: Scene, *, standalone: bool = False) -> str:
    """The scene as SVG text; ``standalone`` adds the XML declaration and namespace for a file of its own."""
    many = sum(i.xy.shape[0] for i in scene.items if isinstance(i, Segments)) > DETAIL_LIMIT
    digits = 1 if many else 2
    w, h = _f(scene.width, 1), _f(scene.height, 1)
    head = '<?xml version="1.0" encoding="UTF-8"?>\n' if standalone else ""
    out = [
        head + f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {w} {h}" width="{w}" height="{h}" '
        f'role="img" aria-label="{_attr(scene.title)}" font-family="{FONT}">',
        f"<title>{html.escape(scene.title)}</title>",
        f'<rect x="0" y="0" width="{w}" height="{h}" fill="#ffffff"/>',
    ]
    for item in scene.items:
        if isinstance(item, Segments):
            out += _segments_svg(item, digits)
        elif isinstance(item, Dots):
            out += _dots_svg(item, digits)
        elif isinstance(item, Polygons):
            out += _polygons_svg(item)
        elif isinstance(item, Cells):
            out += _cells_svg(item)
        else:
            out += _label_svg(item)
    out.append("</svg>")
    return "\n".join(out) + ("\n" if standalone else "")


__all__ = ["DETAIL_LIMIT", "Cells", "Dots", "Item", "Label", "Polygons", "Scene", "Segments", "to_svg"]
