"""Hypothesis strategies for random, guaranteed-stable trusses with supports.

Every strategy draws a model *document*: a plain ``dict`` in the neutral
exchange format (``shared/FORMAT.md``), ready for ``json.dumps`` and
:func:`audit.exchange.parse_model`.  :func:`to_model` does both.

Two families:

* :func:`plane_trusses`, :func:`space_trusses` -- float coordinates anywhere,
  topology grown by Henneberg steps (each new joint tied to two, in space
  three, existing joints that it is placed well away from), so the frame is
  rigid; supports remove every rigid-body motion, so the structure is stable.
  Extra members make it statically indeterminate.
* :func:`rational_plane_trusses`, :func:`rational_space_trusses` -- every
  input number is a terminating decimal and every member length is rational,
  for exact oracles.  Plane: a panel strip of height H whose panel widths w
  make (w, H) the legs of a Pythagorean triple, so every diagonal is rational.
  Space: a tower of Euler bricks 240 x 252 x 275 (face diagonals 348, 365,
  373; nearly a cube, so K stays well conditioned), every face triangulated; a convex polyhedron with triangulated faces
  is rigid (Dehn's theorem; e.g. Connelly, "Rigidity", in Handbook of Convex
  Geometry, 1993, recalled from memory), and so is a stack of them sharing
  whole faces.  Both are rotated by rational rotations (cos, sin) =
  ((m²-n²)/(m²+n²), 2mn/(m²+n²)) whose denominators are powers of 5, so the
  coordinates stay terminating decimals.

Why the Henneberg step keeps a frame rigid: a joint tied by two bars that are
not collinear (in space: three bars not coplanar) to a rigid frame is fixed
to it (Henneberg, *Die graphische Statik der starren Systeme*, 1911, recalled
from memory; common practice).  The placement rules below keep
those angles well away from 0 and 180 degrees, which also keeps K
well-conditioned.

All numbers come out as Python ints or floats whose ``repr`` is the intended
decimal, so the reader's decimal text is exact.
"""

from __future__ import annotations

import json
import math
from fractions import Fraction
from itertools import permutations
from typing import Any

from hypothesis import strategies as st

Doc = dict[str, Any]

# --------------------------------------------------------------------- helpers


def to_model(doc: Doc) -> Any:
    """Parse a drawn document with the project's reader (``audit.exchange.parse_model``)."""
    from audit.exchange import parse_model

    return parse_model(json.dumps(doc))


def _num(q: Fraction | int | float) -> int | float:
    """A Fraction with a terminating decimal expansion, as an int or a float whose repr is that decimal."""
    if isinstance(q, float):
        return q
    q = Fraction(q)
    if q.denominator == 1:
        return int(q)
    f = float(q)
    if Fraction(repr(f)) != q:
        raise ValueError(f"{q} is not a short terminating decimal")
    return f


def _document(
    dim: int,
    nodes: list[tuple[Any, ...]],
    members: list[tuple[int, int]],
    E: list[Any],
    A: list[Any],
    supports: list[Doc],
    load_cases: list[Doc],
    combinations: list[Doc],
    alpha: Any,
    title: str,
) -> Doc:
    axes = "xyz"[:dim]
    doc: Doc = {
        "format": "truss-audit-model",
        "version": 1,
        "title": title,
        "dimensions": dim,
        "units": {"length": "m", "force": "kN", "temperature": "degC"},
        "nodes": [{"id": f"N{i}", **{a: c for a, c in zip(axes, p, strict=True)}} for i, p in enumerate(nodes)],
        "members": [
            {"id": f"M{j}", "start": f"N{s}", "end": f"N{e}", "E": E[j], "A": A[j], "alpha": alpha}
            for j, (s, e) in enumerate(members)
        ],
        "supports": supports,
        "load_cases": load_cases,
    }
    if combinations:
        doc["combinations"] = combinations
    return doc


@st.composite
def _load_cases(
    draw: st.DrawFn,
    n_nodes: int,
    n_members: int,
    dim: int,
    settle_on: list[Doc],
    *,
    exact: bool,
    max_cases: int,
    initial_strains: bool,
    settlements: bool,
) -> list[Doc]:
    """Load cases: nodal loads always; temperature, length errors and settlements if asked."""
    axes = "xyz"[:dim]
    force: st.SearchStrategy[Any]
    small: st.SearchStrategy[Any]
    delta: st.SearchStrategy[Any]
    if exact:
        force = st.integers(-400, 400).map(lambda k: _num(Fraction(k, 4)))
        small = st.integers(-30, 30).map(lambda k: _num(Fraction(k, 10000)))
        delta = st.integers(-60, 60)
    else:
        # zero or of a physical size: a load of 1e-290 kN drives a float64 "reported" solution into the
        # subnormal range, where it is no longer the exact answer the property tests take it for
        force = _physical(1e-3, 500.0)
        small = _physical(1e-7, 3e-3)
        delta = _physical(1e-3, 60.0)
    cases: list[Doc] = []
    for c in range(draw(st.integers(1, max_cases))):
        case: Doc = {"id": f"LC{c}"}
        loaded = draw(st.lists(st.integers(0, n_nodes - 1), min_size=1, max_size=min(4, n_nodes), unique=True))
        case["loads"] = [{"node": f"N{i}", **{f"f{a}": draw(force) for a in axes}} for i in loaded]
        if initial_strains and draw(st.booleans()):
            ms = draw(st.lists(st.integers(0, n_members - 1), min_size=1, max_size=3, unique=True))
            case["temperature_changes"] = [{"member": f"M{j}", "delta": draw(delta)} for j in ms]
        if initial_strains and draw(st.booleans()):
            ms = draw(st.lists(st.integers(0, n_members - 1), min_size=1, max_size=3, unique=True))
            case["length_errors"] = [{"member": f"M{j}", "value": draw(small)} for j in ms]
        if settlements and settle_on and draw(st.booleans()):
            picked = draw(st.sampled_from(settle_on))
            if "axis" in picked:
                entry = {"node": picked["node"], picked["axis"]: draw(small)}
            else:
                entry = {**picked, "value": draw(small)}
            case["support_displacements"] = [entry]
        cases.append(case)
    return cases


def _physical(lo: float, hi: float) -> st.SearchStrategy[float]:
    """0, or a float of magnitude in [lo, hi] with either sign."""
    mag = st.floats(lo, hi, allow_nan=False, allow_infinity=False)
    return st.one_of(st.just(0.0), st.tuples(mag, st.sampled_from([1.0, -1.0])).map(lambda t: t[0] * t[1]))


@st.composite
def _combinations(draw: st.DrawFn, case_ids: list[str], *, exact: bool) -> list[Doc]:
    if len(case_ids) < 2 or not draw(st.booleans()):
        return []
    factor = st.integers(-20, 30).map(lambda k: _num(Fraction(k, 10))) if exact else _physical(1e-2, 3.0)
    chosen = draw(st.lists(st.sampled_from(case_ids), min_size=1, max_size=len(case_ids), unique=True))
    return [{"id": "COMB", "factors": {c: draw(factor) for c in chosen}}]


def _settlement_targets(supports: list[Doc]) -> list[Doc]:
    """Every restrained direction as ``{"node", "axis"}`` or ``{"node", "direction"}``."""
    out: list[Doc] = []
    for s in supports:
        for r in s.get("restrain", []):
            if isinstance(r, str):
                out.append({"node": s["node"], "axis": r})
            else:
                out.append({"node": s["node"], "direction": r["direction"]})
    return out


# ----------------------------------------------------------- float trusses


def _unit(v: list[float]) -> list[float]:
    n = math.sqrt(sum(c * c for c in v))
    return [c / n for c in v]


@st.composite
def plane_trusses(
    draw: st.DrawFn,
    *,
    min_nodes: int = 3,
    max_nodes: int = 10,
    max_extra_members: int = 4,
    max_cases: int = 2,
    springs: bool = True,
    inclined_supports: bool = True,
    initial_strains: bool = False,
    settlements: bool = False,
    combinations: bool = True,
) -> Doc:
    """A random stable plane truss (Henneberg growth from a triangle), as a model document.

    Parameters
    ----------
    min_nodes, max_nodes
        Joint count range (at least 3).
    max_extra_members
        Up to this many bracing members beyond the determinate frame.
    max_cases
        Load cases drawn (1 to ``max_cases``).
    springs, inclined_supports
        Allow a spring support; allow the second support to be an inclined roller.
    initial_strains, settlements
        Allow temperature changes and length errors; allow support displacements.
    combinations
        Allow one combination of the drawn load cases.
    """
    n = draw(st.integers(max(3, min_nodes), max(3, max_nodes)))
    size = draw(st.floats(0.5, 20.0))
    pts: list[list[float]] = [[0.0, 0.0], [size, 0.0]]
    pts.append([size * draw(st.floats(0.2, 0.8)), size * draw(st.floats(0.4, 1.2)) * draw(st.sampled_from([1, -1]))])
    members: list[tuple[int, int]] = [(0, 1), (1, 2), (2, 0)]
    for k in range(3, n):
        a, b = members[draw(st.integers(0, len(members) - 1))]
        pa, pb = pts[a], pts[b]
        d = [pb[0] - pa[0], pb[1] - pa[1]]
        t = draw(st.floats(-0.4, 0.4))
        h = draw(st.floats(0.5, 1.3)) * draw(st.sampled_from([1, -1]))
        mid = [(pa[0] + pb[0]) / 2, (pa[1] + pb[1]) / 2]
        pts.append([mid[0] + t * d[0] - h * d[1], mid[1] + t * d[1] + h * d[0]])
        members += [(a, k), (b, k)]
    lengths = [math.dist(pts[s], pts[e]) for s, e in members]
    min_len = 0.2 * min(lengths)
    existing = {frozenset(m) for m in members}
    for _ in range(draw(st.integers(0, max_extra_members))):
        s, e = draw(st.integers(0, n - 1)), draw(st.integers(0, n - 1))
        if s != e and frozenset((s, e)) not in existing and math.dist(pts[s], pts[e]) > min_len:
            members.append((s, e))
            existing.add(frozenset((s, e)))
    # rigid placement: rotate and translate the whole frame
    th = draw(st.floats(-math.pi, math.pi))
    off = [draw(st.floats(-100.0, 100.0)), draw(st.floats(-100.0, 100.0))]
    c, s_ = math.cos(th), math.sin(th)
    nodes = [(c * x - s_ * y + off[0], s_ * x + c * y + off[1]) for x, y in pts]
    # supports: pin at N0; N1 restrained along a direction within 60 degrees of the normal to N0-N1
    d01 = [nodes[1][0] - nodes[0][0], nodes[1][1] - nodes[0][1]]
    normal = _unit([-d01[1], d01[0]])
    supports: list[Doc] = [{"node": "N0", "restrain": ["x", "y"]}]
    if inclined_supports and draw(st.booleans()):
        phi = draw(st.floats(-math.pi / 3, math.pi / 3))
        dvec = [
            math.cos(phi) * normal[0] - math.sin(phi) * normal[1],
            math.sin(phi) * normal[0] + math.cos(phi) * normal[1],
        ]
        supports.append({"node": "N1", "restrain": [{"direction": dvec}]})
    else:
        # the axis closest to the normal is never parallel to N0-N1
        supports.append({"node": "N1", "restrain": ["x" if abs(normal[0]) >= abs(normal[1]) else "y"]})
    if springs and n > 2 and draw(st.booleans()):
        supports.append(
            {
                "node": "N2",
                "springs": [{"axis": draw(st.sampled_from(["x", "y"])), "stiffness": draw(st.floats(1.0, 1e5))}],
            }
        )
    E = [draw(st.floats(1e7, 3e8)) for _ in members]
    A = [draw(st.floats(1e-4, 1e-2)) for _ in members]
    targets = _settlement_targets(supports)
    cases = draw(
        _load_cases(
            n,
            len(members),
            2,
            targets,
            exact=False,
            max_cases=max_cases,
            initial_strains=initial_strains,
            settlements=settlements,
        )
    )
    combs = draw(_combinations([c["id"] for c in cases], exact=False)) if combinations else []
    return _document(2, nodes, members, E, A, supports, cases, combs, 1.2e-5, "random stable plane truss")


@st.composite
def space_trusses(
    draw: st.DrawFn,
    *,
    min_nodes: int = 4,
    max_nodes: int = 10,
    max_extra_members: int = 4,
    max_cases: int = 2,
    springs: bool = True,
    inclined_supports: bool = True,
    initial_strains: bool = False,
    settlements: bool = False,
    combinations: bool = True,
) -> Doc:
    """A random stable space truss (Henneberg growth from a tetrahedron), as a model document.

    Supports are the 3-2-1 scheme: N0 fixed, N1 held in the two directions normal
    to N0-N1, N2 held normal to the plane N0-N1-N2; this removes all six
    rigid-body motions (common practice).  Parameters as in :func:`plane_trusses`.
    """
    n = draw(st.integers(max(4, min_nodes), max(4, max_nodes)))
    size = draw(st.floats(0.5, 20.0))
    f = st.floats(-0.15, 0.15)
    pts: list[list[float]] = [
        [0.0, 0.0, 0.0],
        [size, 0.0, 0.0],
        [size * (0.5 + draw(f)), size * (0.85 + draw(f)), 0.0],
        [size * (0.5 + draw(f)), size * (0.3 + draw(f)), size * (0.8 + draw(f))],
    ]
    members: list[tuple[int, int]] = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)]
    faces: list[tuple[int, int, int]] = [(0, 1, 2), (0, 1, 3), (0, 2, 3), (1, 2, 3)]
    for k in range(4, n):
        a, b, c = faces[draw(st.integers(0, len(faces) - 1))]
        pa, pb, pc = pts[a], pts[b], pts[c]
        u = [pb[i] - pa[i] for i in range(3)]
        v = [pc[i] - pa[i] for i in range(3)]
        nrm = [u[1] * v[2] - u[2] * v[1], u[2] * v[0] - u[0] * v[2], u[0] * v[1] - u[1] * v[0]]
        nrm = _unit(nrm)
        scale = (math.dist(pa, pb) + math.dist(pb, pc) + math.dist(pc, pa)) / 3
        cen = [(pa[i] + pb[i] + pc[i]) / 3 for i in range(3)]
        h = draw(st.floats(0.6, 1.2)) * scale * draw(st.sampled_from([1, -1]))
        s1, s2 = draw(st.floats(-0.1, 0.1)), draw(st.floats(-0.1, 0.1))
        pts.append([cen[i] + h * nrm[i] + s1 * u[i] + s2 * v[i] for i in range(3)])
        members += [(a, k), (b, k), (c, k)]
        faces += [(a, b, k), (b, c, k), (a, c, k)]
    lengths = [math.dist(pts[s], pts[e]) for s, e in members]
    min_len = 0.2 * min(lengths)
    existing = {frozenset(m) for m in members}
    for _ in range(draw(st.integers(0, max_extra_members))):
        s, e = draw(st.integers(0, n - 1)), draw(st.integers(0, n - 1))
        if s != e and frozenset((s, e)) not in existing and math.dist(pts[s], pts[e]) > min_len:
            members.append((s, e))
            existing.add(frozenset((s, e)))
    # rigid placement: a random rotation (unit quaternion) and a translation
    q = _unit([draw(st.floats(-1.0, 1.0)) for _ in range(3)] + [draw(st.floats(0.1, 1.0))])
    x_, y_, z_, w_ = q
    R = [
        [1 - 2 * (y_ * y_ + z_ * z_), 2 * (x_ * y_ - z_ * w_), 2 * (x_ * z_ + y_ * w_)],
        [2 * (x_ * y_ + z_ * w_), 1 - 2 * (x_ * x_ + z_ * z_), 2 * (y_ * z_ - x_ * w_)],
        [2 * (x_ * z_ - y_ * w_), 2 * (y_ * z_ + x_ * w_), 1 - 2 * (x_ * x_ + y_ * y_)],
    ]
    off = [draw(st.floats(-100.0, 100.0)) for _ in range(3)]
    nodes = [tuple(sum(R[i][j] * p[j] for j in range(3)) + off[i] for i in range(3)) for p in pts]
    # 3-2-1 supports, in the frame's own directions
    e1 = _unit([nodes[1][i] - nodes[0][i] for i in range(3)])
    w = [nodes[2][i] - nodes[0][i] for i in range(3)]
    e3 = _unit([e1[1] * w[2] - e1[2] * w[1], e1[2] * w[0] - e1[0] * w[2], e1[0] * w[1] - e1[1] * w[0]])
    e2 = [e3[1] * e1[2] - e3[2] * e1[1], e3[2] * e1[0] - e3[0] * e1[2], e3[0] * e1[1] - e3[1] * e1[0]]
    supports: list[Doc] = [{"node": "N0", "restrain": ["x", "y", "z"]}]
    if inclined_supports:
        supports.append({"node": "N1", "restrain": [{"direction": e2}, {"direction": e3}]})
        supports.append({"node": "N2", "restrain": [{"direction": e3}]})
    else:
        # N1, N2 fully held: statically indeterminate supports, axes only
        supports.append({"node": "N1", "restrain": ["x", "y", "z"]})
        supports.append({"node": "N2", "restrain": ["x", "y", "z"]})
    if springs and draw(st.booleans()):
        supports.append(
            {
                "node": "N3",
                "springs": [{"axis": draw(st.sampled_from(["x", "y", "z"])), "stiffness": draw(st.floats(1.0, 1e5))}],
            }
        )
    E = [draw(st.floats(1e7, 3e8)) for _ in members]
    A = [draw(st.floats(1e-4, 1e-2)) for _ in members]
    targets = _settlement_targets(supports)
    cases = draw(
        _load_cases(
            n,
            len(members),
            3,
            targets,
            exact=False,
            max_cases=max_cases,
            initial_strains=initial_strains,
            settlements=settlements,
        )
    )
    combs = draw(_combinations([c["id"] for c in cases], exact=False)) if combinations else []
    return _document(3, nodes, members, E, A, supports, cases, combs, 1.2e-5, "random stable space truss")


# -------------------------------------------------------- rational trusses

#: (cos, sin) of rotations whose entries are terminating decimals (denominators 5, 25, 125, 625)
RATIONAL_ROTATIONS: tuple[tuple[Fraction, Fraction], ...] = (
    (Fraction(1), Fraction(0)),
    (Fraction(3, 5), Fraction(4, 5)),
    (Fraction(4, 5), Fraction(-3, 5)),
    (Fraction(7, 25), Fraction(24, 25)),
    (Fraction(-24, 25), Fraction(7, 25)),
    (Fraction(117, 125), Fraction(44, 125)),
    (Fraction(527, 625), Fraction(-336, 625)),
)

#: panel heights and the panel widths w (w <= 2H) for which sqrt(w² + H²) is an integer
PANEL_WIDTHS: dict[int, tuple[int, ...]] = {
    h: tuple(w for w in range(1, 2 * h + 1) if math.isqrt(w * w + h * h) ** 2 == w * w + h * h) for h in (12, 24, 60)
}

#: an Euler brick: every face diagonal is an integer (348, 365, 373)
EULER_BRICK = (240, 252, 275)


def _rot2(c: Fraction, s: Fraction, p: tuple[Fraction, Fraction]) -> tuple[Fraction, Fraction]:
    return (c * p[0] - s * p[1], s * p[0] + c * p[1])


@st.composite
def _exact_properties(draw: st.DrawFn, n_members: int) -> tuple[list[Any], list[Any]]:
    E = [_num(Fraction(draw(st.integers(50, 250))) * 1000000) for _ in range(n_members)]
    A = [_num(Fraction(draw(st.integers(1, 100)), 10000)) for _ in range(n_members)]
    return E, A


@st.composite
def rational_plane_trusses(
    draw: st.DrawFn,
    *,
    max_panels: int = 4,
    determinate: bool = False,
    rotate: bool = True,
    max_cases: int = 2,
    springs: bool = True,
    initial_strains: bool = False,
    settlements: bool = False,
    combinations: bool = True,
) -> Doc:
    """A panel-strip plane truss with rational member lengths and decimal inputs only.

    Bottom joints N0..Nn at (x_i, 0), top joints at (x_i, H); chords, verticals
    and one diagonal per panel (a second crossing diagonal and extra supports
    unless ``determinate``).  Pinned at the first bottom joint, roller normal
    to the chord at the last.  With ``determinate`` and without ``rotate`` the
    roller is vertical and there are no springs: the form the method of joints
    and ``sympy``'s Truss accept.
    """
    H = draw(st.sampled_from(sorted(PANEL_WIDTHS)))
    n = draw(st.integers(1, max_panels))
    widths = [draw(st.sampled_from(PANEL_WIDTHS[H])) for _ in range(n)]
    xs = [Fraction(0)]
    for w in widths:
        xs.append(xs[-1] + w)
    scale = draw(st.sampled_from([Fraction(1, 4), Fraction(1, 2), Fraction(1), Fraction(3, 2)]))
    local = [(x * scale, Fraction(0)) for x in xs] + [(x * scale, H * scale) for x in xs]
    top = n + 1  # index of the first top joint
    members: list[tuple[int, int]] = []
    members += [(i, i + 1) for i in range(n)]  # bottom chord
    members += [(top + i, top + i + 1) for i in range(n)]  # top chord
    members += [(i, top + i) for i in range(n + 1)]  # verticals
    for i in range(n):
        if draw(st.booleans()):
            members.append((i, top + i + 1))
        else:
            members.append((top + i, i + 1))
        if not determinate and draw(st.booleans()):  # the crossing diagonal
            members.append((top + i, i + 1) if members[-1] == (i, top + i + 1) else (i, top + i + 1))
    c, s = draw(st.sampled_from(RATIONAL_ROTATIONS)) if rotate else (Fraction(1), Fraction(0))
    off = (Fraction(draw(st.integers(-500, 500)), 10), Fraction(draw(st.integers(-500, 500)), 10))
    nodes = [tuple(_num(v + o) for v, o in zip(_rot2(c, s, p), off, strict=True)) for p in local]
    normal = [_num(-s), _num(c)]  # the rotated local y axis
    supports: list[Doc] = [{"node": "N0", "restrain": ["x", "y"]}]
    if rotate and s != 0:
        supports.append({"node": f"N{n}", "restrain": [{"direction": normal}]})
    else:
        supports.append({"node": f"N{n}", "restrain": ["y"]})
    if not determinate:
        if draw(st.booleans()):
            supports.append({"node": f"N{top + n}", "restrain": ["x"]})
        if springs and draw(st.booleans()):
            ks = _num(Fraction(draw(st.integers(1, 10**6)), 10))
            supports.append({"node": f"N{top}", "springs": [{"direction": normal, "stiffness": ks}]})
    E, A = draw(_exact_properties(len(members)))
    targets = _settlement_targets(supports)
    cases = draw(
        _load_cases(
            len(nodes),
            len(members),
            2,
            targets,
            exact=True,
            max_cases=max_cases,
            initial_strains=initial_strains,
            settlements=settlements,
        )
    )
    combs = draw(_combinations([c_["id"] for c_ in cases], exact=True)) if combinations else []
    return _document(2, nodes, members, E, A, supports, cases, combs, _num(Fraction(12, 10**6)), "rational panel truss")


@st.composite
def rational_space_trusses(
    draw: st.DrawFn,
    *,
    max_stories: int = 2,
    determinate: bool = False,
    rotate: bool = True,
    max_cases: int = 2,
    springs: bool = True,
    initial_strains: bool = False,
    settlements: bool = False,
    combinations: bool = True,
) -> Doc:
    """A tower of Euler bricks, every face triangulated, with rational lengths and decimal inputs only.

    Supports are 3-2-1 on the base (determinate for one storey), or, unless
    ``determinate``, all four base joints may be held fully.
    """
    a, b, h = draw(st.sampled_from(list(permutations(EULER_BRICK))))
    stories = draw(st.integers(1, max_stories))
    scale = draw(st.sampled_from([Fraction(1, 100), Fraction(1, 50), Fraction(1, 40), Fraction(1, 20)]))
    corners = [(0, 0), (a, 0), (a, b), (0, b)]
    local = [
        (Fraction(x) * scale, Fraction(y) * scale, Fraction(k * h) * scale)
        for k in range(stories + 1)
        for x, y in corners
    ]

    def nid(level: int, corner: int) -> int:
        return 4 * level + corner

    members: list[tuple[int, int]] = []
    for k in range(stories + 1):
        members += [(nid(k, i), nid(k, (i + 1) % 4)) for i in range(4)]  # ring
        if draw(st.booleans()):  # one diagonal of the horizontal face
            members.append((nid(k, 0), nid(k, 2)))
        else:
            members.append((nid(k, 1), nid(k, 3)))
        if not determinate and draw(st.booleans()):
            members.append((nid(k, 1), nid(k, 3)) if members[-1] == (nid(k, 0), nid(k, 2)) else (nid(k, 0), nid(k, 2)))
    for k in range(stories):
        members += [(nid(k, i), nid(k + 1, i)) for i in range(4)]  # posts
        for i in range(4):  # one diagonal per side face
            j = (i + 1) % 4
            if draw(st.booleans()):
                members.append((nid(k, i), nid(k + 1, j)))
            else:
                members.append((nid(k, j), nid(k + 1, i)))
    # rotation: about z by a rational angle, then optionally about x
    cz, sz = draw(st.sampled_from(RATIONAL_ROTATIONS)) if rotate else (Fraction(1), Fraction(0))
    cx, sx = draw(st.sampled_from(RATIONAL_ROTATIONS[:4])) if rotate else (Fraction(1), Fraction(0))

    def rot(p: tuple[Fraction, Fraction, Fraction]) -> tuple[Fraction, Fraction, Fraction]:
        x, y = _rot2(cz, sz, (p[0], p[1]))
        y2, z2 = _rot2(cx, sx, (y, p[2]))
        return (x, y2, z2)

    off = tuple(Fraction(draw(st.integers(-200, 200)), 10) for _ in range(3))
    nodes = [tuple(_num(v + o) for v, o in zip(rot(p), off, strict=True)) for p in local]
    ez = [_num(v) for v in rot((Fraction(0), Fraction(0), Fraction(1)))]
    ey = [_num(v) for v in rot((Fraction(0), Fraction(1), Fraction(0)))]
    supports: list[Doc]
    if not determinate and draw(st.booleans()):
        supports = [{"node": f"N{i}", "restrain": ["x", "y", "z"]} for i in range(4)]
    else:
        supports = [
            {"node": "N0", "restrain": ["x", "y", "z"]},
            {"node": "N1", "restrain": [{"direction": ey}, {"direction": ez}]},
            {"node": "N3", "restrain": [{"direction": ez}]},
        ]
    if springs and not determinate and draw(st.booleans()):
        ks = _num(Fraction(draw(st.integers(1, 10**6)), 10))
        supports.append({"node": f"N{4 * stories}", "springs": [{"direction": ez, "stiffness": ks}]})
    E, A = draw(_exact_properties(len(members)))
    targets = _settlement_targets(supports)
    cases = draw(
        _load_cases(
            len(nodes),
            len(members),
            3,
            targets,
            exact=True,
            max_cases=max_cases,
            initial_strains=initial_strains,
            settlements=settlements,
        )
    )
    combs = draw(_combinations([c_["id"] for c_ in cases], exact=True)) if combinations else []
    return _document(3, nodes, members, E, A, supports, cases, combs, _num(Fraction(12, 10**6)), "rational brick tower")
