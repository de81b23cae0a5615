"""Combinations: reported combination against the factored sum of its reported cases (superposition) and
the recomputed combination; refitted factors.  Model: Timoshenko's three-bar truss with its combination
design = 1.35 load + 0.9 heat + 1.0 lack_of_fit (reference_cases/published/timoshenko_three_bar.json)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from test_checks_common import TRIANGLE, ExactCase, context, exact_solve, model_of, parse, results_text

from audit.checks import combinations
from audit.findings import Status

PUBLISHED = Path(__file__).resolve().parent.parent / "reference_cases" / "published"


def three_bar() -> dict[str, Any]:
    doc = json.loads((PUBLISHED / "timoshenko_three_bar.json").read_text())
    doc.pop("results")
    return doc


def _run(cases: dict[str, ExactCase], **kw: Any) -> Any:
    doc = three_bar()
    model = model_of(doc)
    [out] = combinations.run(context(model, parse(model, results_text(model, cases, **kw))))
    return out


def test_exact_combination_is_the_factored_sum_and_the_recomputation() -> None:
    out = _run(exact_solve(three_bar()), digits=5)
    s = dict(out.summary)
    assert out.status is Status.PASS
    assert s["agrees_with_recomputed"] is True
    assert s["factors"] == (1.35, 0.9, 1.0)


def test_wrong_factor_is_found_and_refitted() -> None:
    ex = exact_solve(three_bar())
    f = {"load": 1.2, "heat": 0.9, "lack_of_fit": 1.0}
    u = sum(v * ex[c].displacements for c, v in f.items())
    n = sum(v * ex[c].axial_forces for c, v in f.items())
    r = sum(v * ex[c].reactions for c, v in f.items())
    cases = dict(ex, design=ExactCase("design", np.asarray(u), np.asarray(n), np.asarray(r)))
    out = _run(cases, digits=6)
    assert out.status is Status.FAIL
    assert {x.location.member for x in out.findings if x.code == "CB101" and x.location.member} == {"AD", "BD", "CD"}
    [fit] = [x for x in out.findings if x.code == "CB102"]
    assert fit.data_dict()["fitted_factors"] == pytest.approx((1.2, 0.9, 1.0), rel=1e-4)
    assert fit.data_dict()["cases_alike"] is True  # heat and lack of fit both strain BD alone


def test_combination_with_an_unreported_case_is_not_run() -> None:
    out = _run(exact_solve(three_bar()), only=("load", "heat", "design"))
    assert out.status is Status.NOT_RUN
    assert [f.code for f in out.findings] == ["CB001"]
    assert "lack_of_fit" in out.reason


def test_model_without_combinations() -> None:
    model = model_of(TRIANGLE)
    [out] = combinations.run(context(model, parse(model, results_text(model, exact_solve(TRIANGLE)))))
    assert (out.case, out.status) == (None, Status.NOT_RUN)
