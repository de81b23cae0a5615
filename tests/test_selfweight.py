"""Self weight (``shared/FORMAT.md``, additions to version 1) against a closed form derived here with sympy.

Two bars A–C and B–C, pinned at A and B, under their own weight alone.  Each bar's weight
W_i = γ·A·L_i·f goes half to each end (the usual lumping of a pin-jointed model, common practice),
so the apex C carries (W_1 + W_2)/2 downwards; the method of joints at C gives the two forces,
compatibility (elongation_i = N_i L_i / EA along each bar) gives C's displacement, and the support
reactions balance each bar's half weight at its foot plus the bar's pull.
"""

from __future__ import annotations

import json
from fractions import Fraction

import numpy as np
import pytest
import sympy as sp

from audit import exchange, precision
from audit.solve import solve_model

GEOMETRY = {"A": (0, 0), "B": (5, 0), "C": (2, 3)}
E, AREA, GAMMA, FACTOR = "2.1e8", "0.0015", "78.5", "1.35"


def _doc(direction: list[int] | None = None) -> dict:
    sw: dict = {"factor": float(FACTOR)}
    if direction is not None:
        sw["direction"] = direction
    return {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": [{"id": k, "x": x, "y": y} for k, (x, y) in GEOMETRY.items()],
        "materials": {"steel": {"E": float(E), "unit_weight": float(GAMMA)}},
        "members": [
            {"id": "1", "start": "A", "end": "C", "material": "steel", "A": float(AREA)},
            {"id": "2", "start": "B", "end": "C", "material": "steel", "A": float(AREA)},
        ],
        "supports": [{"node": "A", "restrain": ["x", "y"]}, {"node": "B", "restrain": ["x", "y"]}],
        "load_cases": [{"id": "dead", "self_weight": sw}],
    }


def _closed_form(direction: tuple[int, int] = (0, -1)) -> dict[str, sp.Expr]:
    g, a, e, f = (sp.Rational(str(Fraction(t))) for t in (GAMMA, AREA, E, FACTOR))
    pts = {k: sp.Matrix(v) for k, v in GEOMETRY.items()}
    d = sp.Matrix(direction) / sp.sqrt(direction[0] ** 2 + direction[1] ** 2)
    bars = {"1": ("A", "C"), "2": ("B", "C")}
    n1, n2, ux, uy = sp.symbols("n1 n2 ux uy")
    forces = {"1": n1, "2": n2}
    weight = {k: g * a * (pts[t] - pts[s]).norm() * f for k, (s, t) in bars.items()}
    load_c = (weight["1"] + weight["2"]) / 2 * d
    # joint C: tension pulls C back towards the start node
    eq = load_c
    for k, (s, t) in bars.items():
        unit = (pts[t] - pts[s]) / (pts[t] - pts[s]).norm()
        eq = eq - forces[k] * unit
    sol = sp.solve(list(eq), [n1, n2], dict=True)[0]
    u = sp.Matrix([ux, uy])
    comp = []
    for k, (s, t) in bars.items():
        vec = pts[t] - pts[s]
        length = vec.norm()
        comp.append((u.dot(vec / length)) - sol[forces[k]] * length / (e * a))
    usol = sp.solve(comp, [ux, uy], dict=True)[0]
    # reaction at A: minus (half the weight of bar 1 plus bar 1's pull on A, which is +N·unit towards C)
    unit1 = (pts["C"] - pts["A"]) / (pts["C"] - pts["A"]).norm()
    ra = -(weight["1"] / 2 * d + sol[n1] * unit1)
    return {"N1": sol[n1], "N2": sol[n2], "ux": usol[ux], "uy": usol[uy], "RAx": ra[0], "RAy": ra[1]}


@pytest.mark.parametrize("direction", [None, [0, -1], [1, -2]])
def test_two_bar_truss_under_self_weight(direction: list[int] | None) -> None:
    model = exchange.parse_model(json.dumps(_doc(direction)))
    ref = _closed_form(tuple(direction) if direction else (0, -1))
    case = solve_model(model).cases[0]
    got = {
        "N1": case.axial_forces[0],
        "N2": case.axial_forces[1],
        "ux": case.displacements[2, 0],
        "uy": case.displacements[2, 1],
        "RAx": case.reactions[0, 0],
        "RAy": case.reactions[0, 1],
    }
    for key, value in ref.items():
        assert got[key] == pytest.approx(float(value), rel=1e-12, abs=1e-15), key


def test_self_weight_on_the_exact_path() -> None:
    model = exchange.parse_model(json.dumps(_doc([1, -2])))
    ref = _closed_form((1, -2))
    cases, _report = precision.solve_high_precision(model, 30)
    c = cases[0]
    for key, value in (("N1", c.axial_forces[0]), ("N2", c.axial_forces[1]), ("uy", c.displacements[2][1])):
        exact = sp.N(ref[key], 50)
        got = (
            sp.Rational(str(value))
            if not isinstance(value, Fraction)
            else sp.Rational(value.numerator, value.denominator)
        )
        assert abs(got - exact) <= abs(exact) * sp.Float("1e-28"), key


def test_total_weight_reaches_the_supports() -> None:
    model = exchange.parse_model(json.dumps(_doc()))
    case = solve_model(model).cases[0]
    total = float(GAMMA) * float(AREA) * float(FACTOR) * (np.sqrt(13) + np.sqrt(18))
    assert case.reactions[:, 1].sum() == pytest.approx(total, rel=1e-13)
    assert case.reactions[:, 0].sum() == pytest.approx(0.0, abs=1e-13)
