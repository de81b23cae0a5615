"""Compatibility of reported forces with reported displacements, including temperature and length errors.

Model: Timoshenko's three-bar truss (reference_cases/published/timoshenko_three_bar.json): its "heat" and
"lack_of_fit" cases stress the bars through the initial-strain terms of N = EA/L (elongation − αΔT·L − e₀)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from test_checks_common import ExactCase, context, exact_solve, model_of, parse, results_text

from audit.checks import compatibility
from audit.findings import Status

PUBLISHED = Path(__file__).resolve().parent.parent / "reference_cases" / "published"


def three_bar() -> dict[str, Any]:
    doc = json.loads((PUBLISHED / "timoshenko_three_bar.json").read_text())
    doc.pop("results")
    return doc


def _outcome(cases: dict[str, ExactCase], case: str, **kw: Any) -> Any:
    doc = three_bar()
    model = model_of(doc)
    outs = compatibility.run(context(model, parse(model, results_text(model, cases, **kw))))
    return next(o for o in outs if o.case == case)


@pytest.mark.parametrize("case", ["load", "heat", "lack_of_fit", "settlement", "design"])
def test_exact_results_are_compatible(case: str) -> None:
    out = _outcome(exact_solve(three_bar()), case, digits=5)
    assert out.status is Status.PASS
    assert dict(out.summary)["failed"] == 0


def test_a_force_off_by_half_reports_the_implied_ea() -> None:
    """BD reported at 1.5 × its force: the pair implies EA = 1.5 × 2e8 × 1e-3 = 3e5 kN."""
    ex = exact_solve(three_bar())
    n = ex["load"].axial_forces.copy()
    n[1] *= 1.5
    cases = dict(ex, load=ExactCase("load", ex["load"].displacements, n, ex["load"].reactions))
    out = _outcome(cases, "load")
    [f] = [f for f in out.findings if f.code == "CP101"]
    assert f.location.member == "BD"
    assert f.data_dict()["implied_EA"] == pytest.approx(3.0e5, rel=1e-9)
    assert f.data_dict()["EA_ratio"] == pytest.approx(1.5, rel=1e-9)


def test_forgetting_the_temperature_term_is_caught() -> None:
    """A source that wrote N = EA/L · elongation for the heated bar (no −αΔT·L) disagrees on BD."""
    doc = three_bar()
    ex = exact_solve(doc)
    model = model_of(doc)
    k = model.axial_stiffness()
    from audit import stiffness

    elong = stiffness.compatibility_matrix(model) @ ex["heat"].displacements.reshape(-1)
    wrong = ExactCase("heat", ex["heat"].displacements, k * elong, ex["heat"].reactions)
    out = _outcome(dict(ex, heat=wrong), "heat")
    assert {f.location.member for f in out.findings if f.code == "CP101"} == {"BD"}


def test_not_run_without_displacements_and_counted_when_partial() -> None:
    ex = exact_solve(three_bar())
    out = _outcome(ex, "load", parts=("axial_forces",))
    assert out.status is Status.NOT_RUN
    assert "displacements" in out.reason
    out = _outcome(ex, "load", skip_members=("AD",))
    [info] = [f for f in out.findings if f.code == "CP001"]
    assert info.data_dict()["members_not_checked"] == 1
