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

Tension-only and compression-only members (``FORMAT.md``, additions) are
judged by their state: the force the reported displacements imply is
``EA/L·e`` where the member is on its active side (``s·e > 0``, s = +1
tension-only, −1 compression-only) and 0 where it is slack.  A member slack
by the reported displacements but reported with a force is CP102; an active
tension-only member reported in compression (compression-only in tension) is
CP103, judged from the reported force alone.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import scipy.sparse as sp

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
        "CP102",
        Severity.ERROR,
        "a tension-only or compression-only member that the reported displacements leave slack is reported "
        "with a force",
        CHECK_ID,
    ),
    Rule(
        "CP103",
        Severity.ERROR,
        "a tension-only member is reported in compression, or a compression-only member in tension",
        CHECK_ID,
    ),
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
    model: Model, cr: CaseResults, free_elongation: FloatArray, B: sp.csr_matrix | None = None
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """(N_c, quantum of N_c, mechanical elongation) per member from the reported displacements (NaN if unknown).

    ``B``: the model's compatibility matrix when the caller holds it already."""
    B = stiffness.compatibility_matrix(model) if B is None else B
    U = cr.displacements.reshape(-1)
    elong = B @ np.nan_to_num(U)
    unknown = (abs(B) @ np.isnan(U).astype(np.float64)) > 0
    mech = np.where(unknown, np.nan, elong - free_elongation)
    k = model.axial_stiffness()
    qU = cm.quantum_or_zero(cr.displacement_quantum, cr.displacements).reshape(-1)
    force = k * mech
    if model.is_nonlinear:  # a slack member carries nothing, whatever its length change
        codes = model.behaviour_codes()
        with np.errstate(invalid="ignore"):
            force = np.where((codes != 0) & (codes * mech <= 0.0), 0.0, force)
    return force, k * (abs(B) @ qU), mech


def implied_ea(model: Model, forces: FloatArray, mech: FloatArray) -> FloatArray:
    """EA implied by a reported force and mechanical elongation: N·L/(elongation − free elongation); NaN if 0/0."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(np.abs(mech) > 0, forces * model.lengths() / mech, np.nan)


def _wrong_sense(ctx: Context, cid: str, cr: CaseResults, scale: float) -> list[Finding]:
    """CP103: non-linear members whose reported force has the sense they cannot carry."""
    model, tol = ctx.model, ctx.tolerances
    codes = model.behaviour_codes()
    N = cr.axial_forces
    q = cm.quantum_or_zero(cr.axial_force_quantum, N)
    allowed = tol.allowed(np.zeros_like(N), q, scale)
    with np.errstate(invalid="ignore"):
        bad = np.flatnonzero((codes != 0) & np.isfinite(N) & (codes * N < -allowed))
    out = []
    funit = model.units.force
    shown, _left = cm.listed(bad.tolist())
    for m in shown:
        kind = "tension-only" if codes[m] > 0 else "compression-only"
        sense = "compression" if codes[m] > 0 else "tension"
        out.append(
            Finding(
                code="CP103",
                severity=Severity.ERROR,
                case=cid,
                location=Location(member=model.member_ids[m]),
                message=f"member {model.member_ids[m]} is {kind} but is reported in {sense} "
                f"({cm.fmt(float(N[m]))} {funit})",
                reported=float(N[m]),
                expected=0.0,
                difference=float(N[m]),
                tolerance=float(allowed[m]),
                units=funit,
                data=(("behaviour", kind),),
            )
        )
    return out


def _check_case(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    if model.is_nonlinear and cr.has_axial_forces and not cr.has_displacements:
        actions = cm.case_actions(model, cid)
        assert actions is not None
        wrong = _wrong_sense(ctx, cid, cr, max(cm.scale_of(cr.axial_forces), actions.force_scale))
        if wrong:
            return cm.outcome(CHECK_ID, cid, wrong, f"{len(wrong)} members reported in the sense they cannot carry", [])
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
    codes = model.behaviour_codes()
    if model.is_nonlinear:
        findings += _wrong_sense(ctx, cid, cr, scale)
        named = {f.location.member for f in findings}
        failed = np.array([m for m in failed.tolist() if model.member_ids[m] not in named], dtype=np.int64)
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
        slack = bool(codes[m] != 0 and Nc[m] == 0.0)
        message = (
            f"member {model.member_ids[m]} is slack by the reported displacements (its length change "
            f"{cm.fmt(float(mech[m]))} {model.units.length} is on its slack side) but is reported with a force "
            f"of {cm.fmt(float(N[m]))} {funit}"
            if slack
            else f"member {model.member_ids[m]}: reported force {cm.fmt(float(N[m]))} {funit}, but EA/L × "
            f"elongation from the reported displacements gives {cm.fmt(float(Nc[m]))}{tail}"
        )
        out.append(
            Finding(
                code="CP102" if slack else "CP101",
                severity=Severity.ERROR,
                case=cid,
                location=Location(member=model.member_ids[m]),
                message=message,
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
