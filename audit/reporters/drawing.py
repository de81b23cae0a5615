"""Drawings of a truss as scenes: the structure as built, member forces, deformed shape, mechanisms.

Our own visual language (meant to read in greyscale as well as in colour):

* members: *no finding* thin slate line; *warning* ochre dashed line of
  middle width; *failing* thick crimson line, labelled with its id;
* joints: small ink dots;
* a restraint: a short stub from the joint against its restrained direction,
  ending in a solid square ("anchored this way"); a spring: a zig-zag ending in
  an open square;
* a load: a violet arrow ending at the joint, its length growing with the
  load (from 40 % to 100 % of the arrow size), its value written at the tail;
* member forces: band width grows linearly with |N|; tension a *solid* blue
  band, compression a *hollow* (outlined) orange band, zero force a dotted
  grey hairline;
* deformed shape and mechanisms: the undeformed shape as a dashed pale line,
  the moved shape in ink; the scale is written in the caption.

Geometry (:mod:`audit.reporters.geometry`, re-exported here): :class:`Transform` maps model
coordinates to SVG pixels.  A plane
truss is drawn in its own plane (x right, y up).  A space truss is drawn in an
isometric view (stated in every caption): z up, x toward the lower right and
y toward the lower left, each 30° below the horizontal, all three axes at
full scale, so a model point (x, y, z) lands on the drawing plane at
u = (x − y)·cos 30°, v = z − (x + y)·sin 30°.

Large models: each drawing draws at most :data:`MAX_DRAWN_MEMBERS` members
one by one (members with findings, or with the largest forces, first); the
rest are shown as density shading on a grid of :data:`DENSITY_CELL` px cells.
At most :data:`MAX_LABELS` labels and :data:`MAX_NODE_MARKERS` joint dots per
drawing.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from audit.findings import AuditResult, Severity
from audit.model import FloatArray, Model
from audit.reporters import _explain, _shared
from audit.reporters.geometry import (
    ISOMETRIC,
    WIDTH,
    Transform,
    fit_transform,
    model_span,
    nice_factor,
    projection_for,
)
from audit.reporters.scene import Cells, Dots, Item, Scene, Segments
from audit.reporters.symbols import (
    BLUE,
    CRIMSON,
    DENSITY_CELL,
    GREY,
    INK,
    LEGEND_HEIGHT,
    MAX_DRAWN_MEMBERS,
    MAX_LABELS,
    MAX_NODE_MARKERS,
    OCHRE,
    ORANGE,
    PALE,
    SLATE,
    TEAL,
    VIOLET,
    axes_glyph,
    caption,
    joints,
    legend_row,
    load_arrows,
    member_labels,
    support_symbols,
    wrap_caption,
)


# ----------------------------------------------------------------- helpers
def _segments(T: Transform, coords: FloatArray, conn: np.ndarray, idx: np.ndarray) -> FloatArray:
    pts = T.apply(coords)
    return np.stack([pts[conn[idx, 0]], pts[conn[idx, 1]]], axis=1)


def _density(T: Transform, coords: FloatArray, conn: np.ndarray, idx: np.ndarray, fill: str) -> Cells | None:
    """Shade the grid cells the members ``idx`` cross, darker where more member length lies.

    Each member is sampled at five points (t = 0.1, 0.3, …, 0.9), each carrying a fifth of its drawn
    length; a cell's opacity is 0.2 + 0.8 · (its length) / (the largest cell's length).
    """
    if idx.size == 0:
        return None
    pts = T.apply(coords)
    a, b = pts[conn[idx, 0]], pts[conn[idx, 1]]
    length = np.hypot(*(b - a).T)
    t = np.array([0.1, 0.3, 0.5, 0.7, 0.9])
    samples = (a[:, None, :] + t[None, :, None] * (b - a)[:, None, :]).reshape(-1, 2)
    weight = np.repeat(length / t.size, t.size)
    cell = np.floor(samples / DENSITY_CELL).astype(np.int64)
    cell -= cell.min(axis=0)
    stride = int(cell[:, 0].max()) + 1
    flat = cell[:, 1] * stride + cell[:, 0]
    keys, inverse = np.unique(flat, return_inverse=True)
    total = np.bincount(inverse.reshape(-1), weights=weight, minlength=keys.size)
    alpha = np.asarray(0.2 + 0.8 * total / max(float(total.max()), 1e-300), dtype=np.float64)
    origin = np.floor(samples.min(axis=0) / DENSITY_CELL)
    corners = (np.column_stack([keys % stride, keys // stride]) + origin) * DENSITY_CELL
    return Cells(corners.astype(np.float64), DENSITY_CELL, alpha, fill)


def _pick(priority: np.ndarray, cap: int) -> tuple[np.ndarray, np.ndarray]:
    """Indices to draw one by one (highest priority first, at most ``cap``) and the rest, both sorted."""
    n = priority.size
    if n <= cap:
        return np.arange(n), np.zeros(0, dtype=np.int64)
    order = np.lexsort((np.arange(n), -priority))
    return np.sort(order[:cap]), np.sort(order[cap:])


def case_loads(model: Model, case: str | None) -> FloatArray | None:
    """(n_nodes, dim) nodal loads of a load case, or the factored sum of a combination."""
    if case is None:
        return None
    i = model.case_index(case)
    if i is not None:
        return model.load_cases[i].loads
    j = model.combination_index(case)
    if j is None:
        return None
    total = np.zeros((model.n_nodes, model.dim))
    for ci, factor, _text in model.combinations[j].factors:
        total += factor * model.load_cases[ci].loads
    return total


def _frame(model: Model, extra_height: float = 0.0) -> tuple[Transform, float]:
    T, h = fit_transform(model.coords, model.dim)
    return T, h + extra_height


# ---------------------------------------------------------------- drawings
def structure(model: Model, result: AuditResult | None = None, case: str | None = None) -> Scene:
    """The truss as built: members by verdict (failing ones labelled), supports and the loads of ``case``."""
    T, h = _frame(model)
    sev = _shared.member_verdicts(result) if result is not None else {}
    fail_on = result.fail_on if result is not None else Severity.ERROR
    level = np.zeros(model.n_members)
    for k, mid in enumerate(model.member_ids):
        s = sev.get(mid)
        if s is not None:
            level[k] = 2.0 if s >= fail_on else (1.0 if s >= Severity.WARNING else 0.0)
    drawn, rest = _pick(level, MAX_DRAWN_MEMBERS)
    if rest.size:  # shading anyway: shade every member without a finding, draw only those with one
        rest = np.sort(np.concatenate([rest, drawn[level[drawn] == 0.0]]))
        drawn = drawn[level[drawn] > 0.0]
    items: list[Item] = []
    shade = _density(T, model.coords, model.conn, rest, SLATE)
    if shade is not None:
        items.append(shade)
    styles = ((0.0, SLATE, 1.6, "", "plain"), (1.0, OCHRE, 2.6, "7 3", "warning"), (2.0, CRIMSON, 4.0, "", "failing"))
    for lv, colour, width, dash, kind in styles:
        sel = drawn[level[drawn] == lv]
        ids = tuple(model.member_ids[i] for i in sel.tolist())
        items.append(Segments(_segments(T, model.coords, model.conn, sel), colour, width, dash, ids=ids, kind=kind))
    cause_items, cause_line = _cause_marks(T, model, result)
    items += cause_items
    items += support_symbols(T, model)
    loads = case_loads(model, case)
    items += load_arrows(T, model, loads)
    items += joints(T, model)
    fail_idx = [i for i in range(model.n_members) if level[i] == 2.0]
    if result is not None and len(fail_idx) > MAX_LABELS:
        worst = dict.fromkeys(f.location.member for f in _shared.sorted_findings(result.findings))
        order = {m: k for k, m in enumerate(worst)}
        fail_idx = sorted(fail_idx, key=lambda i: order.get(model.member_ids[i], len(order)))[: 8 * MAX_LABELS]
    fail_labels = member_labels(T, model, fail_idx, [model.member_ids[i] for i in fail_idx], CRIMSON)
    items += fail_labels
    n_fail = int(np.sum(level == 2.0))
    lines = [
        f"{model.title or 'Model'} as built, {T.view}.",
        f"{n_fail} failing member(s), {int(np.sum(level == 1.0))} with warnings; "
        + (f"labels on {len(fail_labels)} of them (the worst, where room)." if n_fail else "no member failed.")
        + (f" Loads of case '{case}' drawn at the joints." if loads is not None and case else ""),
    ]
    if cause_line:
        lines.append(cause_line)
    if rest.size:
        lines.append(
            f"{drawn.size} of {model.n_members} members drawn one by one (those with findings); the other "
            f"{rest.size} shown as shading on {DENSITY_CELL:g} px cells, darker where more members lie."
        )
    lines = wrap_caption(lines)
    legend = [
        *([("cause found", INK, 9.0, "", True)] if cause_items else []),
        ("failing", CRIMSON, 4.0, "", False),
        ("warning", OCHRE, 2.6, "7 3", False),
        ("no finding", SLATE, 1.6, "", False),
        ("restraint", TEAL, 2.0, "", False),
        ("load", VIOLET, 1.8, "", False),
    ]
    items += legend_row(h + 8, legend) + caption(h + 28, lines) + axes_glyph(T, model.dim, WIDTH - 56, h - 24)
    return Scene(
        WIDTH,
        h + LEGEND_HEIGHT + 14 * (len(lines) - 2),
        f"{model.title or 'Model'}: the truss as built",
        tuple(lines),
        tuple(items),
        {"drawn": int(drawn.size), "aggregated": int(rest.size), "labelled": len(fail_labels), "transform": T},
    )


def _cause_marks(T: Transform, model: Model, result: AuditResult | None) -> tuple[list[Item], str]:
    """The members and joints named as the place of a cause by the diagnosis: each member outlined by a wide
    hollow ink band, each joint by an ink ring, distinct from the crimson of members whose numbers merely
    differ; and the caption line naming them."""
    if result is None:
        return [], ""
    members, nodes = _explain.cause_places(result)
    mi = model.member_index()
    ni = model.node_index()
    sel = np.array(sorted(mi[m] for m in members if m in mi), dtype=np.int64)
    nsel = sorted(ni[n] for n in nodes if n in ni)
    items: list[Item] = []
    if sel.size:
        ids = tuple(model.member_ids[i] for i in sel.tolist())
        items.append(
            Segments(_segments(T, model.coords, model.conn, sel), INK, 9.0, hollow=True, ids=ids, kind="cause")
        )
    if nsel:
        pts = T.apply(model.coords[nsel])
        items.append(Dots(pts, 8.0, "none", INK, ids=tuple(model.node_ids[i] for i in nsel), kind="cause"))
    if not items:
        return [], ""
    names = [f"member {model.member_ids[i]}" for i in sel.tolist()] + [f"joint {model.node_ids[i]}" for i in nsel]
    shown = ", ".join(names[:6]) + (f" and {len(names) - 6} more" if len(names) > 6 else "")
    return items, f"Cause named by the diagnosis (outlined in ink): {shown}."


def forces(model: Model, axial: FloatArray, case: str) -> Scene:
    """Member forces of ``case``: band width ∝ |N|, tension solid, compression hollow, zero dotted."""
    T, h = _frame(model)
    N = np.asarray(axial, dtype=np.float64).reshape(-1)
    finite = np.where(np.isfinite(N), N, 0.0)
    mag = np.abs(finite)
    nmax = float(mag.max()) if mag.size else 0.0
    zero = mag <= 1e-9 * nmax if nmax > 0 else np.ones(N.size, dtype=bool)
    drawn, rest = _pick(mag, MAX_DRAWN_MEMBERS)
    items: list[Item] = []
    shade = _density(T, model.coords, model.conn, rest, GREY)
    if shade is not None:
        items.append(shade)
    dz = drawn[zero[drawn]]
    items.append(Segments(_segments(T, model.coords, model.conn, dz), GREY, 0.9, "1 3", kind="zero-force"))
    bins = 10
    width_of = 2.5 + 9.0 * mag / nmax if nmax > 0 else np.full(N.size, 2.5)
    level = np.minimum((mag / nmax * bins).astype(int), bins - 1) if nmax > 0 else np.zeros(N.size, dtype=int)
    for sign, colour, hollow, kind in ((1.0, BLUE, False, "tension"), (-1.0, ORANGE, True, "compression")):
        for lv in range(bins):
            sel = drawn[(~zero[drawn]) & (np.sign(finite[drawn]) == sign) & (level[drawn] == lv)]
            if sel.size == 0:
                continue
            width = float(np.mean(width_of[sel]))
            ids = tuple(model.member_ids[i] for i in sel.tolist())
            seg = _segments(T, model.coords, model.conn, sel)
            items.append(Segments(seg, colour, width, hollow=hollow, ids=ids, kind=kind))
    items += joints(T, model)
    top = [int(i) for i in np.lexsort((np.arange(N.size), -mag))[: 8 * MAX_LABELS] if not zero[i]]
    text = [("+" if finite[i] > 0 else "−") + _shared.fmt_number(mag[i], 4) for i in top]
    force_labels = member_labels(T, model, top, text, INK)
    items += force_labels
    unit = model.units.force
    lines = [
        f"Member forces, case '{case}', {T.view}.",
        f"Band width grows with |N| (2.5 px at zero to 11.5 px at the largest, {_shared.fmt_number(nmax, 5)} {unit}); "
        f"values on {len(force_labels)} of the largest, + tension, − compression.",
    ]
    if rest.size:
        lines.append(f"The {rest.size} members with the smallest |N| are shown as shading, not one by one.")
    lines = wrap_caption(lines)
    legend = [
        ("tension (solid)", BLUE, 6.0, "", False),
        ("compression (hollow)", ORANGE, 6.0, "", True),
        ("zero force", GREY, 0.9, "1 3", False),
    ]
    items += legend_row(h + 8, legend) + caption(h + 28, lines) + axes_glyph(T, model.dim, WIDTH - 56, h - 24)
    return Scene(
        WIDTH,
        h + LEGEND_HEIGHT + 14 * (len(lines) - 2),
        f"{model.title or 'Model'}: member forces, case {case}",
        tuple(lines),
        tuple(items),
        {
            "drawn": int(drawn.size),
            "aggregated": int(rest.size),
            "labelled": len(force_labels),
            "max_abs": nmax,
            "transform": T,
        },
    )


def _moved(model: Model, movement: FloatArray, factor: float, title: str, lines: list[str], kind: str) -> Scene:
    """Undeformed (dashed, pale) and moved (ink) shapes; the frame fits both."""
    moved = model.coords + factor * movement
    T, h = fit_transform(np.vstack([model.coords, moved]), model.dim)
    disp = np.sqrt(np.einsum("ij,ij->i", movement, movement))
    member_move = disp[model.conn].max(axis=1) if model.n_members else np.zeros(0)
    drawn, rest = _pick(member_move, MAX_DRAWN_MEMBERS)
    items: list[Item] = []
    shade = _density(T, model.coords, model.conn, rest, PALE)
    if shade is not None:
        items.append(shade)
    ids = tuple(model.member_ids[i] for i in drawn.tolist())
    items.append(Segments(_segments(T, model.coords, model.conn, drawn), PALE, 1.2, "5 4", kind="undeformed"))
    items.append(Segments(_segments(T, moved, model.conn, drawn), INK, 2.0, ids=ids, kind=kind))
    items += support_symbols(T, model)
    items += joints(T, model, moved)
    if rest.size:
        lines = [*lines, f"The {rest.size} members that move least are shown as shading at their undeformed place."]
    lines = wrap_caption(lines)
    legend = [("undeformed", PALE, 1.2, "5 4", False), ("moved", INK, 2.0, "", False)]
    items += legend_row(h + 8, legend) + caption(h + 28, lines) + axes_glyph(T, model.dim, WIDTH - 56, h - 24)
    return Scene(
        WIDTH,
        h + LEGEND_HEIGHT + 14 * (len(lines) - 2),
        title,
        tuple(lines),
        tuple(items),
        {"drawn": int(drawn.size), "aggregated": int(rest.size), "factor": factor, "transform": T, "moved": moved},
    )


def deformed(model: Model, displacements: FloatArray, case: str) -> Scene:
    """The deformed shape of ``case``, displacements magnified by a stated 1-2-5 factor.

    The factor is the largest 1, 2 or 5 × 10ⁿ that keeps the largest drawn
    movement at or below 8 % of the model's span.
    """
    u = np.nan_to_num(np.asarray(displacements, dtype=np.float64).reshape(model.n_nodes, model.dim))
    umax = float(np.sqrt(np.einsum("ij,ij->i", u, u)).max()) if u.size else 0.0
    span = model_span(model)
    unit = model.units.length
    if umax > 0.0:
        factor = nice_factor(0.08 * span / umax)
        scale_text = (
            f"Displacements drawn × {_shared.fmt_number(factor, 6)}: the largest, "
            f"{_shared.fmt_number(umax, 4)} {unit}, appears as {_shared.fmt_number(umax * factor, 4)} {unit}."
        )
    else:
        factor = 1.0
        scale_text = "No joint moves in this case: the deformed and undeformed shapes coincide."
    lines = [f"Deformed shape, case '{case}', {projection_for(model.dim)[1]}.", scale_text]
    return _moved(model, u, factor, f"{model.title or 'Model'}: deformed shape, case {case}", lines, "deformed")


def mode_array(model: Model, mode: Any) -> FloatArray | None:
    """A mechanism's movement as (n_nodes, dim): from an array of that shape, a flat dof vector or a
    ``{node id: components}`` mapping (components a sequence or ``{"x": …}``).  None when it does not fit.
    """
    if mode is None:
        return None
    if isinstance(mode, Mapping):
        out = np.zeros((model.n_nodes, model.dim))
        index = model.node_index()
        for key, comp in mode.items():
            i = index.get(str(key))
            if i is None:
                return None
            if isinstance(comp, Mapping):
                for a, axis in enumerate("xyz"[: model.dim]):
                    out[i, a] = float(comp.get(axis, 0.0))
            else:
                vals = np.asarray(comp, dtype=np.float64).reshape(-1)
                if vals.size != model.dim:
                    return None
                out[i] = vals
        return out
    try:
        arr = np.asarray(mode, dtype=np.float64)
    except (TypeError, ValueError):
        return None
    if arr.size != model.n_nodes * model.dim or not np.all(np.isfinite(arr)):
        return None
    return arr.reshape(model.n_nodes, model.dim)


def mechanism(model: Model, mode: FloatArray, number: int, description: str = "") -> Scene:
    """One mechanism: the undeformed shape and the shape moved along the mode.

    A mechanism has no magnitude; the mode is drawn so that its largest joint
    movement is 10 % of the model's span.
    """
    mmax = float(np.sqrt(np.einsum("ij,ij->i", mode, mode)).max()) if mode.size else 0.0
    factor = 0.1 * model_span(model) / mmax if mmax > 0 else 0.0
    lines = [
        f"Mechanism {number}, {projection_for(model.dim)[1]}.",
        "Moved so that the joint that moves most travels 10 % of the model's span (a mechanism has no size).",
    ]
    if description:
        lines.insert(1, description.rstrip(".") + ".")
    return _moved(model, mode, factor, f"{model.title or 'Model'}: mechanism {number}", lines, "mechanism")


def pick_case(result: AuditResult | None, model: Model, context: Mapping[str, Any] | None) -> str | None:
    """The case to draw: ``context["case"]`` (or ``"deformed_case"``), else the first case with a failing
    finding, else the first case.
    """
    ids = model.all_case_ids()
    for key in ("case", "deformed_case"):
        if context and context.get(key) in ids:
            return str(context[key])
    if result is not None:
        for f in _shared.sorted_findings(result.findings):
            if f.case in ids and f.severity >= result.fail_on:
                return f.case
    return ids[0] if ids else None


def case_arrays(context: Mapping[str, Any] | None, case: str | None) -> tuple[FloatArray | None, FloatArray | None]:
    """(displacements, axial forces) of ``case`` from the context, either may be None."""
    if not context or case is None:
        return None, None
    u = (context.get("displacements") or {}).get(case)
    n = (context.get("axial_forces") or {}).get(case)
    sol = context.get("solution")
    if sol is not None and hasattr(sol, "case") and (u is None or n is None):
        cs = sol.case(case)
        if cs is not None:
            u = cs.displacements if u is None else u
            n = cs.axial_forces if n is None else n
    return (
        None if u is None else np.asarray(u, dtype=np.float64),
        None if n is None else np.asarray(n, dtype=np.float64),
    )


#: mechanisms drawn at most (the rest are listed in words)
MAX_MECHANISM_DRAWINGS = 6


def all_scenes(result: AuditResult, model: Model, context: Mapping[str, Any] | None = None) -> list[tuple[str, Scene]]:
    """Every drawing the reports carry, as (short name, scene), in a fixed order."""
    case = pick_case(result, model, context)
    out = [("structure", structure(model, result, case))]
    u, n = case_arrays(context, case)
    if case is not None and n is not None and n.size == model.n_members:
        out.append((f"forces-{case}", forces(model, n, case)))
    if case is not None and u is not None and u.size == model.n_nodes * model.dim:
        out.append((f"deformed-{case}", deformed(model, u, case)))
    k = 0
    for i, m in enumerate(_shared.mechanism_details(result.stability), 1):
        mode = mode_array(model, m.get("mode"))
        if mode is not None and k < MAX_MECHANISM_DRAWINGS:
            out.append((f"mechanism-{i}", mechanism(model, mode, i, m.get("description", ""))))
            k += 1
    return out


__all__ = [
    "ISOMETRIC",
    "MAX_DRAWN_MEMBERS",
    "MAX_LABELS",
    "MAX_MECHANISM_DRAWINGS",
    "MAX_NODE_MARKERS",
    "Transform",
    "all_scenes",
    "case_arrays",
    "case_loads",
    "deformed",
    "fit_transform",
    "forces",
    "mechanism",
    "mode_array",
    "nice_factor",
    "pick_case",
    "structure",
]
