"""Causes of differences particular to tension-only / compression-only members and self weight.

For each reported case whose numbers the model's own solution does not reproduce (the recompute
check's judgement), three explanations are tried (:mod:`audit.nonlinear.causes`), each by solving the
model as the source would have had it and asking whether *that* reproduces every reported displacement,
force and reaction of the case within the recompute check's tolerances:

* NC101: the source treated the non-linear members as linear (named: those its numbers load in the sense
  they cannot carry, else those whose state differs);
* NC102: the source left out the self weight;
* NC103: the source superposed a combination (its combination is the factored sum of its reported cases).

A cause is reported only when it explains the case; otherwise the outcome says that none of them does.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks.recompute import compare_case
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Severity
from audit.model import CaseResults
from audit.nonlinear import causes
from audit.rules import Rule

CHECK_ID = "nonlinear-causes"

RULES = (
    Rule(
        "NC101",
        Severity.WARNING,
        "cause: the source treated tension-only or compression-only members as linear",
        CHECK_ID,
    ),
    Rule("NC102", Severity.WARNING, "cause: the source left out the members' self weight", CHECK_ID),
    Rule("NC103", Severity.WARNING, "cause: the source superposed a combination of a non-linear model", CHECK_ID),
)

#: members named in one NC101 message
NAMED = 8


def run(ctx: Context) -> list[CheckOutcome]:
    model = ctx.model
    if not (model.is_nonlinear or causes.has_self_weight(model)):
        return [cm.not_run(CHECK_ID, None, "no non-linear member and no self weight")]
    variants: dict[str, Any] = {}

    def variant(name: str) -> Any:
        if name not in variants:
            alt = causes.linear_variant(model) if name == "linear" else causes.without_self_weight(model)
            variants[name] = causes.solve_variant(alt)
        return variants[name]

    return cm.per_case(ctx, CHECK_ID, lambda cid, cr: _case(ctx, cid, cr, variant))


def _matches(ctx: Context, cid: str, cr: CaseResults, ref: cm.Reference) -> bool:
    actions = cm.case_actions(ctx.model, cid)
    assert actions is not None
    js = compare_case(ctx.model, actions, cr, ref, ctx.tolerances)
    return sum(int(j.checked.sum()) for j in js.values()) > 0 and all(int(j.failed.sum()) == 0 for j in js.values())


def _as_reference(solution: Any, cid: str) -> cm.Reference | None:
    cs = solution.case(cid) if solution is not None else None
    if cs is None:
        return None
    return cm.Reference(cs.displacements, cs.axial_forces, cs.reactions, "float64")


def _case(ctx: Context, cid: str, cr: CaseResults, variant: Any) -> CheckOutcome:
    model = ctx.model
    ref = cm.reference(ctx, cid)
    if ref is None:
        return cm.not_run(CHECK_ID, cid, cm.unsolved_reason(ctx, cid) or f"'{cid}' was not recomputed")
    if _matches(ctx, cid, cr, ref):
        return cm.outcome(CHECK_ID, cid, [], "the reported results agree with the recomputation", [])
    findings: list[Finding] = []
    if model.is_nonlinear:
        lin = _as_reference(variant("linear"), cid)
        if lin is not None and _matches(ctx, cid, cr, lin):
            findings.append(_linear_finding(ctx, cid, cr, ref))
        elif model.combination_index(cid) is not None and _superposed(ctx, cid, cr):
            findings.append(
                Finding(
                    code="NC103",
                    severity=Severity.WARNING,
                    case=cid,
                    message=f"the combination '{cid}' was superposed: the source's numbers are the factored sum of "
                    "its reported cases, which superposition does not give for a model with tension-only or "
                    "compression-only members",
                )
            )
    if causes.has_self_weight(model) and not findings:
        alt = _as_reference(variant("no_self_weight"), cid)
        if alt is not None and _matches(ctx, cid, cr, alt):
            findings.append(
                Finding(
                    code="NC102",
                    severity=Severity.WARNING,
                    case=cid,
                    message=f"the source left out the self weight: without it the model reproduces every reported "
                    f"number of '{cid}'",
                )
            )
    reason = "cause found: " + findings[0].code if findings else "no cause particular to non-linear members found"
    return cm.outcome(CHECK_ID, cid, findings, reason, [])


def _linear_finding(ctx: Context, cid: str, cr: CaseResults, ref: cm.Reference) -> Finding:
    model = ctx.model
    q = cm.quantum_or_zero(cr.axial_force_quantum, cr.axial_forces)
    scale = max(cm.scale_of(cr.axial_forces), cm.scale_of(ref.axial_forces))
    allowed = ctx.tolerances.allowed(np.zeros_like(q), q, scale)
    wrong = causes.wrong_sense_members(model, cr, allowed)
    codes = model.behaviour_codes()
    if wrong:
        senses = {("compression" if codes[i] > 0 else "tension") for i in wrong}
        what = f"they carry {' and '.join(sorted(senses))} in the source's numbers"
    else:
        wrong = np.flatnonzero((codes != 0) & (ref.axial_forces == 0.0) & (np.abs(cr.axial_forces) > allowed)).tolist()
        what = "they are slack here but loaded in the source's numbers"
    names = ", ".join(model.member_ids[i] for i in wrong[:NAMED]) + (
        f" and {len(wrong) - NAMED} more" if len(wrong) > NAMED else ""
    )
    return Finding(
        code="NC101",
        severity=Severity.WARNING,
        case=cid,
        message=f"the source treated member(s) {names} as linear ({what}); the model solved with every member "
        f"linear reproduces the reported numbers of '{cid}'",
        data=(("members", tuple(model.member_ids[i] for i in wrong)),),
    )


def _superposed(ctx: Context, cid: str, cr: CaseResults) -> bool:
    model, tol = ctx.model, ctx.tolerances
    comb = model.combinations[model.combination_index(cid)]  # type: ignore[index]
    parts = [cm.reported_case(ctx, model.load_cases[ci].id) for ci, _f, _t in comb.factors]
    if any(p is None for p in parts) or not cr.has_axial_forces:
        return False
    factors = np.array([f for _ci, f, _t in comb.factors])
    summed = np.stack([p.axial_forces for p in parts if p is not None], axis=1) @ factors
    q = cm.quantum_or_zero(cr.axial_force_quantum, cr.axial_forces)
    j = cm.judge(cr.axial_forces, summed, q, max(cm.scale_of(summed), 1e-300), tol)
    return bool(j.checked.any() and not j.failed.any())
