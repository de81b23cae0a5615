"""Diagnosis: unit ratios, the least-squares scale fit, the Sherman–Morrison re-solve (against an exact
sympy solve of the changed model) and the causes named for a few deliberate source errors."""

from __future__ import annotations

import copy
import json
from fractions import Fraction
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from test_checks_common import ExactCase, context, exact_solve, model_of, parse, results_text
from test_mutation import PRATT

from audit import stiffness
from audit.checks import _diagnosis_causes as dc
from audit.checks import diagnosis
from audit.findings import Status
from audit.model import FORCE_UNITS, LENGTH_UNITS

PUBLISHED = Path(__file__).resolve().parent.parent / "reference_cases" / "published"


def three_bar() -> dict[str, Any]:
    doc = json.loads((PUBLISHED / "timoshenko_three_bar.json").read_text())
    doc.pop("results")
    doc["load_cases"] = [{"id": "load", "loads": [{"node": "D", "fx": 30, "fy": -100}]}]
    doc.pop("combinations")
    return doc


@pytest.mark.parametrize(
    ("ratio", "declared", "table", "pair"),
    [
        (1000.0, "kN", FORCE_UNITS, ("N", "kN")),
        (1 / 4.4482216152605, "kN", FORCE_UNITS, ("kip", "kN")),  # 1 kip = 4.4482216152605 kN (exact)
        (1 / 4.4482216152605, "N", FORCE_UNITS, ("lbf", "N")),
        (12.0, "ft", LENGTH_UNITS, ("in", "ft")),
        (1 / 0.0254, "m", LENGTH_UNITS, ("in", "m")),
        (0.001, "mm", LENGTH_UNITS, ("m", "mm")),
    ],
    ids=["N-as-kN", "kip-as-kN", "lbf-as-N", "in-as-ft", "in-as-m", "m-as-mm"],
)
def test_unit_ratio_table(ratio: float, declared: str, table: dict[str, Fraction], pair: tuple[str, str]) -> None:
    assert diagnosis.match_unit(ratio * 1.001, table, declared, 5e-3) == pair


def test_no_unit_matches_one_and_a_half() -> None:
    assert diagnosis.match_unit(1.5, FORCE_UNITS, "kN", 5e-3) is None


def test_fit_ratio_is_least_squares_over_reported_values() -> None:
    p = np.array([1.0, 2.0, np.nan, 4.0])
    assert diagnosis.fit_ratio(-2.0 * p, p) == pytest.approx(-2.0)
    assert diagnosis.fit_ratio(np.zeros(3), np.zeros(3)) is None


def test_sherman_morrison_update_matches_an_exact_solve_with_the_changed_member() -> None:
    """Three-bar truss, BD's EA doubled: the rank-one update of the existing factor equals the exact
    solution of the changed model (sympy)."""
    doc = three_bar()
    model = model_of(doc)
    ctx = context(model, None)
    assert ctx.solution is not None
    sol = ctx.solution.case("load")
    assert sol is not None
    solver = dc.Superposition(ctx)
    m = 1
    B = stiffness.compatibility_matrix(model)
    z = solver.displacements(B[[m]].T.toarray())[:, 0]
    dN = -solver.k * (B @ z)
    dN[m] += 1.0
    unit = solver.response(-z, dN, np.zeros_like(z))
    base = dc.Prediction(sol.displacements, sol.axial_forces, sol.reactions)
    strain = float((B @ sol.displacements.reshape(-1))[m])
    beta = float((B[[m]] @ z)[0])
    pred = dc.sherman_morrison_member(base, unit, strain, beta, dk=float(model.axial_stiffness()[m]))
    changed = copy.deepcopy(doc)
    changed["members"][m]["E"] = 4.0e8
    ex = exact_solve(changed)["load"]
    np.testing.assert_allclose(pred.U, ex.displacements, rtol=1e-10, atol=1e-15)
    np.testing.assert_allclose(pred.N, ex.axial_forces, rtol=1e-10)
    np.testing.assert_allclose(pred.R, ex.reactions, rtol=1e-10, atol=1e-9)


def _diagnose(doc: dict[str, Any], cases: dict[str, ExactCase], **kw: Any) -> Any:
    model = model_of(doc)
    [out] = diagnosis.run(context(model, parse(model, results_text(model, cases, **kw))))
    return out


def test_nothing_to_explain() -> None:
    out = _diagnose(PRATT, exact_solve(PRATT), digits=4)
    assert out.status is Status.PASS
    assert not out.findings


def test_forces_written_in_kip_declared_kn() -> None:
    ex = exact_solve(PRATT)["P"]
    k = 1 / 4.4482216152605
    cases = {"P": ExactCase("P", ex.displacements, k * ex.axial_forces, k * ex.reactions)}
    [f] = _diagnose(PRATT, cases, digits=5).findings
    assert f.code == "DX102"
    assert (f.data_dict()["written_unit"], f.data_dict()["declared_unit"]) == ("kip", "kN")
    assert f.data_dict()["fit_ratio"] == pytest.approx(k, rel=1e-4)


def test_declared_compression_positive_but_written_tension_positive() -> None:
    ex = exact_solve(PRATT)
    out = _diagnose(PRATT, ex, digits=5, sign_convention="compression_positive")
    [f] = out.findings
    assert f.code == "DX101"
    assert f.data_dict()["likely_convention"] == "tension_positive"


def test_member_ea_without_displacements_in_an_indeterminate_truss() -> None:
    """With only forces reported, the one redundant of the three-bar truss makes any bar's EA explain the
    forces: the diagnosis must say the data cannot tell them apart, and name the implied EA of each."""
    doc = three_bar()
    src = copy.deepcopy(doc)
    src["members"][0]["E"] = 1.0e8
    out = _diagnose(doc, exact_solve(src), digits=6, parts=("axial_forces", "reactions"))
    [f] = out.findings
    assert f.code == "DX104"
    labels = {label for _c, label, _w in f.data_dict()["alternatives"]}
    assert "member AD" in labels
    assert f.location.member is None


def test_member_ea_from_displacements_gives_the_exact_value() -> None:
    src = copy.deepcopy(PRATT)
    src["members"][8]["E"] = 0.7e8  # member 9, a third of its E
    out = _diagnose(PRATT, exact_solve(src), digits=8)
    [f] = out.findings
    assert (f.code, f.location.member) == ("DX104", "9")
    assert f.data_dict()["implied_EA"] == pytest.approx(0.7e8 * 0.0015, rel=1e-5)
    assert f.data_dict()["compatibility_EA"] == pytest.approx(0.7e8 * 0.0015, rel=1e-5)


def test_no_single_cause() -> None:
    ex = exact_solve(PRATT)["P"]
    n = ex.axial_forces.copy()
    n[[0, 3]] *= (1.05, 0.9)  # two independent mistakes
    out = _diagnose(PRATT, {"P": ExactCase("P", ex.displacements, n, ex.reactions)}, digits=6)
    assert [f.code for f in out.findings] == ["DX001"]
    assert out.findings[0].data_dict()["candidates_tried"] > 0
