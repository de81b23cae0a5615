"""The numerical stability path: complete mechanism counts, honest bounds, no crash (``audit.stability``).

The models are ladders: two chords of n panels (each panel 4 m wide, 3 m high), a post at every panel
point, pinned at the bottom left and on a roller (y) at the bottom right; the first ``braced`` panels get
both diagonals.  Their counts in closed form, by the method of joints (common practice):

* with no diagonal, every top joint and every interior bottom joint has one horizontal pair of chords and
  one vertical post, so each post force is 0 and the chord forces are equal along a chord; the end joints
  (a chord and a post only, or a chord, a post and the roller's vertical reaction) then make every chord
  force 0: no state of self-stress, s = 0.  With j = 2(n + 1), m = 3n + 1 and r = 3, Calladine's rule
  s − M = m + r − d·j (Pellegrino & Calladine 1986, "Matrix analysis of statically and kinematically
  indeterminate frameworks", Int. J. Solids Structures 22(4)) gives M = n: one shear mechanism per panel;
* a panel with both diagonals is rigid and carries one state of self-stress (the braced square of
  ``tests/data/stability/braced_square_both_diagonals.json``), so ``braced`` = k such panels give
  M = n − k and s = k, while d·j − m − r = n − 2k.
"""

from __future__ import annotations

import json
import re
from typing import Any

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from audit import engine, stability
from audit.checks import stability_check
from audit.exchange import parse_model
from audit.model import Model
from audit.solve import build_system
from audit.stability import first_order, numerical
from audit.stability.prechecks import constraints


def _ladder(n: int, braced: int = 0) -> dict[str, Any]:
    nodes, members = [], []
    for i in range(n + 1):
        nodes += [{"id": f"b{i}", "x": 4 * i, "y": 0}, {"id": f"t{i}", "x": 4 * i, "y": 3}]
    for i in range(n):
        members += [
            {"id": f"bc{i}", "start": f"b{i}", "end": f"b{i + 1}", "E": 1, "A": 1},
            {"id": f"tc{i}", "start": f"t{i}", "end": f"t{i + 1}", "E": 1, "A": 1},
        ]
        if i < braced:
            members += [
                {"id": f"d{i}", "start": f"b{i}", "end": f"t{i + 1}", "E": 1, "A": 1},
                {"id": f"e{i}", "start": f"t{i}", "end": f"b{i + 1}", "E": 1, "A": 1},
            ]
    members += [{"id": f"p{i}", "start": f"b{i}", "end": f"t{i}", "E": 1, "A": 1} for i in range(n + 1)]
    return {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "members": members,
        "supports": [{"node": "b0", "restrain": ["x", "y"]}, {"node": f"b{n}", "restrain": ["y"]}],
    }


def _model(n: int, braced: int = 0) -> Model:
    return parse_model(json.dumps(_ladder(n, braced)))


def _numerical(model: Model) -> stability.StabilityReport:
    return stability.analyse(model, build_system(model), None, method="numerical")


# ------------------------------------------------------------ complete counts
def test_ladder_of_400_open_panels_has_400_mechanisms() -> None:
    """1604 dofs: above the exact null-space limit and the dense limit, so the sparse search runs; the
    400 shear mechanisms form one 400-fold zero eigenvalue, which a single-vector Lanczos run undercounted."""
    result = engine.audit(_model(400))
    stab = result.stability
    assert (stab["mechanisms"], stab["self_stress_states"], stab["rank"]) == (400, 0, 1204)
    assert stab["proof"] == "numerical"
    assert "subspace iteration" in stab["method"]
    assert stab["mechanism_count_is_lower_bound"] is False
    codes = {f.code for f in result.findings}
    assert "ST101" in codes
    assert "ST120" not in codes
    assert not result.crashed


@pytest.mark.parametrize(("n", "braced"), [(60, 0), (60, 10), (45, 45)], ids=["open", "ten-braced", "all-braced"])
def test_sparse_search_matches_exact_rank(n: int, braced: int, monkeypatch: pytest.MonkeyPatch) -> None:
    """The sparse search (dense limit lowered) against the exact rational rank, and the closed form."""
    monkeypatch.setattr(stability, "DENSE_EIGEN_LIMIT", 100)
    model = _model(n, braced)
    num = _numerical(model)
    exact = stability.analyse(model, build_system(model), None, method="exact")
    assert (num.mechanisms, num.self_stress_states) == (exact.mechanisms, exact.self_stress_states)
    assert (exact.mechanisms, exact.self_stress_states) == (n - braced, braced)
    assert "subspace iteration" in num.method
    assert not num.lower_bound_only


def test_zero_modes_of_a_known_spectrum() -> None:
    """A diagonal PSD matrix with 40 exact zeros among 1000 entries: the sparse search finds exactly 40, and
    their span is the span of the 40 unit vectors (eigenvectors of a diagonal matrix)."""
    rng = np.random.default_rng(3)
    diag = rng.uniform(0.5, 2.0, 1000)
    zero = rng.choice(1000, 40, replace=False)
    diag[zero] = 0.0
    Z, below, above, capped, backend = numerical.zero_modes(sp.diags(diag).tocsr(), 100, 1e-12)
    assert Z.shape == (1000, 40)
    assert not capped
    assert "subspace iteration" in backend
    np.testing.assert_allclose(np.linalg.norm(Z[zero], axis=0), 1.0, atol=1e-10)
    assert below < 1e-12 * 2.0
    assert diag[diag > 0].min() * (1 - 1e-9) <= above <= diag.max()  # a Ritz value: never below λ_min (interlacing)


# ------------------------------------------------------------- capped search
def test_capped_search_reports_calladine_bound(monkeypatch: pytest.MonkeyPatch) -> None:
    """Search capped at 20 zero modes on 60 open panels: the count is reported as at least d·j − m − r = 60
    (exactly the truth here), never as the 21 found, and s is not established instead of negative."""
    monkeypatch.setattr(stability, "DENSE_EIGEN_LIMIT", 100)
    monkeypatch.setattr(stability, "ZERO_MODE_LIMIT", 20)
    rep = _numerical(_model(60))
    assert rep.lower_bound_only
    assert rep.self_stress_is_lower_bound
    assert (rep.mechanisms, rep.rank, rep.self_stress_states) == (60, 184, 0)
    out = rep.as_dict()
    assert out["self_stress_states"] is None
    assert out["self_stress_states_at_least"] == 0
    assert out["rank_is_upper_bound"] is True
    assert "states of self-stress not established" in rep.summary()
    assert "at least 60" in rep.summary()
    assert re.search(r"-\d", rep.summary().split("Maxwell")[0]) is None  # no negative count (before Maxwell's)
    codes = {f.code for f in stability_check.findings_of(rep)}
    assert {"ST101", "ST120"} <= codes
    assert rep.order_test["tested"] is False
    assert "lower bound" in rep.order_test["reason"]


def test_capped_search_bound_above_calladine(monkeypatch: pytest.MonkeyPatch) -> None:
    """60 panels, 10 braced: M = 50, s = 10, d·j − m − r = 40.  Capped at 44 zero modes the search fills a
    block of 45: the count is at least 45 (≤ 50) and s at least 45 − 40 = 5 (≤ 10), both honest bounds."""
    monkeypatch.setattr(stability, "DENSE_EIGEN_LIMIT", 100)
    monkeypatch.setattr(stability, "ZERO_MODE_LIMIT", 44)
    rep = _numerical(_model(60, 10))
    assert rep.lower_bound_only
    assert rep.mechanisms == 45
    assert rep.self_stress_states == 5
    assert rep.self_stress_states - rep.mechanisms == rep.maxwell_count
    assert "at least 5 states of self-stress" in rep.summary()
    assert rep.self_stress_list == ()


def test_lower_bound_path_forms_no_self_stress_basis(monkeypatch: pytest.MonkeyPatch) -> None:
    """With the rank only a bound, the (expensive, and meaningless) self-stress basis is never formed."""

    def refuse(*_args: object) -> None:
        raise AssertionError("self-stress basis formed on the lower-bound path")

    monkeypatch.setattr(stability, "DENSE_EIGEN_LIMIT", 100)
    monkeypatch.setattr(stability, "ZERO_MODE_LIMIT", 20)
    monkeypatch.setattr(stability, "self_stress_basis", refuse)
    rep = _numerical(_model(60, 10))
    assert rep.lower_bound_only
    assert rep.self_stress_list == ()


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(n=st.integers(30, 60), braced=st.integers(0, 12), limit=st.integers(1, 70))
def test_counts_never_break_calladine(n: int, braced: int, limit: int) -> None:
    """Whatever the cap, the reported counts satisfy Calladine's rule with s ≥ 0 and never exceed the
    truth (M = n − k, s = k, closed form above); without the bound flag they are the truth."""
    braced = min(braced, n)
    model = _model(n, braced)
    old = stability.DENSE_EIGEN_LIMIT, stability.ZERO_MODE_LIMIT
    stability.DENSE_EIGEN_LIMIT, stability.ZERO_MODE_LIMIT = 100, limit
    try:
        rep = _numerical(model)
    finally:
        stability.DENSE_EIGEN_LIMIT, stability.ZERO_MODE_LIMIT = old
    assert rep.self_stress_states >= 0
    assert rep.mechanisms >= model.n_dofs - model.n_members - 3
    assert rep.mechanisms <= n - braced
    assert rep.self_stress_states <= braced
    if not rep.lower_bound_only:
        assert (rep.mechanisms, rep.self_stress_states) == (n - braced, braced)


# ---------------------------------------------------------- first-order test
def test_first_order_test_degrades_when_its_factor_fails() -> None:
    """Three collinear bars A–B–C–D between pins: B and C each move across (2 mechanisms, 1 state of
    self-stress; Pellegrino & Calladine 1986).  Given only B's mechanism, the virtual supports leave C free,
    the geometry-only matrix is singular and the test says "not run", never raises."""
    doc = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": [{"id": k, "x": i, "y": 0} for i, k in enumerate("ABCD")],
        "members": [
            {"id": str(i), "start": a, "end": b, "E": 1, "A": 1} for i, (a, b) in enumerate(["AB", "BC", "CD"])
        ],
        "supports": [{"node": "A", "restrain": ["x", "y"]}, {"node": "D", "restrain": ["x", "y"]}],
    }
    model = parse_model(json.dumps(doc))
    only_b = np.zeros((model.n_dofs, 1))
    only_b[3, 0] = 1.0  # B along y
    out = first_order.first_order_test(model, constraints(model), only_b, only_b, 1, "exact")
    assert out["tested"] is False
    assert out["result"] == "not proven infinitesimal"
    assert "could not be factorised" in out["reason"] or "not accurate" in out["reason"]


def test_analyse_survives_a_failing_first_order_factor(monkeypatch: pytest.MonkeyPatch) -> None:
    """A factorisation error inside the first-order test reaches neither ``analyse`` nor ``engine.audit``:
    the mechanism is "not proven infinitesimal" (ST105), the reason says why."""

    def broken(*_args: object, **_kw: object) -> None:
        raise np.linalg.LinAlgError("simulated: matrix is not positive definite")

    monkeypatch.setattr(first_order.linsolve, "factorize", broken)
    doc = json.loads(json.dumps(_ladder(1)))
    doc["nodes"] = [{"id": "A", "x": 0, "y": 0}, {"id": "B", "x": 1, "y": 0}, {"id": "C", "x": 2, "y": 0}]
    doc["members"] = [
        {"id": "1", "start": "A", "end": "B", "E": 1, "A": 1},
        {"id": "2", "start": "B", "end": "C", "E": 1, "A": 1},
    ]
    doc["supports"] = [{"node": "A", "restrain": ["x", "y"]}, {"node": "C", "restrain": ["x", "y"]}]
    model = parse_model(json.dumps(doc))
    rep = stability.analyse(model, build_system(model), None)
    assert rep.order_test["tested"] is False
    assert "simulated" in rep.order_test["reason"]
    assert rep.mechanism_list[0].order == "not proven infinitesimal"
    assert "ST105" in {f.code for f in stability_check.findings_of(rep)}
    result = engine.audit(model)
    assert not result.crashed


def test_ladder_of_512_panels_audits_without_crash() -> None:
    """2052 dofs, 512 shear mechanisms, s = 0 (closed form above): the engine reports them all, finite
    (no state of self-stress, so no factorisation in the first-order test)."""
    result = engine.audit(_model(512))
    stab = result.stability
    assert (stab["mechanisms"], stab["self_stress_states"]) == (512, 0)
    assert stab["first_order_test"]["result"] == "finite"
    assert not result.crashed
