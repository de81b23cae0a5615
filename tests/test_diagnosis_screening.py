"""The diagnosis's shortcuts never drop a cause the full search finds.

Two references, both outside the shortcuts under test:

* the source's results come from the direct stiffness solve written out in ``test_checks_diagnosis``
  (Kassimali, *Matrix Analysis of Structures*, 2nd ed., ch. 3; chapter recalled from memory), with one error
  injected on purpose (a units factor, a sign convention, one member's EA, a missing load, an extra support,
  five member forces off);
* the *unscreened* search: the screens of the load candidates (the joints, the witnesses) switched off and
  every sampled lower bound set to 0, so that every candidate of the single-cause search is evaluated exactly
  over every reported number (the exhaustive search the shortcuts must reproduce).

Each case is diagnosed both ways and must give the same findings (codes, locations, messages, in order); the
injected cause must be the one named.  A direct check of the screens: every load candidate they drop has an
exact figure above 1 in the exhaustive evaluation, and on these cases they do drop some (the test is not
vacuous); the joint screen alone drops every load candidate when five member forces are off at joints far
apart, with no solve.
"""

from __future__ import annotations

import copy
from typing import Any

import numpy as np
import pytest
from test_checks_common import ExactCase, context, model_of, parse, results_text
from test_checks_diagnosis import direct_stiffness, grid_doc

from audit.checks import diagnosis
from audit.checks.diagnosis import block as db
from audit.checks.diagnosis import loads as dcl

GRID = grid_doc(12)  # 13 top loads, 156 members (invented data, for these tests)
MID = "n6_12"


def _member(doc: dict[str, Any], start: str, end: str) -> int:
    return next(i for i, e in enumerate(doc["members"]) if (e["start"], e["end"]) == (start, end))


def _source(kind: str) -> tuple[ExactCase, dict[str, Any], tuple[str, str | None] | None]:
    """(the source's results, results_text options, the cause expected as (code, location label))."""
    ex = direct_stiffness(GRID)
    if kind == "units":  # forces reported in N under a kN header
        return ExactCase("P", ex.displacements, ex.axial_forces * 1000.0, ex.reactions * 1000.0), {}, ("DX102", None)
    if kind == "sign":  # compression reported positive under the tension-positive convention
        return ExactCase("P", ex.displacements, -ex.axial_forces, ex.reactions), {}, ("DX101", None)
    if kind == "ea":
        m = _member(GRID, "n5_5", "n6_6")
        src = direct_stiffness(GRID, ea_factor=(m, 0.1))
        return src, {}, ("DX104", f"member {GRID['members'][m]['id']}")
    if kind == "missing_load":
        return direct_stiffness(GRID, drop_load=MID), {}, ("DX105", f"node {MID}")
    if kind == "support":  # the source pinned the middle of the bottom chord as well
        doc = copy.deepcopy(GRID)
        doc["supports"].append({"node": "n6_0", "restrain": ["x", "y"]})
        return direct_stiffness(doc), {}, None
    if kind == "missing_member":  # a diagonal left out of the source's model
        m = _member(GRID, "n5_5", "n6_6")
        return direct_stiffness(GRID, ea_factor=(m, 0.0)), {}, ("DX111", f"member {GRID['members'][m]['id']}")
    if kind == "swap":  # two member forces' labels swapped in the source's table
        n = ex.axial_forces.copy()
        a, b = _member(GRID, "n5_5", "n6_6"), _member(GRID, "n2_3", "n3_3")
        n[[a, b]] = n[[b, a]]
        return ExactCase("P", ex.displacements, n, ex.reactions), {}, ("DX116", None)
    if kind == "five":  # five member forces 3-6 % off: more independent errors than the fit may name
        n = ex.axial_forces.copy()
        for m, f in zip((10, 50, 90, 130, 150), (1.03, 0.95, 1.06, 0.96, 1.04), strict=True):
            n[m] *= f
        return ExactCase("P", ex.displacements, n, ex.reactions), {}, ("DX001", None)
    raise AssertionError(kind)


KINDS = ("units", "sign", "ea", "missing_member", "missing_load", "support", "swap", "five")


def _run(kind: str, screened: bool, monkeypatch: pytest.MonkeyPatch) -> tuple[Any, list[Any]]:
    src, kw, _expected = _source(kind)
    model = model_of(GRID)
    ctx = context(model, parse(model, results_text(model, {"P": src}, digits=9, **kw)))
    masks: list[Any] = []
    with monkeypatch.context() as mp:
        if screened:
            real = dcl.screen_loads

            def spy(*a: Any) -> Any:
                out = real(*a)
                masks.append(out)
                return out

            mp.setattr(dcl, "screen_loads", spy)
        else:
            _unscreened(mp)
        [out] = diagnosis.run(ctx)
    return out, masks


def _unscreened(mp: pytest.MonkeyPatch) -> None:
    """Every load candidate solved, every candidate of the single search evaluated over every number."""
    mp.setattr(dcl, "screen_loads", lambda *a: np.ones(a[7].shape[1], dtype=bool))
    mp.setattr(db.Evaluator, "lower_bounds", lambda self, sub, pmax: np.zeros(next(iter(pmax.values())).size))


def _case_p(kind: str) -> tuple[Any, Any, Any, Any, Any]:
    """Case P of the grid with the ``kind`` error injected: model, context, reported case, prediction, actions."""
    src, kw, _expected = _source(kind)
    model = model_of(GRID)
    ctx = context(model, parse(model, results_text(model, {"P": src}, digits=9, **kw)))
    assert ctx.results is not None
    assert ctx.solution is not None
    cr, sol = ctx.results.case("P"), ctx.solution.case("P")
    assert cr is not None
    assert sol is not None
    base = db.Prediction(sol.displacements, sol.axial_forces, sol.reactions)
    actions = diagnosis.cm.case_actions(model, "P")
    assert actions is not None
    return model, ctx, cr, base, actions


def _findings(out: Any) -> list[tuple[str, str, str]]:
    return [(f.code, f.location.label(), f.message) for f in out.findings]


@pytest.mark.parametrize("kind", KINDS)
def test_screened_search_names_what_the_exhaustive_search_names(kind: str, monkeypatch: pytest.MonkeyPatch) -> None:
    screened, _masks = _run(kind, True, monkeypatch)
    full, _none = _run(kind, False, monkeypatch)
    assert _findings(screened) == _findings(full)
    expected = _source(kind)[2]
    if expected is not None:
        code, where = expected
        assert any(f.code == code and (where is None or f.location.label() == where) for f in screened.findings), (
            _findings(screened)
        )


@pytest.mark.parametrize("kind", ["ea", "missing_load", "five"])
def test_every_load_candidate_the_screens_drop_fails_the_exact_check(kind: str) -> None:
    """The screens' verdicts against the exact figure of every load candidate (no bounds, no screen)."""
    model, ctx, cr, base, actions = _case_p(kind)
    masks: list[Any] = []
    real = dcl.screen_loads

    def spy(*a: Any) -> Any:
        masks.append(real(*a))
        return masks[-1]

    mp = pytest.MonkeyPatch()
    try:
        mp.setattr(dcl, "screen_loads", spy)
        ev = db.Evaluator(model, actions, cr, ctx.tolerances, base)
        dcl.load_candidates(ctx, ev, cr, base, db.Superposition(ctx), actions.loads)
        _unscreened(mp)
        ev = db.Evaluator(model, actions, cr, ctx.tolerances, base)
        every = dcl.load_candidates(ctx, ev, cr, base, db.Superposition(ctx), actions.loads)
    finally:
        mp.undo()
    [alive] = masks
    figures = np.array([c.worst for c in every])
    assert all(c.exact for c in every)
    assert alive.size == figures.size
    assert np.all(figures[~alive] > 1.0), figures[~alive]
    assert (~alive).sum() >= figures.size // 2  # the screen drops most of them here


def test_the_joint_screen_drops_every_load_candidate_of_five_force_errors_without_a_solve() -> None:
    """Five member forces off at joints far apart: at least three joints are unbalanced beyond the allowances
    of their members, and no single load change (one node, or two for a move) reaches them all; so every load
    candidate is dropped before any solve (the witness screen is not called), and the exhaustive evaluation
    confirms that none of them explains the results (the test above)."""
    model, ctx, cr, base, actions = _case_p("five")
    ev = db.Evaluator(model, actions, cr, ctx.tolerances, base)
    solver = db.Superposition(ctx)
    proved = db.unbalanced_joints(ctx, ev, solver, actions.loads, cr, 0.0)
    # the joints of the five members, and only joints of theirs: a balanced joint is never proved unbalanced
    ends = set(model.conn[[10, 50, 90, 130, 150]].ravel().tolist())
    assert len(proved) >= 3
    assert set(proved.tolist()) <= ends
    calls: list[int] = []
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(dcl, "witness_screen", lambda *a: calls.append(1) or np.ones(a[5].shape[1], dtype=bool))
        mp.setattr(solver.factor, "solve", lambda b: calls.append(2))
        every = dcl.load_candidates(ctx, ev, cr, base, solver, actions.loads)
    assert every
    assert calls == []
    assert all(c.worst == np.inf for c in every)


def test_the_joint_screen_proves_nothing_when_the_forces_balance() -> None:
    """A member's EA changed in the source: its forces still balance the model's loads at every joint
    (the method of joints; common practice), so no joint is proved unbalanced."""
    model, ctx, cr, base, actions = _case_p("ea")
    ev = db.Evaluator(model, actions, cr, ctx.tolerances, base)
    assert db.unbalanced_joints(ctx, ev, db.Superposition(ctx), actions.loads, cr, 0.0).size == 0
