"""Independent recomputation: per quantity reported, recomputed, difference, allowed and verdict; the
reference used (high precision or float64) is said; what was not reported is counted.  References: exact
sympy solutions (``test_checks_common.exact_solve``)."""

from __future__ import annotations

import copy
from typing import Any

import pytest
from test_checks_common import (
    TRIANGLE,
    ExactCase,
    PrecisionStandIn,
    context,
    exact_solve,
    model_of,
    parse,
    results_text,
)
from test_mutation import PRATT

from audit.checks import recompute
from audit.findings import Status


def _outcome(doc: dict[str, Any], cases: dict[str, ExactCase], precision: Any = None, **kw: Any) -> Any:
    model = model_of(doc)
    [out] = recompute.run(context(model, parse(model, results_text(model, cases, **kw)), precision=precision))
    return out


def test_full_precision_against_high_precision_reference_is_all_rounding() -> None:
    ex = exact_solve(PRATT)
    out = _outcome(PRATT, ex, precision=PrecisionStandIn(ex))
    s = dict(out.summary)
    assert out.status is Status.PASS
    assert s["reference"] == "high precision"
    assert s["axial_force_failed"] == 0
    assert "RC002" not in {f.code for f in out.findings}


def test_float64_reference_is_said() -> None:
    out = _outcome(PRATT, exact_solve(PRATT), digits=4)
    assert dict(out.summary)["reference"] == "float64"
    assert [f.code for f in out.findings] == ["RC002"]


def test_a_three_percent_error_is_reported_with_its_numbers() -> None:
    ex = exact_solve(PRATT)["P"]
    n = ex.axial_forces.copy()
    n[1] *= 1.03  # member 2, N = 190/9 kN (method of sections, see test_mutation)
    out = _outcome(PRATT, {"P": ExactCase("P", ex.displacements, n, ex.reactions)}, digits=6)
    [f] = [f for f in out.findings if f.code == "RC102"]
    assert f.location.member == "2"
    assert f.expected == pytest.approx(190 / 9, rel=1e-9)
    assert f.reported == pytest.approx(1.03 * 190 / 9, rel=1e-5)
    assert f.difference == pytest.approx(f.reported - f.expected)
    assert f.tolerance < abs(f.difference)
    assert f.data_dict()["basis"] == "fail"
    table = dict(out.summary)["table"]
    assert table[0][:2] == ("axial_force", "member 2")
    assert table[0][-1] == "fail"


def test_unreported_quantities_are_counted() -> None:
    out = _outcome(TRIANGLE, exact_solve(TRIANGLE), skip_nodes=("C",), skip_members=("AB",))
    [info] = [f for f in out.findings if f.code == "RC001"]
    d = info.data_dict()
    assert (d["displacements_not_reported"], d["axial_forces_not_reported"], d["reactions_not_reported"]) == (2, 1, 0)


def test_unsolvable_model_is_not_run_with_the_reason() -> None:
    doc = copy.deepcopy(TRIANGLE)
    doc["supports"] = [{"node": "A", "restrain": ["x", "y"]}]  # free to turn about A
    model = model_of(doc)
    ex = exact_solve(TRIANGLE)
    res = parse(model, results_text(model, ex, parts=("axial_forces",)))
    ctx = context(model, res)
    [out] = recompute.run(ctx)
    assert out.status is Status.NOT_RUN
    assert ctx.unsolvable_reason
    assert ctx.unsolvable_reason in out.reason


def test_with_the_projects_high_precision_module() -> None:
    """End to end with audit.precision: the published three-bar results (5 figures) agree, and the
    comparison says it used the high-precision answer."""
    from dataclasses import replace
    from pathlib import Path

    from audit import exchange, precision

    path = Path(__file__).resolve().parent.parent / "reference_cases" / "published" / "timoshenko_three_bar.json"
    model = exchange.parse_model(path.read_text())
    ctx = context(model, model.results)
    assert ctx.factor is not None
    assert ctx.solution is not None
    ctx = replace(ctx, precision=precision.analyse(model, ctx.system, ctx.factor, ctx.solution, model.results))
    outs = recompute.run(ctx)
    assert [o.status for o in outs] == [Status.PASS] * 5
    assert {dict(o.summary)["reference"] for o in outs} == {"high precision"}
