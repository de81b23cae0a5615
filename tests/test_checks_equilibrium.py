"""Equilibrium of reported results: joint residuals, global force and moment balance, not-checked counts."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from test_checks_common import TRIANGLE, ExactCase, context, exact_solve, model_of, parse, results_text
from test_mutation import PRATT

from audit.checks import _common as cm
from audit.checks import equilibrium
from audit.findings import Status

PUBLISHED = Path(__file__).resolve().parent.parent / "reference_cases" / "published"


def _run(doc: dict[str, Any], cases: dict[str, ExactCase], **kw: Any) -> list[Any]:
    model = model_of(doc)
    return equilibrium.run(context(model, parse(model, results_text(model, cases, **kw))))


def test_exact_results_balance_at_every_joint() -> None:
    [out] = _run(TRIANGLE, exact_solve(TRIANGLE))
    s = dict(out.summary)
    assert out.status is Status.PASS
    assert s["joints_checked"] == 3
    assert s["failed"] == 0
    assert s["largest_residual"] < 1e-12


def test_one_wrong_force_unbalances_both_its_joints_by_its_direction() -> None:
    """N_AC + 1 kN: A gets +1·n_AC = (0.8, 0.6), C gets −(0.8, 0.6) (joint residual f + r − BᵀN)."""
    ex = exact_solve(TRIANGLE)["P"]
    n = ex.axial_forces.copy()
    n[2] += 1.0
    [out] = _run(TRIANGLE, {"P": ExactCase("P", ex.displacements, n, ex.reactions)})
    got = {(f.location.node, f.location.axis): f.reported for f in out.findings if f.code == "EQ101"}
    assert got == pytest.approx({("A", "x"): 0.8, ("A", "y"): 0.6, ("C", "x"): -0.8, ("C", "y"): -0.6})
    assert out.status is Status.FAIL
    assert not [f for f in out.findings if f.code in ("EQ102", "EQ103")]  # reactions untouched


def test_rounded_results_leave_residuals_inside_the_rounding_quanta() -> None:
    [out] = _run(PRATT, exact_solve(PRATT), digits=3)
    s = dict(out.summary)
    assert out.status is Status.PASS
    assert s["largest_residual"] > 0  # the 3-figure print does not balance exactly ...
    assert s["within_rounding"] == s["checked"]  # ... but every residual is rounding


def test_space_truss_moment_balance_about_the_centroid() -> None:
    """Tripod (reference_cases/published/tripod_space.json): +1 kN on A's z reaction.  The centroid of the joints
    is (−0.25, 0, 3); r_A = (5.25, 0, −3); r × (0, 0, 1) = (0, −5.25, 0)."""
    doc = json.loads((PUBLISHED / "tripod_space.json").read_text())
    doc.pop("results")
    ex = exact_solve(doc)["P"]
    r = ex.reactions.copy()
    r[1, 2] += 1.0  # node order D, A, B, C
    [out] = _run(doc, {"P": ExactCase("P", ex.displacements, ex.axial_forces, r)})
    eq102 = [(f.location.axis, f.reported) for f in out.findings if f.code == "EQ102"]
    eq103 = [(f.location.axis, f.reported) for f in out.findings if f.code == "EQ103"]
    assert eq102 == [("z", pytest.approx(1.0))]
    assert eq103 == [("y", pytest.approx(-5.25))]
    assert dict(out.summary)["moment_point"] == pytest.approx([-0.25, 0.0, 3.0])


def test_unreported_forces_are_counted_not_passed() -> None:
    [out] = _run(TRIANGLE, exact_solve(TRIANGLE), skip_members=("AB",))
    info = [f for f in out.findings if f.code == "EQ001"]
    assert len(info) == 1
    assert info[0].data_dict()["member_forces_not_reported"] == 1
    # AB is horizontal: A and B are unknown along x, C is fully checked
    assert dict(out.summary)["joints_checked"] == 1


def test_nothing_checkable_is_not_run() -> None:
    [out] = _run(TRIANGLE, exact_solve(TRIANGLE), parts=("displacements",))
    assert out.status is Status.NOT_RUN
    assert out.reason


def test_no_results_means_not_run_for_every_case() -> None:
    doc = copy.deepcopy(TRIANGLE)
    doc["load_cases"].append({"id": "Q", "loads": [{"node": "C", "fx": 1}]})
    model = model_of(doc)
    outs = equilibrium.run(context(model, None))
    assert [(o.case, o.status, o.reason) for o in outs] == [
        ("P", Status.NOT_RUN, "no reported results"),
        ("Q", Status.NOT_RUN, "no reported results"),
    ]
    res = parse(model, results_text(model, exact_solve(doc), only=("P",)))
    outs = equilibrium.run(context(model, res))
    assert [o.status for o in outs] == [Status.PASS, Status.NOT_RUN]
    assert "Q" in outs[1].reason


def test_temperature_case_is_judged_against_the_thermal_force_scale() -> None:
    """A determinate truss heated is free of force: the float64 noise in the reported zeros must pass."""
    doc = copy.deepcopy(TRIANGLE)
    doc["units"] = {"length": "m", "force": "kN", "temperature": "degC"}
    for m in doc["members"]:
        m["alpha"] = 1.2e-5
    doc["load_cases"] = [{"id": "T", "temperature_changes": [{"member": "AB", "delta": 30}]}]
    model = model_of(doc)
    sol = context(model, None).solution
    assert sol is not None
    [out] = equilibrium.run(context(model, parse(model, results_text(model, list(sol.cases)))))
    assert out.status is Status.PASS
    scale = dict(out.summary)["scale"]
    assert np.isfinite(scale)
    # the noise floor (BOUND_SHARE of EA/L·αΔT·L) sits far above float64 noise and far below the thermal force
    k = 2.0e8 * 0.001 / 4
    assert scale == pytest.approx(cm.BOUND_SHARE * k * 1.2e-5 * 30 * 4)
