"""The solver against sympy's own plane-truss solver, a second, independent reference.

``sympy.physics.continuum_mechanics.truss.Truss`` solves a statically
determinate plane truss from joint equilibrium (exact arithmetic).  Its
``solve`` docstring says a positive internal force means compression
(SymPy 1.14 documentation, ``Truss.solve``, note on the sign convention),
but its own example reports the hanger under the load as +10, and its
equations put a member's force at the start node along start -> end, that is
a *pull*: positive values are tensions.  The first tests below establish the
convention actually used, on bars whose tension or compression is known, and
every comparison converts with that measured sign.
"""

from __future__ import annotations

from typing import Any

import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from strategies import rational_plane_trusses, to_model
from sympy.physics.continuum_mechanics.truss import Truss

from audit.solve import solve_model


def _sympy_truss(doc: dict[str, Any]) -> Truss:
    """A sympy Truss of a plane model document: pinned = x and y held, roller = y held only."""
    t = Truss()
    t.add_node(*[(str(n["id"]), sp.Rational(str(n["x"])), sp.Rational(str(n["y"]))) for n in doc["nodes"]])
    t.add_member(*[(str(m["id"]), str(m["start"]), str(m["end"])) for m in doc["members"]])
    loads = []
    for ld in doc["load_cases"][0].get("loads", []):
        for key, plus, minus in (("fx", 0, 180), ("fy", 90, 270)):
            value = sp.Rational(str(ld.get(key, 0)))
            if value:
                loads.append((str(ld["node"]), abs(value), plus if value > 0 else minus))
    if loads:
        t.apply_load(*loads)
    kinds = []
    for s in doc["supports"]:
        held = sorted(s["restrain"])
        assert held in (["x", "y"], ["y"]), "sympy's Truss knows pinned and vertical rollers only"
        kinds.append((str(s["node"]), "pinned" if held == ["x", "y"] else "roller"))
    t.apply_support(*kinds)
    t.solve()
    return t


def _bar(load_direction: int) -> Truss:
    """Bar A-B along x, pinned at A, vertical roller at B, a force of 5 at B along ``load_direction`` (degrees)."""
    t = Truss()
    t.add_node(("A", 0, 0), ("B", 1, 0))
    t.add_member(("AB", "A", "B"))
    t.apply_load(("B", 5, load_direction))
    t.apply_support(("A", "pinned"), ("B", "roller"))
    t.solve()
    return t


def sympy_tension_sign() -> int:
    """+1 if sympy's Truss reports tension as positive, -1 if as negative (measured on a pulled bar)."""
    value = _bar(0).internal_forces["AB"]
    assert value != 0
    return 1 if value > 0 else -1


def test_sympy_reports_a_pulled_bar_as_positive() -> None:
    """A bar pulled at its free end is in tension: sympy reports +5, so its positive means tension (not compression)."""
    assert _bar(0).internal_forces["AB"] == 5
    assert sympy_tension_sign() == 1


def test_sympy_reports_a_pushed_bar_as_negative() -> None:
    """A bar pushed at its free end is in compression: sympy reports -5."""
    assert _bar(180).internal_forces["AB"] == -5


def test_sympy_docstring_example_against_solver() -> None:
    """The worked example printed in the SymPy 1.14 documentation of ``Truss.solve``.

    Printed: member_1 = member_2 = 20/3, member_3 = -20√2/3, member_4 = -10√5/3,
    member_5 = 10; reactions R_node_1_y = 20/3, R_node_2_y = 10/3.
    """
    doc = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": [
            {"id": "node_1", "x": 0, "y": 0},
            {"id": "node_2", "x": 6, "y": 0},
            {"id": "node_3", "x": 2, "y": 2},
            {"id": "node_4", "x": 2, "y": 0},
        ],
        "members": [
            {"id": f"member_{i}", "start": s, "end": e, "E": 2.0e8, "A": 1.0e-3}
            for i, (s, e) in enumerate(
                [
                    ("node_1", "node_4"),
                    ("node_2", "node_4"),
                    ("node_1", "node_3"),
                    ("node_2", "node_3"),
                    ("node_3", "node_4"),
                ],
                start=1,
            )
        ],
        "supports": [{"node": "node_1", "restrain": ["x", "y"]}, {"node": "node_2", "restrain": ["y"]}],
        "load_cases": [{"id": "P", "loads": [{"node": "node_4", "fy": -10}]}],
    }
    printed = {
        "member_1": sp.Rational(20, 3),
        "member_2": sp.Rational(20, 3),
        "member_3": -20 * sp.sqrt(2) / 3,
        "member_4": -10 * sp.sqrt(5) / 3,
        "member_5": sp.Integer(10),
    }
    t = _sympy_truss(doc)
    assert {k: sp.simplify(v - printed[k]) for k, v in t.internal_forces.items()} == dict.fromkeys(printed, 0)
    model = to_model(doc)
    case = solve_model(model).cases[0]
    sign = sympy_tension_sign()
    for m, j in model.member_index().items():
        assert case.axial_forces[j] == pytest.approx(sign * float(printed[m]), rel=1e-12)
    n = model.node_index()
    assert case.reactions[n["node_1"], 1] == pytest.approx(20 / 3, rel=1e-12)
    assert case.reactions[n["node_2"], 1] == pytest.approx(10 / 3, rel=1e-12)
    assert abs(case.reactions[n["node_1"], 0]) <= 1e-12 * 10


def _compare(doc: dict[str, Any], model: Any = None) -> float:
    """Max difference between solver and sympy (forces and reactions), relative to the largest force."""
    t = _sympy_truss(doc)
    sign = sympy_tension_sign()
    model = to_model(doc) if model is None else model
    case = solve_model(model).cases[0]
    forces = {m: sign * float(v) for m, v in t.internal_forces.items()}
    scale = max(1.0, *(abs(v) for v in forces.values()))
    worst = 0.0
    for m, j in model.member_index().items():
        worst = max(worst, abs(case.axial_forces[j] - forces[m]) / scale)
    n = model.node_index()
    for key, value in t.reaction_loads.items():
        node, axis = key[2:-2], key[-1]  # "R_<node>_<axis>"
        worst = max(worst, abs(case.reactions[n[node], "xy".index(axis)] - float(value)) / scale)
    return worst


def test_hibbeler_example_against_sympy(published: Any) -> None:
    """Hibbeler, *Engineering Mechanics: Statics*, 12th ed., Example 6.1 (recalled from memory), solved by sympy too."""
    doc, model = published("hibbeler_statics_ex6_1.json")
    assert _compare(doc, model) <= 1e-12


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rational_plane_trusses(determinate=True, rotate=False, max_panels=3, max_cases=1, combinations=False))
def test_random_determinate_trusses_against_sympy(doc: dict[str, Any]) -> None:
    """Random simple panel trusses (pinned + vertical roller): forces and reactions agree with sympy to 1e-10."""
    assert _compare(doc) <= 1e-10
