"""The solver against published worked examples and closed forms derived here.

Each check names its source.  Two kinds of check:

* printed values: every number in a bundled case's ``results`` block
  (``reference_cases/published``, sources in ``SOURCES.md`` there) must be
  reproduced to within half a unit in its last printed digit (rounding of
  the exact answer), or one full unit where the values are a textbook's
  printed answers (recalled from memory): a textbook carries rounded
  intermediate numbers through its hand solution, so its last digit can be
  one off;
* closed forms: derived in the test with sympy (force method, joint
  equilibrium, compatibility), compared at a tight relative tolerance.
"""

from __future__ import annotations

import json
from decimal import Decimal
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from strategies import rational_plane_trusses, to_model

from audit.solve import solve_model

PUBLISHED_DIR = Path(__file__).resolve().parent.parent / "reference_cases" / "published"
AXES = "xyz"
#: closed forms are exact: the float solver must match them to this relative accuracy
CLOSED_FORM_RTOL = 1e-10


def _doc(name: str) -> dict[str, Any]:
    return json.loads((PUBLISHED_DIR / name).read_text(), parse_float=Decimal, parse_int=Decimal)


def _printed_cases() -> list[Any]:
    out = []
    for path in sorted(PUBLISHED_DIR.glob("*.json")):
        for case_id in _doc(path.name).get("results", {}).get("cases", {}):
            out.append(pytest.param(path.name, case_id, id=f"{path.stem}/{case_id}"))
    return out


def _half_unit(d: Decimal) -> float:
    """Half a unit in the last printed digit: the most that rounding to the printed digits explains."""
    exponent = d.as_tuple().exponent
    assert isinstance(exponent, int)
    return 0.5 * 10.0**exponent


def _rel(a: float, b: float) -> float:
    return abs(a - b) / max(abs(b), 1e-300)


# ------------------------------------------------------------ printed values


@pytest.mark.parametrize(("name", "case_id"), _printed_cases())
def test_printed_results_are_reproduced(name: str, case_id: str, published: Any, record_property: Any) -> None:
    """Every printed number of the case's source, to within rounding of its last printed digit.

    Sources: ``reference_cases/published/SOURCES.md`` (one entry per file).
    """
    doc, model = published(name)
    case = solve_model(model).case(case_id)
    assert case is not None
    printed = doc["results"]["cases"][case_id]
    textbook = "recalled from memory" in str(doc["results"].get("source", ""))
    units = 2.0 if textbook else 1.0  # in half units of the last printed digit
    nodes, members = model.node_index(), model.member_index()
    worst = 0.0
    checked = 0
    for node, comps in printed.get("displacements", {}).items():
        for axis, value in comps.items():
            got = case.displacements[nodes[node], AXES.index(axis)]
            assert abs(got - float(value)) <= units * _half_unit(value) * (1 + 1e-9), (node, axis, got, value)
            worst, checked = max(worst, _rel(got, float(value)) if value else 0.0), checked + 1
    for member, value in printed.get("axial_forces", {}).items():
        got = case.axial_forces[members[member]]
        assert abs(got - float(value)) <= units * _half_unit(value) * (1 + 1e-9), (member, got, value)
        worst, checked = max(worst, _rel(got, float(value)) if value else 0.0), checked + 1
    for node, comps in printed.get("reactions", {}).items():
        for axis, value in comps.items():
            got = case.reactions[nodes[node], AXES.index(axis)]
            assert abs(got - float(value)) <= units * _half_unit(value) * (1 + 1e-9), (node, axis, got, value)
            worst, checked = max(worst, _rel(got, float(value)) if value else 0.0), checked + 1
    assert checked > 0
    record_property("max_relative_difference", worst)


# ------------------------------------------------- method of joints (sympy)


def method_of_joints(doc: dict[str, Any]) -> tuple[dict[str, sp.Expr], dict[tuple[str, str], sp.Expr]]:
    """Member forces (tension positive) and support reactions of a determinate plane truss, by hand methods.

    Reactions first, from the three equilibrium equations of the whole truss
    (ΣFx = 0, ΣFy = 0, ΣM = 0 about the origin); then joint by joint, always
    taking a joint with at most two unknown member forces and solving its two
    equations ΣFx = ΣFy = 0.  This is the method of joints as taught in
    Hibbeler, *Engineering Mechanics: Statics*, 12th ed., §6.2 (section
    number recalled from memory).  Exact arithmetic from the decimal texts.

    Returns
    -------
    forces
        member id -> axial force.
    reactions
        (node id, "x" or "y") -> global reaction component.
    """
    xy = {str(n["id"]): (sp.Rational(str(n["x"])), sp.Rational(str(n["y"]))) for n in doc["nodes"]}
    loads = {n: [sp.Integer(0), sp.Integer(0)] for n in xy}
    assert len(doc["load_cases"]) == 1
    for ld in doc["load_cases"][0].get("loads", []):
        loads[str(ld["node"])][0] += sp.Rational(str(ld.get("fx", 0)))
        loads[str(ld["node"])][1] += sp.Rational(str(ld.get("fy", 0)))
    # one unknown reaction magnitude per restraint, acting along the restrained direction
    react: list[tuple[str, sp.Symbol, tuple[sp.Expr, sp.Expr]]] = []
    for s in doc.get("supports", []):
        assert "springs" not in s
        for r in s["restrain"]:
            d = (1, 0) if r == "x" else (0, 1) if r == "y" else tuple(sp.Rational(str(c)) for c in r["direction"])
            react.append((str(s["node"]), sp.Symbol(f"R{len(react)}"), (sp.S(d[0]), sp.S(d[1]))))
    assert len(react) == 3, "method of joints here needs exactly three reaction components"
    fx = sum(loads[n][0] for n in xy) + sum(sym * d[0] for _, sym, d in react)
    fy = sum(loads[n][1] for n in xy) + sum(sym * d[1] for _, sym, d in react)
    mz = sum(xy[n][0] * loads[n][1] - xy[n][1] * loads[n][0] for n in xy) + sum(
        sym * (xy[n][0] * d[1] - xy[n][1] * d[0]) for n, sym, d in react
    )
    rsol = sp.solve([fx, fy, mz], [sym for _, sym, _ in react], dict=True)
    assert len(rsol) == 1
    known = dict(loads)
    for n, sym, d in react:
        known[n] = [known[n][0] + rsol[0][sym] * d[0], known[n][1] + rsol[0][sym] * d[1]]
    members = {str(m["id"]): (str(m["start"]), str(m["end"])) for m in doc["members"]}
    forces: dict[str, sp.Expr] = {}
    while len(forces) < len(members):
        progress = False
        for joint in xy:
            around = [m for m, (s, e) in members.items() if joint in (s, e)]
            unknown = [m for m in around if m not in forces]
            if not unknown or len(unknown) > 2:
                continue
            syms = [sp.Symbol(f"N_{m}") for m in unknown]
            eqs = [known[joint][0], known[joint][1]]
            for m in around:
                s, e = members[m]
                other = e if s == joint else s
                v = (xy[other][0] - xy[joint][0], xy[other][1] - xy[joint][1])
                length = sp.sqrt(v[0] ** 2 + v[1] ** 2)
                t = forces[m] if m in forces else syms[unknown.index(m)]
                eqs = [eqs[0] + t * v[0] / length, eqs[1] + t * v[1] / length]  # a tension pulls the joint
            sol = sp.solve(eqs, syms, dict=True)
            assert len(sol) == 1, f"joint {joint} is not solvable"
            assert all(s_ in sol[0] for s_ in syms), f"joint {joint} is not solvable"
            forces.update({m: sol[0][s_] for m, s_ in zip(unknown, syms, strict=True)})
            progress = True
        assert progress, "no joint with at most two unknowns: not a simple truss"
    reactions: dict[tuple[str, str], sp.Expr] = {}
    for n, sym, d in react:
        for i, a in enumerate("xy"):
            reactions[(n, a)] = reactions.get((n, a), 0) + rsol[0][sym] * d[i]
    return forces, reactions


def test_hibbeler_example_6_1_by_method_of_joints(published: Any) -> None:
    """Hibbeler, *Engineering Mechanics: Statics*, 12th ed., Example 6.1 (recalled from memory).

    Printed: F_BC = 707.1 N (C), F_BA = 500 N (T), F_CA = 500 N (T), C_y = 500 N.
    Hand solution here: method of joints, exact; the solver must match it to 1e-10.
    """
    doc, model = published("hibbeler_statics_ex6_1.json")
    forces, reactions = method_of_joints(doc)
    assert forces["BC"] == -500 * sp.sqrt(2)
    assert forces["AB"] == 500
    assert forces["CA"] == 500
    case = solve_model(model).case("P")
    assert case is not None
    for m, j in model.member_index().items():
        assert case.axial_forces[j] == pytest.approx(float(forces[m]), rel=CLOSED_FORM_RTOL)
    nodes = model.node_index()
    for (n, a), value in reactions.items():
        assert case.reactions[nodes[n], "xy".index(a)] == pytest.approx(float(value), rel=CLOSED_FORM_RTOL, abs=1e-9)


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rational_plane_trusses(determinate=True, rotate=False, max_panels=3, max_cases=1, combinations=False))
def test_random_determinate_truss_by_method_of_joints(doc: dict[str, Any]) -> None:
    """Random simple panel trusses: solver forces and reactions equal the exact method-of-joints solution."""
    forces, reactions = method_of_joints(doc)
    model = to_model(doc)
    case = solve_model(model).cases[0]
    scale = max(1.0, max(abs(float(v)) for v in forces.values()))
    for m, j in model.member_index().items():
        assert abs(case.axial_forces[j] - float(forces[m])) <= 1e-10 * scale
    nodes = model.node_index()
    for (n, a), value in reactions.items():
        assert abs(case.reactions[nodes[n], "xy".index(a)] - float(value)) <= 1e-10 * scale


# ------------------------------------------------- symmetric three-bar truss


def three_bar_closed_form() -> dict[str, sp.Expr]:
    """Forces in the symmetric three-bar truss by the force method, derived symbolically.

    Central bar vertical, length L; outer bars at angle θ to it (c = cos θ),
    length L/c; all EA.  Joint below the supports, load P downwards.
    Redundant X = force in the central bar; equilibrium of the joint gives
    the outer force (P - X)/(2c); compatibility: the outer bars' elongation is
    the joint's drop times c.  The central bar's free elongation e0 stands
    for heating (α ΔT L) or lack of fit (fabricated minus geometric length).

    Textbook results it must reproduce: X = P/(1 + 2c³) and
    X = -(EA e0/L) · 2c³/(1 + 2c³) (Timoshenko, *Strength of Materials*,
    Part I, 3rd ed., chapter I: statically indeterminate problems, and
    initial and thermal stresses; article numbers recalled from memory as
    Art. 6 and Art. 7).
    """
    P, EA, L, c, e0, X, drop = sp.symbols("P EA L c e0 X drop", real=True)
    outer = (P - X) / (2 * c)
    eqs = [
        sp.Eq(drop, X * L / EA + e0),  # central bar: elongation = drop
        sp.Eq(drop * c, outer * (L / c) / EA),  # outer bars: elongation = drop·cos θ
    ]
    sol = sp.solve(eqs, [X, drop], dict=True)[0]
    central = sp.simplify(sol[X])
    return {"central": central, "outer": sp.simplify(outer.subs(X, central)), "drop": sp.simplify(sol[drop])}


THREE_BAR = {"EA": sp.Integer(200000), "L": sp.Integer(4), "c": sp.Rational(4, 5)}


def test_three_bar_force_method_reproduces_textbook_formulas() -> None:
    """The symbolic derivation equals Timoshenko's closed forms (see :func:`three_bar_closed_form`)."""
    f = three_bar_closed_form()
    P, EA, L, c, e0 = sp.symbols("P EA L c e0", real=True)
    loaded = {k: v.subs(e0, 0) for k, v in f.items()}
    assert sp.simplify(loaded["central"] - P / (1 + 2 * c**3)) == 0
    assert sp.simplify(loaded["outer"] - P * c**2 / (1 + 2 * c**3)) == 0
    strained = {k: v.subs(P, 0) for k, v in f.items()}
    assert sp.simplify(strained["central"] + EA * e0 / L * 2 * c**3 / (1 + 2 * c**3)) == 0


def _three_bar_values(P: sp.Expr, e0: sp.Expr) -> dict[str, float]:
    f = three_bar_closed_form()
    sym = {s.name: s for s in set().union(*(v.free_symbols for v in f.values()))}
    subs = {sym[k]: v for k, v in THREE_BAR.items() if k in sym}
    subs.update({sym[k]: v for k, v in (("P", P), ("e0", e0)) if k in sym})
    return {k: float(v.subs(subs)) for k, v in f.items()}


@pytest.mark.parametrize(
    ("case_id", "P", "e0"),
    [
        pytest.param("load", sp.Integer(100), sp.Integer(0), id="load-100kN"),
        pytest.param("heat", sp.Integer(0), sp.Rational(12, 10**6) * 40 * 4, id="heat-40degC"),
        pytest.param("lack_of_fit", sp.Integer(0), sp.Rational(-2, 1000), id="2mm-short"),
    ],
)
def test_three_bar_closed_form(case_id: str, P: sp.Expr, e0: sp.Expr, published: Any) -> None:
    """Timoshenko's symmetric three-bar truss (closed form above): forces, reactions, joint drop."""
    _, model = published("timoshenko_three_bar.json")
    want = _three_bar_values(P, e0)
    case = solve_model(model).case(case_id)
    assert case is not None
    m = model.member_index()
    assert case.axial_forces[m["BD"]] == pytest.approx(want["central"], rel=CLOSED_FORM_RTOL)
    assert case.axial_forces[m["AD"]] == pytest.approx(want["outer"], rel=CLOSED_FORM_RTOL)
    assert case.axial_forces[m["CD"]] == pytest.approx(want["outer"], rel=CLOSED_FORM_RTOL)
    d = model.node_index()["D"]
    assert case.displacements[d, 1] == pytest.approx(-want["drop"], rel=CLOSED_FORM_RTOL)
    assert abs(case.displacements[d, 0]) <= 1e-12 * abs(want["drop"])
    # the central support carries the central force straight up
    assert case.reactions[model.node_index()["B"], 1] == pytest.approx(want["central"], rel=CLOSED_FORM_RTOL)


def _three_bar_by_compatibility(settle: dict[str, tuple[sp.Expr, sp.Expr]]) -> dict[str, Any]:
    """Three-bar truss with prescribed support movements: joint displacement (u, v) from compatibility.

    Each bar's elongation is n·(u_D - u_S) with n the unit vector from support
    to joint; N = EA/L · elongation; the joint's equilibrium Σ(-N n) = 0
    fixes (u, v).  Common practice (support movement in an indeterminate truss;
    e.g. Hibbeler, *Structural Analysis*, 8th ed., ch. 10, recalled from memory).
    """
    supports = {"A": (-3, 4), "B": (0, 4), "C": (3, 4)}
    u, v = sp.symbols("u v")
    forces, fx, fy = {}, sp.Integer(0), sp.Integer(0)
    for name, (sx, sy) in supports.items():
        length = sp.sqrt(sx**2 + sy**2)
        n = (-sx / length, -sy / length)
        gs = settle.get(name, (0, 0))
        N = THREE_BAR["EA"] / length * (n[0] * (u - gs[0]) + n[1] * (v - gs[1]))
        forces[name] = N
        fx, fy = fx - N * n[0], fy - N * n[1]
    sol = sp.solve([fx, fy], [u, v], dict=True)[0]
    return {"u": sol[u], "v": sol[v], **{k: N.subs(sol) for k, N in forces.items()}}


def test_three_bar_support_settlement(published: Any) -> None:
    """Support C moves (1 mm, -3 mm): forces and joint movement from compatibility (above)."""
    _, model = published("timoshenko_three_bar.json")
    want = _three_bar_by_compatibility({"C": (sp.Rational(1, 1000), sp.Rational(-3, 1000))})
    case = solve_model(model).case("settlement")
    assert case is not None
    m, n = model.member_index(), model.node_index()
    for node, member in (("A", "AD"), ("B", "BD"), ("C", "CD")):
        assert case.axial_forces[m[member]] == pytest.approx(float(want[node]), rel=CLOSED_FORM_RTOL)
    assert case.displacements[n["D"], 0] == pytest.approx(float(want["u"]), rel=CLOSED_FORM_RTOL)
    assert case.displacements[n["D"], 1] == pytest.approx(float(want["v"]), rel=CLOSED_FORM_RTOL)
    assert case.displacements[n["C"]] == pytest.approx([0.001, -0.003], rel=1e-15)


def test_three_bar_combination_is_the_factored_sum(published: Any) -> None:
    """Superposition (linear elasticity; common practice): design = 1.35 load + 0.9 heat + 1.0 lack of fit."""
    _, model = published("timoshenko_three_bar.json")
    parts = {
        "load": _three_bar_values(sp.Integer(100), sp.Integer(0)),
        "heat": _three_bar_values(sp.Integer(0), sp.Rational(12, 10**6) * 160),
        "lack_of_fit": _three_bar_values(sp.Integer(0), sp.Rational(-2, 1000)),
    }
    factors = {"load": 1.35, "heat": 0.9, "lack_of_fit": 1.0}
    want = {k: sum(factors[c] * parts[c][k] for c in factors) for k in ("central", "outer", "drop")}
    case = solve_model(model).case("design")
    assert case is not None
    m = model.member_index()
    assert case.axial_forces[m["BD"]] == pytest.approx(want["central"], rel=CLOSED_FORM_RTOL)
    assert case.axial_forces[m["AD"]] == pytest.approx(want["outer"], rel=CLOSED_FORM_RTOL)
    assert case.displacements[model.node_index()["D"], 1] == pytest.approx(-want["drop"], rel=CLOSED_FORM_RTOL)


# ------------------------------------------------------------------ tripod


def test_tripod_space_truss_by_joint_equilibrium(published: Any) -> None:
    """Tripod: apex equilibrium (3 equations, 3 leg forces) and apex displacement from leg elongations.

    Statics of a space joint (common practice; e.g. Beer & Johnston, *Vector
    Mechanics for Engineers: Statics*, the method of joints for space trusses).
    """
    doc, model = published("tripod_space.json")
    xyz = {str(n["id"]): sp.Matrix([sp.Rational(str(n[a])) for a in AXES]) for n in doc["nodes"]}
    load = sp.Matrix([10, -5, -60])
    EA = sp.Rational(str(doc["materials"]["steel"]["E"])) * sp.Rational(str(doc["sections"]["leg"]["A"]))
    legs = {str(m["id"]): str(m["start"]) for m in doc["members"]}
    N = {m: sp.Symbol(f"N_{m}") for m in legs}
    geo = {m: ((xyz[s] - xyz["D"]) / (xyz[s] - xyz["D"]).norm(), (xyz[s] - xyz["D"]).norm()) for m, s in legs.items()}
    equilibrium = load + sum((N[m] * geo[m][0] for m in legs), sp.zeros(3, 1))
    forces = sp.solve(list(equilibrium), list(N.values()), dict=True)[0]
    u = sp.Matrix(sp.symbols("ux uy uz"))
    disp = sp.solve([(-geo[m][0]).dot(u) - forces[N[m]] * geo[m][1] / EA for m in legs], list(u), dict=True)[0]
    case = solve_model(model).case("P")
    assert case is not None
    for m, j in model.member_index().items():
        assert case.axial_forces[j] == pytest.approx(float(forces[N[m]]), rel=CLOSED_FORM_RTOL)
    apex = model.node_index()["D"]
    assert case.displacements[apex] == pytest.approx([float(disp[s]) for s in u], rel=CLOSED_FORM_RTOL)


# ---------------------------------------------------------- inclined roller


def test_logan_inclined_roller_by_joint_equilibrium(published: Any) -> None:
    """Logan, *A First Course in the Finite Element Method*, 4th ed., Example 3.9 (recalled from memory).

    Hand solution: joint 2 (load P along x) has the vertical bar 1-2 and the
    horizontal bar 2-3; joint 3 has bar 2-3, diagonal 1-3 and the roller
    reaction normal to the 45° incline.  So N12 = 0, N23 = -P, and at joint 3
    ΣF along the incline gives N13 = P/√2, normal to it a roller reaction
    P/√2 = 707 kN (printed value).
    """
    _, model = published("logan_inclined_roller.json")
    P = 1000.0
    case = solve_model(model).case("P")
    assert case is not None
    m, n = model.member_index(), model.node_index()
    assert abs(case.axial_forces[m["1"]]) <= 1e-9 * P
    assert case.axial_forces[m["2"]] == pytest.approx(-P, rel=1e-9)
    assert case.axial_forces[m["3"]] == pytest.approx(P / np.sqrt(2), rel=1e-9)
    r3 = case.reactions[n["3"]]
    normal = np.array([1.0, -1.0]) / np.sqrt(2)
    assert abs(r3 @ np.array([1.0, 1.0])) <= 1e-9 * P  # no friction along the incline
    assert round(float(abs(r3 @ normal))) == 707  # printed magnitude, 3 significant digits
    # node 2 moves by the shortening of bar 2-3 plus node 3's motion along x; node 3 slides along (1, 1)
    EA_L = 2.1e8 * 6.0e-4 / 1.0
    slide = case.displacements[n["3"]]
    assert slide[0] == pytest.approx(slide[1], rel=1e-12)
    assert case.displacements[n["2"], 0] == pytest.approx(P / EA_L + slide[0], rel=1e-9)


# --------------------------------------------------- spring support (series)


def test_bar_on_spring_in_series(published: Any) -> None:
    """Bar on a spring support, loaded along its axis: u1 = P/k, u2 = P(1/k + L/EA).

    Flexibilities in series add (common practice).
    """
    _, model = published("spring_series.json")
    P, k, L, EA = 20.0, 5000.0, 2.0, 2.0e8 * 5.0e-4
    case = solve_model(model).case("P")
    assert case is not None
    assert case.displacements[0, 0] == pytest.approx(P / k, rel=CLOSED_FORM_RTOL)
    assert case.displacements[1, 0] == pytest.approx(P / k + P * L / EA, rel=CLOSED_FORM_RTOL)
    assert case.axial_forces[0] == pytest.approx(P, rel=CLOSED_FORM_RTOL)
    assert case.reactions[0, 0] == pytest.approx(-P, rel=CLOSED_FORM_RTOL)  # the spring pulls back


# ------------------------------------------------ Logan plane and space cases


def test_logan_example_3_5_by_hand_stiffness(published: Any) -> None:
    """Logan, 4th ed., Example 3.5 (recalled from memory): the 2x2 stiffness of joint 1 assembled by hand, exact.

    K = Σ EA/L n nᵀ over the three bars (Logan's eq. for the plane bar in
    global axes); u = K⁻¹ f with sympy's exact √2.  Printed: u1 = 0.414e-2 in,
    v1 = -0.159e-1 in (checked to the printed digits by the printed-results test).
    """
    _, model = published("logan_ex3_5_plane.json")
    E, A, L = sp.Integer(30 * 10**6), sp.Integer(2), sp.Integer(120)
    bars = [((0, 1), L), ((1 / sp.sqrt(2), 1 / sp.sqrt(2)), L * sp.sqrt(2)), ((1, 0), L)]
    K = sp.zeros(2, 2)
    for (cx, cy), length in bars:
        n = sp.Matrix([cx, cy])
        K += E * A / length * n * n.T
    u = K.LUsolve(sp.Matrix([0, -10000]))
    case = solve_model(model).case("P")
    assert case is not None
    assert case.displacements[0] == pytest.approx([float(u[0]), float(u[1])], rel=1e-12)


def test_logan_space_truss_by_hand_stiffness(published: Any) -> None:
    """Logan, 4th ed., chapter 3 space truss (recalled from memory): joint 1 free in x and z, held in y.

    The 2x2 stiffness of (u1, w1) by hand: K = Σ EA/L n nᵀ restricted to x, z;
    exact in sympy.  Printed: u1 = -0.0711 in, w1 = -0.2662 in.
    """
    doc, model = published("logan_space_truss.json")
    xyz = {str(n["id"]): sp.Matrix([sp.Rational(str(n[a])) for a in AXES]) for n in doc["nodes"]}
    K = sp.zeros(3, 3)
    for mem in doc["members"]:
        d = xyz[str(mem["end"])] - xyz[str(mem["start"])]
        K += sp.Rational("1.2e6") * sp.Rational(str(mem["A"])) / d.norm() * (d / d.norm()) * (d / d.norm()).T
    Kxz = K.extract([0, 2], [0, 2])
    u = Kxz.LUsolve(sp.Matrix([0, -1000]))
    case = solve_model(model).case("P")
    assert case is not None
    assert case.displacements[0] == pytest.approx([float(u[0]), 0.0, float(u[1])], rel=1e-12, abs=1e-15)
