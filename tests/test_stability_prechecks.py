"""Joints that lack a direction, decided in exact arithmetic (``audit.stability.prechecks``).

A joint lacks a direction when its member and reaction directions span fewer than d directions (method of
joints, common practice).  Floating point cannot tell "collinear" from "nearly collinear"; the decision is
made on the input's decimal text, and checked here against sympy's exact rank and null space.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from audit import engine, stability
from audit.exchange import parse_model
from audit.model import Model
from audit.solve import build_system
from audit.stability.prechecks import _exact_missing, constraints, local_deficiencies


def _model(apex: str, mid_x: str = "1", end_x: str = "2", end_y: str = "0") -> Model:
    """Bars A–B and B–C (steel, 1000 mm²), pins at A (0, 0) and C; B at (mid_x, apex).  The numbers are
    written into the JSON text as given: their decimal text is what the exact decision reads."""
    text = (
        '{"format": "truss-audit-model", "version": 1, "dimensions": 2, "units": {"length": "m", "force": "kN"},'
        ' "materials": {"steel": {"E": 200000000.0}}, "sections": {"bar": {"A": 0.001}},'
        f' "nodes": [{{"id": "A", "x": 0, "y": 0}}, {{"id": "B", "x": {mid_x}, "y": {apex}}},'
        f' {{"id": "C", "x": {end_x}, "y": {end_y}}}],'
        ' "members": [{"id": "1", "start": "A", "end": "B", "material": "steel", "section": "bar"},'
        ' {"id": "2", "start": "B", "end": "C", "material": "steel", "section": "bar"}],'
        ' "supports": [{"node": "A", "restrain": ["x", "y"]}, {"node": "C", "restrain": ["x", "y"]}]}'
    )
    return parse_model(text)


def test_shallow_two_bar_is_stable_without_st115() -> None:
    """Apex height t/a = 1e-6: the directions (1, 1e-6) and (1, −1e-6) at B have determinant −2e-6 ≠ 0, so
    the two bars and two pins form a triangle, stable and determinate (rank 6, Maxwell 2 + 4 − 6 = 0;
    common practice).  Floating point sees an eigenvalue ratio of 1e-12 at B; that is conditioning, not
    a joint between collinear members."""
    model = _model("0.000001")
    result = engine.audit(model)
    codes = {f.code for f in result.findings}
    assert "ST001" in codes
    assert "ST115" not in codes
    assert result.stability["classification"] == "stable-determinate"
    assert result.stability["proof"] == "exact"
    (note,) = [n for n in result.stability["notes"] if n.startswith("joint B")]
    assert "exact arithmetic" in note
    assert not [t for t in result.stability["traps"] if t["kind"] == "collinear-joint"]


def test_collinear_in_decimal_text_stays_a_mechanism() -> None:
    """A (0, 0), B (0.1, 0.3), C (0.3, 0.9): collinear as written (slope 3), not in binary floating point
    (the floats' exact values give B − A and C − B a slope ratio other than 1).  B can move across the
    line, along (−3, 1)/√10: one mechanism, one state of self-stress (Pellegrino & Calladine 1986, the
    collinear two-bar), and ST115 names joint B."""
    model = _model("0.3", mid_x="0.1", end_x="0.3", end_y="0.9")
    rep = stability.analyse(model, build_system(model), None)
    assert (rep.mechanisms, rep.self_stress_states, rep.proof) == (1, 1, "exact")
    (trap,) = [t for t in rep.traps if t.kind == "collinear-joint"]
    assert trap.nodes == ("B",)
    v = np.asarray(trap.direction)
    assert abs(abs(float(v @ np.array([-3.0, 1.0]))) / np.sqrt(10) - 1.0) < 1e-15
    # sympy: the rows at B, (0.1, 0.3) and (0.3, 0.9) − (0.1, 0.3), have rank 1 as written ...
    r = sympy.Rational
    assert sympy.Matrix([[r("0.1"), r("0.3")], [r("0.2"), r("0.6")]]).rank() == 1
    # ... and rank 2 on the floats' exact values, which is why the decision must read the decimal text
    assert sympy.Matrix([[r(0.1), r(0.3)], [r(0.3) - r(0.1), r(0.9) - r(0.3)]]).rank() == 2


def test_near_joint_is_not_a_local_deficiency() -> None:
    model = _model("0.000001")
    local, near = local_deficiencies(model, constraints(model))
    assert local == []
    assert [model.node_ids[n.node] for n in near] == ["B"]
    assert 0 < near[0].ratio < 1e-10


_rationals = st.fractions(min_value=-5, max_value=5, max_denominator=12)


@settings(max_examples=60, deadline=None)
@given(
    d=st.sampled_from([2, 3]),
    data=st.data(),
)
def test_exact_missing_directions_match_sympy(d: int, data: st.DataObject) -> None:
    """The missing directions are an orthonormal basis of the exact null space (sympy's rank and null space
    as the oracle): as many as d − rank, each orthogonal to every row and inside sympy's null space."""
    k = data.draw(st.integers(0, 4))
    rows = [[data.draw(_rationals) for _ in range(d)] for _ in range(k)]
    if k >= 2 and data.draw(st.booleans()):
        scale = data.draw(_rationals)
        rows[1] = [scale * x for x in rows[0]]  # a dependent row
    missing = _exact_missing([[Fraction(x) for x in r] for r in rows], d)
    M = sympy.Matrix(rows) if rows else sympy.zeros(0, d)
    rank = M.rank() if rows else 0
    assert len(missing) == d - rank
    if missing:
        B = np.column_stack(missing)
        np.testing.assert_allclose(B.T @ B, np.eye(len(missing)), atol=1e-12)
        null = sympy.Matrix.hstack(*M.nullspace()) if rows else sympy.eye(d)
        N = np.array(null.tolist(), dtype=float).reshape(d, -1)
        # span(B) = span(N): projecting B onto span(N) changes nothing
        Q = np.linalg.qr(N)[0]
        np.testing.assert_allclose(Q @ (Q.T @ B), B, atol=1e-12)


@pytest.mark.parametrize("apex", ["0.000003", "0.00001", "0.001"], ids=["3e-6", "1e-5", "1e-3"])
def test_shallow_two_bar_rank_matches_sympy(apex: str) -> None:
    """Rank of [Bᵀ | C] in sympy rationals (unnormalised member columns) equals the reported rank."""
    model = _model(apex)
    rep = stability.analyse(model, build_system(model), None)
    a = sympy.Rational(apex)
    cols = [
        [-1, -a, 1, a, 0, 0],  # A–B
        [0, 0, -1, a, 1, -a],  # B–C
        [1, 0, 0, 0, 0, 0],
        [0, 1, 0, 0, 0, 0],
        [0, 0, 0, 0, 1, 0],
        [0, 0, 0, 0, 0, 1],
    ]
    assert rep.rank == sympy.Matrix(cols).T.rank() == 6
    assert rep.stable
