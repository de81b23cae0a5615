"""Diagnosis without a recomputation: only the joint residuals of the reported forces can be compared with
the applied loads (a load missing or applied twice, DX105 / DX106)."""

from __future__ import annotations

import numpy as np

from audit.checks import _common as cm
from audit.checks.diagnosis.base import CHECK_ID
from audit.checks.equilibrium import joint_residuals
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity
from audit.model import CaseResults, FloatArray


# ----------------------------------------------------------------- no solution
def diagnose_unsolved(ctx: Context, cid: str, cr: CaseResults, loads: FloatArray) -> CheckOutcome:
    """Without a recomputation only the joint residuals can be compared with the applied loads."""
    model, tol = ctx.model, ctx.tolerances
    if not cr.has_axial_forces:
        reason = ctx.unsolvable_reason or "no recomputation"
        return cm.not_run(CHECK_ID, cid, f"no recomputation and no reported member forces: {reason}")
    res, q, mag = joint_residuals(model, loads, cr)
    scale = cm.scale_of(loads, cr.axial_forces, cm.effective_reactions(model, cr))
    j = cm.judge(res, np.zeros_like(res), q, scale, tol, magnitude=mag)
    if not j.failed.any():
        return cm.outcome(CHECK_ID, cid, [], "the reported results are in equilibrium: nothing to explain", [])
    findings: list[Finding] = []
    for a in np.flatnonzero(np.any(loads != 0.0, axis=1)).tolist():
        for code, sign, what in (("DX105", 1.0, "missing from"), ("DX106", -1.0, "applied twice in")):
            corrected = res.copy()
            corrected[a] -= sign * loads[a]
            jc = cm.judge(corrected, np.zeros_like(res), q, scale, tol, magnitude=mag)
            if jc.checked[a].all() and not jc.failed.any():
                w = jc.worst()
                nid = model.node_ids[a]
                findings.append(
                    Finding(
                        code=code,
                        severity=Severity.WARNING,
                        case=cid,
                        location=Location(node=nid),
                        message=f"the joint residual at node {nid} equals {'' if sign > 0 else 'minus '}its load: "
                        f"the load is {what} the source's analysis (no recomputation was possible, so only "
                        "the equilibrium of the reported forces was used)",
                        data=(
                            ("node", nid),
                            ("residual", [float(x) for x in res[a]]),
                            ("load", [float(x) for x in loads[a]]),
                            ("residual_after", w[1] if w else 0.0),
                        ),
                    )
                )
    if not findings:
        findings.append(
            Finding(
                code="DX001",
                severity=Severity.INFO,
                case=cid,
                message="no single cause found: the joint residuals do not match any applied load "
                "(no recomputation was possible)",
            )
        )
    return cm.outcome(CHECK_ID, cid, findings, "joint residuals compared with the applied loads", [])
