"""Support consistency: reactions only where and along what a support can push, prescribed displacements,
spring reactions −k·u.  Models: reference_cases/published (Logan's inclined roller, the spring in series,
Timoshenko's three-bar truss with its settlement case) and the 3-4-5 triangle of ``test_checks_common``."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import pytest
from test_checks_common import TRIANGLE, ExactCase, context, exact_solve, model_of, parse, results_text

from audit.checks import supports
from audit.findings import Status

PUBLISHED = Path(__file__).resolve().parent.parent / "reference_cases" / "published"


def published(name: str) -> dict[str, Any]:
    doc = json.loads((PUBLISHED / name).read_text())
    doc.pop("results")
    return doc


def _run(doc: dict[str, Any], cases: dict[str, ExactCase], **kw: Any) -> list[Any]:
    model = model_of(doc)
    return supports.run(context(model, parse(model, results_text(model, cases, **kw))))


def _changed(ex: ExactCase, *, u: Any = None, r: Any = None) -> dict[str, ExactCase]:
    U, R = ex.displacements.copy(), ex.reactions.copy()
    if u is not None:
        u(U)
    if r is not None:
        r(R)
    return {ex.case_id: ExactCase(ex.case_id, U, ex.axial_forces, R)}


@pytest.mark.parametrize(
    "name", ["logan_inclined_roller.json", "spring_series.json", "timoshenko_three_bar.json", "tripod_space.json"]
)
def test_exact_results_satisfy_every_support(name: str) -> None:
    outs = _run(published(name), exact_solve(published(name)), digits=4)
    assert all(o.status is Status.PASS for o in outs)
    assert not [f for o in outs for f in o.findings if f.code != "SP001"]


def test_reaction_across_an_inclined_roller_is_named_with_its_direction() -> None:
    """Node 3 rolls on the line (1, −1)/√2: its reaction may only act along the normal; 10 kN added along
    the free direction (1, 1)/√2 must be reported as exactly that component."""
    doc = published("logan_inclined_roller.json")
    ex = exact_solve(doc)["P"]
    s = 10.0 / math.sqrt(2.0)

    def add(R: Any) -> None:
        R[2] += (s, s)

    [out] = _run(doc, _changed(ex, r=add))
    [f] = [f for f in out.findings if f.code == "SP102"]
    assert f.location.node == "3"
    assert f.location.axis is None  # not along an axis
    assert abs(f.difference) == pytest.approx(10.0, rel=1e-9)
    assert [abs(v) for v in f.data_dict()["direction"]] == pytest.approx([1 / math.sqrt(2)] * 2)


def test_spring_reaction_must_be_minus_k_u() -> None:
    """spring_series: k = 5000 kN/m, u1 = P/k = 0.004 m, so the spring pushes −20 kN; report −22."""
    doc = published("spring_series.json")
    ex = exact_solve(doc)["P"]

    def bump(R: Any) -> None:
        R[0, 0] = -22.0

    [out] = _run(doc, _changed(ex, r=bump))
    [f] = [f for f in out.findings if f.code == "SP104"]
    assert (f.location.node, f.reported, f.expected) == ("1", pytest.approx(-22.0), pytest.approx(-20.0))


def test_spring_not_checkable_without_displacements() -> None:
    doc = published("spring_series.json")
    [out] = _run(doc, exact_solve(doc), parts=("axial_forces", "reactions"))
    assert dict(out.summary)["not_checked_springs"] == 1
    assert [f.code for f in out.findings] == ["SP001"]


def test_settlement_is_the_prescribed_displacement() -> None:
    """three-bar "settlement": C moves (0.001, −0.003) m.  A source that ignored it reports C fixed."""
    doc = published("timoshenko_three_bar.json")
    ex = exact_solve(doc)["settlement"]

    def fix_c(U: Any) -> None:
        U[2] = (0.0, 0.0)

    outs = _run(doc, _changed(ex, u=fix_c), only=("settlement",))
    out = next(o for o in outs if o.case == "settlement")
    got = sorted((f.location.node, f.location.axis, f.expected) for f in out.findings if f.code == "SP103")
    assert got == [("C", "x", pytest.approx(0.001)), ("C", "y", pytest.approx(-0.003))]


def test_reaction_at_an_unsupported_node() -> None:
    ex = exact_solve(TRIANGLE)["P"]

    def add(R: Any) -> None:
        R[2, 1] = 3.0

    [out] = _run(TRIANGLE, _changed(ex, r=add))
    assert [(f.code, f.location.node, f.location.axis) for f in out.findings] == [("SP101", "C", "y")]
