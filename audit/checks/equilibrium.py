"""Equilibrium of the reported results: at every joint, and of the whole structure.

Joint equilibrium (method of joints): at every joint, per axis,
``f + r − Bᵀ N = 0`` with the applied loads f, the reported reactions r and
the reported member forces N (tension positive, resolved along each member).
Global equilibrium: ``Σ f + Σ r = 0`` and ``Σ (x − c) × (f + r) = 0`` about
the centroid c of the joints (one moment in 2D, three in 3D); member forces
cancel in these sums.  Common practice; e.g. Hibbeler, *Structural
Analysis*, §3.4 (method of joints) and §2.4 (equations of equilibrium); section numbers
recalled from memory.

Each residual is judged with :meth:`audit.tolerances.Tolerances.allowed`:
the expected magnitude is the sum of the absolute terms meeting at that
joint and axis, the scale the largest |force|, load or reaction in the case,
and the quantum the sum of the terms' rounding quanta.
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

CHECK_ID = "equilibrium"

#: rows of the joint residual table kept per case (worst first)
TABLE_ROWS = 60

RULES = (
    Rule(
        "EQ001",
        Severity.INFO,
        "some joints or the global balance could not be checked: quantities not reported",
        CHECK_ID,
    ),
    Rule(
        "EQ101",
        Severity.ERROR,
        "a joint is out of equilibrium: loads, reported member forces and reactions leave a residual",
        CHECK_ID,
    ),
    Rule(
        "EQ102", Severity.ERROR, "global force balance: the loads and reported reactions do not sum to zero", CHECK_ID
    ),
    Rule(
        "EQ103",
        Severity.ERROR,
        "global moment balance: the moments of the loads and reported reactions about the centroid are not zero",
        CHECK_ID,
    ),
)


def run(ctx: Context) -> list[CheckOutcome]:
    return cm.per_case(ctx, CHECK_ID, lambda cid, cr: _check_case(ctx, cid, cr))


def joint_residuals(
    model: Model, loads: FloatArray, cr: CaseResults, B: sp.csr_matrix | None = None
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """(residual, quantum, magnitude), each (n_nodes, dim); NaN residual where a term is not reported.

    quantum = |B|ᵀ q_N + q_r (the terms' rounding quanta summed), magnitude = |f| + |B|ᵀ |N| + |r|.
    ``B``: the model's compatibility matrix when the caller holds it already.
    """
    B = stiffness.compatibility_matrix(model) if B is None else B
    R = cm.effective_reactions(model, cr)
    N = cr.axial_forces if cr.has_axial_forces else np.full(model.n_members, np.nan)
    res = cm.equilibrium_residual(model, loads, N, R, B)
    absBT = abs(B).T
    qN = cm.quantum_or_zero(cr.axial_force_quantum, N)
    qR = cm.quantum_or_zero(cr.reaction_quantum, R)
    shape = (model.n_nodes, model.dim)
    quantum = (absBT @ qN).reshape(shape) + qR
    magnitude = np.abs(loads) + (absBT @ np.abs(np.nan_to_num(N))).reshape(shape) + np.abs(np.nan_to_num(R))
    return res, quantum, magnitude


def _check_case(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    actions = cm.case_actions(model, cid)
    assert actions is not None  # every id comes from the model
    loads = actions.loads
    funit = model.units.force
    findings: list[Finding] = []
    summary: list[tuple[str, Any]] = []
    R = cm.effective_reactions(model, cr)
    scale = max(cm.scale_of(loads, cr.axial_forces, R), actions.force_scale)
    summary.append(("scale", scale))

    # ---- joints
    res, quantum, magnitude = joint_residuals(model, loads, cr)
    # a residual's own allowance is relative to the magnitude of the terms meeting there
    j = cm.judge(res, np.zeros_like(res), quantum, scale, tol, magnitude=magnitude)
    allowed = j.allowed
    joints_ok = j.checked.all(axis=1)
    summary += [
        ("joints_checked", int(joints_ok.sum())),
        ("joints_not_checked", int((~joints_ok).sum())),
        *j.counts().items(),
    ]
    worst = j.worst()
    if worst is not None:
        i, ratio = worst
        node, a = divmod(i, model.dim)
        summary += [
            ("largest_residual", float(abs(res.ravel()[i]))),
            ("largest_residual_at", f"{model.node_ids[node]} {cm.axis_name(a)}"),
            ("largest_residual_over_allowed", ratio),
        ]
    # the joint residual table: worst first, every checked joint and axis up to TABLE_ROWS
    flat = np.flatnonzero(j.checked.ravel())
    ratios = np.abs(res.ravel()[flat]) / np.maximum(allowed.ravel()[flat], 1e-300)
    rows = []
    for i in flat[np.argsort(-ratios, kind="stable")][:TABLE_ROWS].tolist():
        node, a = divmod(i, model.dim)
        rows.append(
            (
                model.node_ids[node],
                cm.axis_name(a),
                float(res.ravel()[i]),
                float(allowed.ravel()[i]),
                float(quantum.ravel()[i]),
                cm.verdict_label(j, i),
            )
        )
    summary += [
        ("residual_table_columns", ("node", "axis", "residual", "allowed", "quantum", "verdict")),
        ("residual_table", tuple(rows)),
    ]
    failed = np.argwhere(j.failed)
    order = np.argsort(-np.abs(res[j.failed]) / np.maximum(allowed[j.failed], 1e-300), kind="stable")
    joint_findings = []
    shown_idx, left = cm.listed(failed[order].tolist())
    for node, a in shown_idx:
        r, al, q = float(res[node, a]), float(allowed[node, a]), float(quantum[node, a])
        joint_findings.append(
            Finding(
                code="EQ101",
                severity=Severity.ERROR,
                case=cid,
                location=Location(node=model.node_ids[node], axis=cm.axis_name(a)),
                message=f"joint {model.node_ids[node]} is out of equilibrium along {cm.axis_name(a)}: "
                f"loads + member forces + reactions leave {cm.fmt(r)} {funit} (allowed {cm.fmt(al)}, "
                f"of which rounding {cm.fmt(q)})",
                reported=r,
                expected=0.0,
                difference=r,
                tolerance=al,
                units=funit,
                data=(
                    ("quantity", f"joint residual {cm.axis_name(a)}"),
                    ("residual", [float(x) for x in np.nan_to_num(res[node])]),
                    ("load", [float(x) for x in loads[node]]),
                    ("quantum", q),
                    ("magnitude", float(magnitude[node, a])),
                    ("basis", "fail"),
                ),
            )
        )
    findings += joint_findings
    summary.append(("joint_findings_not_listed", left))

    # ---- global
    global_ran = _global(model, cid, loads, cr, R, scale, tol, findings, summary)

    # ---- what was not checked
    not_checked = int((~joints_ok).sum())
    if not_checked or not global_ran:
        n_forces = int(np.isnan(cr.axial_forces).sum()) if cr.has_axial_forces else model.n_members
        n_reac = int(np.isnan(R).sum())
        findings.append(
            Finding(
                code="EQ001",
                severity=Severity.INFO,
                case=cid,
                message=f"{not_checked} of {model.n_nodes} joints not checked"
                + ("" if global_ran else " and the global balance not checked")
                + f": {n_forces} member forces and {n_reac} reaction components that a support can exert "
                "were not reported",
                data=(
                    ("joints_not_checked", not_checked),
                    ("global_checked", global_ran),
                    ("member_forces_not_reported", n_forces),
                    ("reaction_components_not_reported", n_reac),
                ),
            )
        )
    if not joints_ok.any() and not global_ran:
        reason = "neither member forces nor all reactions were reported"
        return cm.not_run(CHECK_ID, cid, reason, tuple(findings))
    reason = (
        f"{int(joints_ok.sum())} joints checked, {int(j.failed.sum())} residual components beyond tolerance; "
        f"global balance {'checked' if global_ran else 'not checked'}"
    )
    return cm.outcome(CHECK_ID, cid, findings, reason, summary)


def _global(
    model: Model,
    cid: str,
    loads: FloatArray,
    cr: CaseResults,
    R: FloatArray,
    scale: float,
    tol: Any,
    findings: list[Finding],
    summary: list[tuple[str, Any]],
) -> bool:
    """Global force and moment balance; False when a reaction the supports can exert was not reported."""
    if np.isnan(R).any():
        return False
    funit, lunit = model.units.force, model.units.length
    F = loads + R
    qR = cm.quantum_or_zero(cr.reaction_quantum, R)
    force = F.sum(axis=0)
    fq = qR.sum(axis=0)
    fmag = np.abs(loads).sum(axis=0) + np.abs(R).sum(axis=0)
    fallowed = tol.allowed(fmag, fq, scale)
    summary.append(("global_force_residual", [float(x) for x in force]))
    for a in range(model.dim):
        if abs(force[a]) > fallowed[a]:
            findings.append(
                Finding(
                    code="EQ102",
                    severity=Severity.ERROR,
                    case=cid,
                    location=Location(axis=cm.axis_name(a)),
                    message=f"the loads and reactions do not balance along {cm.axis_name(a)}: "
                    f"the sum is {cm.fmt(float(force[a]))} {funit} (allowed {cm.fmt(float(fallowed[a]))})",
                    reported=float(force[a]),
                    expected=0.0,
                    difference=float(force[a]),
                    tolerance=float(fallowed[a]),
                    units=funit,
                    data=(
                        ("quantity", f"force sum {cm.axis_name(a)}"),
                        ("quantum", float(fq[a])),
                        ("sum_of_loads", float(loads[:, a].sum())),
                    ),
                )
            )
    c = model.coords.mean(axis=0)
    x = model.coords - c
    lever = float(np.max(np.linalg.norm(x, axis=1))) if model.n_nodes else 0.0
    if model.dim == 2:
        m = np.array([np.sum(x[:, 0] * F[:, 1] - x[:, 1] * F[:, 0])])
        mq = np.array([np.sum(np.abs(x[:, 0]) * qR[:, 1] + np.abs(x[:, 1]) * qR[:, 0])])
        Fa = np.abs(loads) + np.abs(R)
        mmag = np.array([np.sum(np.abs(x[:, 0]) * Fa[:, 1] + np.abs(x[:, 1]) * Fa[:, 0])])
        names: tuple[str, ...] = ("z",)
    else:
        m = np.cross(x, F).sum(axis=0)
        Fa = np.abs(loads) + np.abs(R)
        ax = np.abs(x)
        mq = np.array(
            [
                np.sum(ax[:, 1] * qR[:, 2] + ax[:, 2] * qR[:, 1]),
                np.sum(ax[:, 2] * qR[:, 0] + ax[:, 0] * qR[:, 2]),
                np.sum(ax[:, 0] * qR[:, 1] + ax[:, 1] * qR[:, 0]),
            ]
        )
        mmag = np.array(
            [
                np.sum(ax[:, 1] * Fa[:, 2] + ax[:, 2] * Fa[:, 1]),
                np.sum(ax[:, 2] * Fa[:, 0] + ax[:, 0] * Fa[:, 2]),
                np.sum(ax[:, 0] * Fa[:, 1] + ax[:, 1] * Fa[:, 0]),
            ]
        )
        names = ("x", "y", "z")
    mallowed = tol.allowed(mmag, mq, scale * lever)
    summary += [("global_moment_residual", [float(v) for v in m]), ("moment_point", [float(v) for v in c])]
    for k, name in enumerate(names):
        if abs(m[k]) > mallowed[k]:
            findings.append(
                Finding(
                    code="EQ103",
                    severity=Severity.ERROR,
                    case=cid,
                    location=Location(axis=name),
                    message=f"the moments of the loads and reactions about the centroid do not balance "
                    f"(about {name}): {cm.fmt(float(m[k]))} {funit}·{lunit} (allowed {cm.fmt(float(mallowed[k]))})",
                    reported=float(m[k]),
                    expected=0.0,
                    difference=float(m[k]),
                    tolerance=float(mallowed[k]),
                    units=f"{funit}·{lunit}",
                    data=(
                        ("quantity", f"moment sum about {name}"),
                        ("quantum", float(mq[k])),
                        ("moment_point", [float(v) for v in c]),
                    ),
                )
            )
    return True
