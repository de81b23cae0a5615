"""Compatibility of reported member forces with reported displacements.

For every member whose force and both end displacements are reported,

    N_c = EA/L · (n · (u_end − u_start) − α·Δt·L − e₀)

(FORMAT.md "Conventions"; common practice, e.g. Kassimali, *Matrix
Analysis of Structures*, 2nd ed., eq. 3.60 with the initial-strain terms of
§6.1; equation and section numbers recalled from memory) is
compared with the reported N.  The rounding quantum of N_c is
``EA/L · Σ |n_a| (q_u,start + q_u,end)``: printed displacements of nearly
equal size leave little of the elongation, and the check says so rather
than fail on it.  When the pair disagrees, the EA the reported pair implies,
``EA_implied = N · L / (elongation − α·Δt·L − e₀)``, is reported.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit import stiffness
from audit.checks import _common as cm
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity
from audit.model import CaseResults, FloatArray, Model
from audit.rules import Rule

CHECK_ID = "compatibility"

RULES = (
    Rule("CP001", Severity.INFO, "some members could not be checked for compatibility: values not reported", CHECK_ID),
    Rule(
        "CP101",
        Severity.ERROR,
        "a member's reported force does not match EA/L times the elongation from the reported displacements",
        CHECK_ID,
    ),
)


def run(ctx: Context) -> list[CheckOutcome]:
    return cm.per_case(ctx, CHECK_ID, lambda cid, cr: _check_case(ctx, cid, cr))


def compatible_forces(
    model: Model, cr: CaseResults, free_elongation: FloatArray
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """(N_c, quantum of N_c, mechanical elongation) per member from the reported displacements (NaN if unknown)."""
    B = stiffness.compatibility_matrix(model)
    U = cr.displacements.reshape(-1)
    elong = B @ np.nan_to_num(U)
    unknown = (abs(B) @ np.isnan(U).astype(np.float64)) > 0
    mech = np.where(unknown, np.nan, elong - free_elongation)
    k = model.axial_stiffness()
    qU = cm.quantum_or_zero(cr.displacement_quantum, cr.displacements).reshape(-1)
    return k * mech, k * (abs(B) @ qU), mech


def implied_ea(model: Model, forces: FloatArray, mech: FloatArray) -> FloatArray:
    """EA implied by a reported force and mechanical elongation: N·L/(elongation − free elongation); NaN if 0/0."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(np.abs(mech) > 0, forces * model.lengths() / mech, np.nan)


def _check_case(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    if not (cr.has_displacements and cr.has_axial_forces):
        missing = " and ".join(
            w for w, has in (("displacements", cr.has_displacements), ("member forces", cr.has_axial_forces)) if not has
        )
        return cm.not_run(CHECK_ID, cid, f"no {missing} reported, so compatibility cannot be checked")
    actions = cm.case_actions(model, cid)
    assert actions is not None
    funit = model.units.force
    Nc, qc, mech = compatible_forces(model, cr, actions.free_elongation)
    N = cr.axial_forces
    q = cm.quantum_or_zero(cr.axial_force_quantum, N) + qc
    scale = max(cm.scale_of(N), actions.force_scale)
    j = cm.judge(N, Nc, q, scale, tol)
    ea = implied_ea(model, N, mech)
    model_ea = model.E * model.A
    findings: list[Finding] = []
    failed = np.flatnonzero(j.failed)
    order = failed[np.argsort(-np.abs(j.difference[failed]) / np.maximum(j.allowed[failed], 1e-300), kind="stable")]
    out = []
    shown_idx, left = cm.listed(order.tolist())
    for m in shown_idx:
        data: list[tuple[str, Any]] = [
            ("quantity", "force vs elongation"),
            ("quantum", float(q[m])),
            ("model_EA", float(model_ea[m])),
        ]
        tail = ""
        if np.isfinite(ea[m]):
            data += [("implied_EA", float(ea[m])), ("EA_ratio", float(ea[m] / model_ea[m]))]
            ratio = float(ea[m] / model_ea[m])
            tail = f"; the reported pair implies EA = {cm.fmt(float(ea[m]))} ({cm.fmt(ratio)}× the model's)"
        out.append(
            Finding(
                code="CP101",
                severity=Severity.ERROR,
                case=cid,
                location=Location(member=model.member_ids[m]),
                message=f"member {model.member_ids[m]}: reported force {cm.fmt(float(N[m]))} {funit}, but EA/L × "
                f"elongation from the reported displacements gives {cm.fmt(float(Nc[m]))}{tail}",
                reported=float(N[m]),
                expected=float(Nc[m]),
                difference=float(j.difference[m]),
                tolerance=float(j.allowed[m]),
                units=funit,
                data=tuple(data),
            )
        )
    findings += out
    n_unchecked = int((~j.checked).sum())
    if n_unchecked:
        findings.append(
            Finding(
                code="CP001",
                severity=Severity.INFO,
                case=cid,
                message=f"{n_unchecked} of {model.n_members} members not checked for compatibility: "
                "their force or an end displacement was not reported",
                data=(("members_not_checked", n_unchecked),),
            )
        )
    if not j.checked.any():
        return cm.not_run(
            CHECK_ID, cid, "no member has both its force and its end displacements reported", tuple(findings)
        )
    # members whose printed displacements leave too few digits of elongation to judge (quantum ≥ |N_c|)
    inconclusive = int(np.sum(j.checked & (qc >= np.maximum(np.abs(np.nan_to_num(Nc)), tol.floor * scale))))
    summary: list[tuple[str, Any]] = [
        *j.counts().items(),
        ("scale", scale),
        ("inconclusive_by_rounding", inconclusive),
        ("findings_not_listed", left),
    ]
    reason = f"{int(j.checked.sum())} members checked, {int(j.failed.sum())} inconsistent"
    return cm.outcome(CHECK_ID, cid, findings, reason, summary)
