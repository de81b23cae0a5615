"""Causes particular to tension-only / compression-only members and to self weight (``FORMAT.md``, additions).

Each is a single cause, tested like the others: the model solved as the source would have had it gives a
:class:`~audit.checks.diagnosis.block.Prediction`, and the cause is reported when that prediction agrees with
every reported number (:meth:`Evaluator.worst` ≤ 1) where the model's own solution does not.

* DX121, the source treated the non-linear members as linear: the structure as built with every member
  linear (the engine's own factor: no factorisation); named by the members the source's numbers load in the
  sense they cannot carry (else those whose state differs);
* DX122, the source left out the self weight: the model with no ``self_weight``, solved as a non-linear
  model where it is one (:mod:`audit.nonlinear`, again from the engine's factor);
* DX123, the source superposed a combination of a non-linear model: the factored sum of its reported cases.

The other structural families (one member, one load, one support, in the single-cause search and in the
multi-cause fit) predict by linear superposition, which does not hold for a non-linear model;
:mod:`~audit.checks.diagnosis.core` does not try them there (the fit keeps the table mistakes: a slip, a
swap, which predict nothing structural).
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks.diagnosis.base import CHECK_ID
from audit.checks.diagnosis.block import Candidate, Evaluator, Prediction
from audit.context import Context
from audit.errors import UnsolvableError
from audit.findings import Location, Severity
from audit.model import CaseResults, Model
from audit.rules import Rule

RULES = (
    Rule("DX121", Severity.WARNING, "the source treated tension-only or compression-only members as linear", CHECK_ID),
    Rule("DX122", Severity.WARNING, "the source left out the members' self weight", CHECK_ID),
    Rule("DX123", Severity.WARNING, "the source superposed a combination of a non-linear model", CHECK_ID),
)

#: members named in one DX121 message
NAMED = 8


def applies(model: Model) -> bool:
    return model.is_nonlinear or any(lc.has_self_weight for lc in model.load_cases)


def _solve(ctx: Context, model: Model, cid: str) -> Prediction | None:
    from audit.solve import solve_with

    if ctx.factor is None:
        return None
    try:
        sol = solve_with(model, ctx.system, ctx.factor, ctx.condition)
    except UnsolvableError:
        return None
    cs = sol.case(cid)
    return None if cs is None else Prediction(cs.displacements, cs.axial_forces, cs.reactions)


def candidates(ctx: Context, ev: Evaluator, cid: str, obs: CaseResults) -> list[Candidate]:
    model = ctx.model
    out: list[Candidate] = []
    if model.is_nonlinear:
        linear = _solve(ctx, replace(model, behaviour=np.zeros(0, dtype=np.int64)), cid)
        if linear is not None:
            out.append(_linear(ctx, ev, cid, obs, linear))
        if model.combination_index(cid) is not None:
            summed = _superposed(ctx, cid)
            if summed is not None:
                out.append(
                    Candidate(
                        code="DX123",
                        message=f"the combination '{cid}' was superposed: the source's numbers are the factored "
                        "sum of its reported cases, which superposition does not give for a model with "
                        "tension-only or compression-only members",
                        location=Location(),
                        worst=ev.worst(summed),
                        data=(("cause", "superposed combination"),),
                    )
                )
    if any(lc.has_self_weight for lc in model.load_cases):
        cases = tuple(
            replace(lc, self_weight=0.0, self_weight_text="", self_weight_direction=(), self_weight_direction_text=())
            for lc in model.load_cases
        )
        without = _solve(ctx, replace(model, load_cases=cases), cid)
        if without is not None:
            out.append(
                Candidate(
                    code="DX122",
                    message=f"the source left out the self weight: without it the model reproduces the reported "
                    f"numbers of '{cid}'",
                    location=Location(),
                    worst=ev.worst(without),
                    data=(("cause", "self weight left out"),),
                )
            )
    return out


def _linear(ctx: Context, ev: Evaluator, cid: str, obs: CaseResults, linear: Prediction) -> Candidate:
    model = ctx.model
    codes = model.behaviour_codes()
    N = obs.axial_forces
    q = cm.quantum_or_zero(obs.axial_force_quantum, N)
    allowed = ctx.tolerances.allowed(np.zeros_like(q), q, max(cm.scale_of(N), cm.scale_of(linear.N)))
    with np.errstate(invalid="ignore"):
        wrong = np.flatnonzero((codes != 0) & np.isfinite(N) & (codes * N < -allowed)).tolist()
    if wrong:
        senses = sorted({"compression" if codes[i] > 0 else "tension" for i in wrong})
        what = f"they carry {' and '.join(senses)} in the source's numbers"
    else:
        ref = cm.reference(ctx, cid)
        own = ref.axial_forces if ref is not None else np.zeros_like(N)
        with np.errstate(invalid="ignore"):
            wrong = np.flatnonzero((codes != 0) & (own == 0.0) & (np.abs(N) > allowed)).tolist()
        what = "they are slack in the model but loaded in the source's numbers"
    names = ", ".join(model.member_ids[i] for i in wrong[:NAMED])
    more = f" and {len(wrong) - NAMED} more" if len(wrong) > NAMED else ""
    return Candidate(
        code="DX121",
        message=f"the source treated member(s) {names}{more} as linear ({what}); the model solved with every "
        "member linear reproduces its numbers",
        location=Location(member=model.member_ids[wrong[0]]) if wrong else Location(),
        worst=ev.worst(linear),
        data=(("members", tuple(model.member_ids[i] for i in wrong)),),
    )


def _superposed(ctx: Context, cid: str) -> Prediction | None:
    model = ctx.model
    comb = model.combinations[model.combination_index(cid)]  # type: ignore[index]
    parts = [cm.reported_case(ctx, model.load_cases[ci].id) for ci, _f, _t in comb.factors]
    if any(p is None for p in parts):
        return None
    factors = [f for _ci, f, _t in comb.factors]

    def total(attr: str, has: str) -> Any:
        out: Any = 0.0
        for p, f in zip(parts, factors, strict=True):
            assert p is not None
            v = getattr(p, attr) if getattr(p, has) else np.full(getattr(p, attr).shape, np.nan)
            out = out + f * v
        return out

    return Prediction(
        total("displacements", "has_displacements"),
        total("axial_forces", "has_axial_forces"),
        total("reactions", "has_reactions"),
    )
