"""Combinations of a model with tension-only or compression-only members (part of the combinations check).

Superposition does not hold for such a model (``FORMAT.md``, additions): a combination is solved as its
own case, and the factored sum of its cases is in general not its answer.  A reported combination is
compared with that factored sum of its reported cases (as the linear check does) *and* the factored sum
with the recomputed combination.  When the reported combination is the factored sum (it was superposed)
and the true combined answer differs from that sum beyond the tolerance, the finding CB103 says so, and
by how much.  A reported combination that is not a factored sum is what a correct non-linear source
writes; it is judged by the recompute check against the recomputed combination.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Severity
from audit.model import CaseResults, FloatArray

CHECK_ID = "combinations"

_PARTS = (
    ("displacement", "displacements", "displacement_quantum", "has_displacements"),
    ("axial_force", "axial_forces", "axial_force_quantum", "has_axial_forces"),
    ("reaction", "reactions", "reaction_quantum", "has_reactions"),
)


def _values(cr: CaseResults, attr: str, has: str) -> FloatArray:
    v = getattr(cr, attr)
    return v if getattr(cr, has) else np.full(v.shape, np.nan)


def check_nonlinear(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    comb = model.combinations[model.combination_index(cid)]  # type: ignore[index]
    case_ids = [model.load_cases[ci].id for ci, _f, _t in comb.factors]
    factors = np.array([f for _ci, f, _t in comb.factors])
    parts = [cm.reported_case(ctx, c) for c in case_ids]
    missing = [c for c, r in zip(case_ids, parts, strict=True) if r is None]
    if missing:
        return cm.not_run(CHECK_ID, cid, f"cases {', '.join(missing)} were not reported")
    ref = cm.reference(ctx, cid)
    if ref is None:
        return cm.not_run(CHECK_ID, cid, cm.unsolved_reason(ctx, cid) or f"combination '{cid}' was not recomputed")
    actions = cm.case_actions(model, cid)
    assert actions is not None
    units = {"displacement": model.units.length, "axial_force": model.units.force, "reaction": model.units.force}
    true_of = {"displacement": ref.displacements, "axial_force": ref.axial_forces, "reaction": ref.reactions}
    checked = equal_sum = 0
    worst: tuple[float, str, int, float, float, float, float] | None = None  # ratio, kind, i, rep, true, diff, tol
    for kind, attr, qattr, has in _PARTS:
        rep = _values(cr, attr, has).ravel()
        cols = np.stack([_values(p, attr, has).ravel() for p in parts if p is not None], axis=1)
        summed = cols @ factors
        q = cm.quantum_or_zero(getattr(cr, qattr).ravel(), rep)
        floor = actions.length_scale if kind == "displacement" else actions.force_scale
        true = np.asarray(true_of[kind], dtype=np.float64).ravel()
        scale = cm.first_nonzero(max(cm.scale_of(true), floor), cm.scale_of(rep))
        same = cm.judge(rep, summed, q, scale, tol)  # is the reported combination the factored sum?
        checked += int(same.checked.sum())
        equal_sum += int((same.checked & ~same.failed).sum())
        off = cm.judge(rep, true, q, scale, tol)  # and is that the combined answer?
        for i in np.flatnonzero(off.failed & same.checked & ~same.failed).tolist():
            ratio = float(abs(off.difference[i]) / max(off.allowed[i], 1e-300))
            if worst is None or ratio > worst[0]:
                worst = (ratio, kind, i, float(rep[i]), float(true[i]), float(off.difference[i]), float(off.allowed[i]))
    summary: list[tuple[str, Any]] = [("cases", tuple(case_ids)), ("checked", checked), ("equal_to_sum", equal_sum)]
    if checked == 0:
        return cm.not_run(CHECK_ID, cid, "no quantity is reported for both the combination and its cases")
    superposed = equal_sum == checked
    findings: list[Finding] = []
    if superposed and worst is not None:
        _r, kind, i, rep_v, true_v, diff, allowed = worst
        loc = cm.flat_location(model, kind, i)
        scale = cm.scale_of(true_of[kind])
        share = 100.0 * abs(diff) / scale if scale > 0 else float("inf")
        findings.append(
            Finding(
                code="CB103",
                severity=Severity.ERROR,
                case=cid,
                location=loc,
                message=f"combination '{cid}' is the factored sum of its reported cases, but superposition does "
                f"not hold for this model (tension-only or compression-only members): solved as its own case, "
                f"{loc.label()} is {cm.fmt(true_v)} {units[kind]}, not {cm.fmt(rep_v)} (off by {cm.fmt(abs(diff))}, "
                f"{share:.3g} % of the largest {kind.replace('_', ' ')})",
                reported=rep_v,
                expected=true_v,
                difference=diff,
                tolerance=allowed,
                units=units[kind],
                data=(("quantity", "combination " + kind.replace("_", " ")), ("percent_of_scale", share)),
            )
        )
    reason = (
        "the reported combination is the factored sum of its cases"
        + (", which superposition does not give here" if findings else ", and here that is also its answer")
        if superposed
        else "the reported combination is not a factored sum of its cases, as a non-linear model expects; "
        "it is judged against the recomputed combination by the recompute check"
    )
    return cm.outcome(CHECK_ID, cid, findings, reason, summary)
