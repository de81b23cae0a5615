"""``--plot DIR``: every drawing of the HTML report as an SVG file and a PNG file.

The SVG files are the report's own inline drawings with an XML header; the
PNG files paint the very same scene primitives with matplotlib (Agg backend,
no display needed) at one image pixel per SVG unit times ``dpi / 96``.
Nothing is written here: :func:`render` returns ``{file name: bytes}`` and the
CLI writes the files.  PNG output is deterministic (no timestamp or software
metadata).
"""

from __future__ import annotations

import io
import re
from collections.abc import Mapping
from typing import Any

import matplotlib

matplotlib.use("Agg")

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection, PatchCollection
from matplotlib.figure import Figure
from matplotlib.patches import Circle, Polygon, Rectangle

from audit.findings import AuditResult
from audit.model import Model
from audit.reporters import drawing
from audit.reporters.scene import Cells, Dots, Label, Polygons, Scene, Segments, to_svg

#: PNG resolution; 96 dpi draws one PNG pixel per SVG unit
DPI = 144


def _dash(dash: str, width: float) -> Any:
    """An SVG dash array (px) as a matplotlib dash pattern (in multiples of the line width)."""
    if not dash:
        return "solid"
    values = [float(v) for v in dash.replace(",", " ").split()]
    return (0, [v / max(width, 1e-9) for v in values])


def paint(scene: Scene, dpi: int = DPI) -> bytes:
    """The scene as PNG bytes, painted with matplotlib's Agg backend."""
    pt = 72.0 / 96.0  # points per SVG px at the CSS reference resolution
    # a whole number of pixels, rounded as documented (matplotlib truncates a fractional figure size)
    px = (round(scene.width * dpi / 96.0), round(scene.height * dpi / 96.0))
    fig = Figure(figsize=(px[0] / dpi, px[1] / dpi), dpi=dpi, facecolor="white")
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0, 0, 1, 1))
    ax.set_xlim(0, scene.width)
    ax.set_ylim(scene.height, 0)
    ax.set_axis_off()
    z = 1
    for item in scene.items:
        z += 1
        if isinstance(item, Segments):
            if item.xy.shape[0] == 0:
                continue
            layers = [(item.stroke, item.width, item.dash, item.opacity)]
            if item.hollow:
                layers.append(("#ffffff", max(item.width - 1.8, item.width * 0.35), "", 1.0))
            for colour, width, dash, alpha in layers:
                ax.add_collection(
                    LineCollection(
                        list(item.xy),
                        colors=colour,
                        linewidths=width * pt,
                        linestyles=_dash(dash, width),
                        alpha=alpha,
                        capstyle="round",
                        zorder=z,
                    )
                )
                z += 1
        elif isinstance(item, Dots):
            circles = [Circle((x, y), item.radius) for x, y in item.xy.tolist()]
            face = "none" if item.fill == "none" else item.fill
            edge = "none" if item.stroke == "none" else item.stroke
            ax.add_collection(PatchCollection(circles, facecolors=face, edgecolors=edge, zorder=z))
        elif isinstance(item, Polygons):
            if not item.shapes:
                continue
            if item.closed:
                patches = [Polygon(s, closed=True) for s in item.shapes]
                face = "none" if item.fill == "none" else item.fill
                edge = "none" if item.stroke == "none" else item.stroke
                coll = PatchCollection(patches, facecolors=face, edgecolors=edge, linewidths=item.width * pt, zorder=z)
                ax.add_collection(coll)
            else:
                lines = [np.asarray(s) for s in item.shapes]
                ax.add_collection(LineCollection(lines, colors=item.stroke, linewidths=item.width * pt, zorder=z))
        elif isinstance(item, Cells):
            if item.xy.shape[0] == 0:
                continue
            rects = [Rectangle((x, y), item.size, item.size) for x, y in item.xy.tolist()]
            coll = PatchCollection(rects, facecolors=item.fill, edgecolors="none", zorder=z)
            coll.set_alpha(None)
            colours = np.zeros((len(rects), 4))
            colours[:, :3] = matplotlib.colors.to_rgb(item.fill)
            colours[:, 3] = np.clip(np.ceil(item.alpha * 8), 1, 8) / 8  # the SVG writer's eight levels
            coll.set_facecolor(colours)  # type: ignore[arg-type]
            ax.add_collection(coll)
        elif isinstance(item, Label):
            halign = {"start": "left", "middle": "center", "end": "right"}[item.anchor]
            text = ax.text(
                item.x,
                item.y,
                item.text,
                fontsize=item.size * pt,
                color=item.fill,
                ha=halign,
                va="baseline",
                fontweight="bold" if item.bold else "normal",
                zorder=z,
            )
            if item.halo:
                from matplotlib import patheffects

                text.set_path_effects([patheffects.withStroke(linewidth=3 * pt, foreground="white")])
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, facecolor="white", metadata={"Software": None})
    return buf.getvalue()


def _file_stem(name: str) -> str:
    """A safe file stem: letters, digits, dot, dash and underscore kept, anything else as "_"."""
    return re.sub(r"[^A-Za-z0-9._-]", "_", name).strip("._") or "drawing"


def render(
    result: AuditResult, model: Model | None = None, context: Mapping[str, Any] | None = None, *, png: bool = True
) -> dict[str, bytes]:
    """Every drawing as ``{file name: content}``: ``NN-name.svg`` and (with ``png``) ``NN-name.png``.

    ``NN`` numbers the drawings in report order, so that two case ids that
    clean to the same stem still give distinct files.  No model, no drawings
    (an empty dict).
    """
    if model is None:
        return {}
    files: dict[str, bytes] = {}
    for k, (name, scene) in enumerate(drawing.all_scenes(result, model, context), 1):
        stem = f"{k:02d}-{_file_stem(name)}"
        files[stem + ".svg"] = to_svg(scene, standalone=True).encode("utf-8")
        if png:
            files[stem + ".png"] = paint(scene)
    return files


#: the name the CLI calls
render_files = render

__all__ = ["DPI", "paint", "render", "render_files"]
