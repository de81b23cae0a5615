"""The precision check (HP1xx): proof status findings, from exact references (sympy, see test_precision.py)."""

from __future__ import annotations

from typing import Any

import pytest
from test_precision import model_of, pythagorean_doc, results_from, sympy_reference

from audit import precision
from audit.checks import precision_check
from audit.context import Context
from audit.findings import Severity, Status
from audit.rules import CODE_PATTERN
from audit.solve import build_system, factorize_system, solve_with
from audit.tolerances import Tolerances


def context(doc: dict[str, Any], with_precision: bool = True, **kw: Any) -> Context:
    model = model_of(doc)
    system = build_system(model)
    factor, cond = factorize_system(model, system)
    sol = solve_with(model, system, factor, cond)
    rep = precision.analyse(model, system, factor, sol, model.results, **kw) if with_precision else None
    return Context(
        model=model,
        results=model.results,
        tolerances=Tolerances(),
        system=system,
        factor=factor,
        condition=cond,
        stability=None,  # type: ignore[arg-type]  # not read by this check
        solution=sol,
        unsolvable_reason="",
        precision=rep,
    )


@pytest.fixture(scope="module")
def reference() -> dict[str, Any]:
    return sympy_reference(pythagorean_doc(exact=True))


def outcomes_for(reference: dict[str, Any], sig: int, bump: float, **kw: Any) -> list:
    base = pythagorean_doc(exact=True)
    doc = pythagorean_doc(exact=True, results=results_from(reference, base, "snow", sig, bump=bump))
    return precision_check.run(context(doc, **kw))


def codes(outcome: Any) -> set[str]:
    return {f.code for f in outcome.findings}


def test_rounded_exact_results_pass_with_proof(reference: dict[str, Any]) -> None:
    model_wide, snow = outcomes_for(reference, 6, 1.0)
    assert model_wide.status is Status.PASS
    assert "HP101" in codes(model_wide)
    assert snow.case == "snow"
    assert snow.status is Status.PASS
    assert "HP107" in codes(snow)
    assert not codes(snow) & {"HP102", "HP103"}


def test_wrong_displacement_with_precise_data_is_an_error(reference: dict[str, Any]) -> None:
    _mw, snow = outcomes_for(reference, 6, 1.01)
    assert snow.status is Status.FAIL
    err = next(f for f in snow.findings if f.code == "HP102")
    assert err.severity is Severity.ERROR
    assert (err.location.node, err.location.axis) == ("E", "y")
    assert err.difference is not None
    assert err.tolerance is not None
    assert err.difference > err.tolerance


def test_overstated_digits_within_data_precision_is_a_warning(reference: dict[str, Any]) -> None:
    _mw, snow = outcomes_for(reference, 16, 1.0 + 1e-11)
    assert snow.status is Status.PASS
    warn = next(f for f in snow.findings if f.code == "HP103")
    assert warn.severity is Severity.WARNING
    assert (warn.location.node, warn.location.axis) == ("E", "y")


def test_no_precision_report_is_not_run() -> None:
    (only,) = precision_check.run(context(pythagorean_doc(), with_precision=False))
    assert only.status is Status.NOT_RUN
    assert only.reason


def test_unestablished_bound_is_not_run_with_reason(reference: dict[str, Any]) -> None:
    model_wide, snow = outcomes_for(reference, 6, 1.0, dense_limit=0, sparse_limit=0)
    assert "HP105" in codes(model_wide)
    assert snow.status is Status.NOT_RUN
    assert "HP105" in codes(snow)
    assert snow.reason


def test_rules_are_well_formed_and_cover_raised_codes(reference: dict[str, Any]) -> None:
    declared = {r.code for r in precision_check.RULES}
    assert all(CODE_PATTERN.match(c) and c.startswith("HP") for c in declared)
    assert all(r.family == precision_check.CHECK_ID for r in precision_check.RULES)
    raised = set()
    for bump in (1.0, 1.01):
        for o in outcomes_for(reference, 6, bump):
            raised |= codes(o)
    assert raised <= declared
