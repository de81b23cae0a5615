"""Support consistency of the reported results.

* A reaction may act only at a node with a restraint or a spring, and only
  along the directions the support can push: its components along the
  orthogonal complement of the span of the restraint (and spring) directions
  must be zero (an inclined roller pushes only along its normal).
* The displacement along every restraint equals the prescribed value:
  ``n_i · u = g_i`` (zero, or the settlement of the case).
* A spring's reaction equals ``−k (s · u) s`` (s its unit direction); at a
  node with restraints as well, only the part outside the restraint span can
  be checked.

Common practice; e.g. Kassimali, *Matrix Analysis of Structures*, 2nd ed.,
§3.8 (support reactions) and §9.2 (inclined roller supports); section numbers recalled from memory.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity
from audit.model import AXES, CaseResults, FloatArray, Model
from audit.rules import Rule

CHECK_ID = "supports"

RULES = (
    Rule("SP001", Severity.INFO, "some support conditions could not be checked: quantities not reported", CHECK_ID),
    Rule("SP101", Severity.ERROR, "a reaction is reported at a node that has no support or spring", CHECK_ID),
    Rule(
        "SP102",
        Severity.ERROR,
        "a reaction component acts along a direction the support leaves free (e.g. across an inclined roller)",
        CHECK_ID,
    ),
    Rule("SP103", Severity.ERROR, "the displacement along a restraint differs from its prescribed value", CHECK_ID),
    Rule("SP104", Severity.ERROR, "a spring's reaction differs from −k·u", CHECK_ID),
)


def run(ctx: Context) -> list[CheckOutcome]:
    return cm.per_case(ctx, CHECK_ID, lambda cid, cr: _check_case(ctx, cid, cr))


def _direction_label(z: FloatArray) -> tuple[str | None, str]:
    """(axis name or None, readable label) of a unit vector."""
    k = int(np.argmax(np.abs(z)))
    if abs(abs(float(z[k])) - 1.0) < 1e-12:
        return AXES[k], AXES[k]
    return None, "(" + ", ".join(f"{float(v):.4g}" for v in z) + ")"


def _complement(span: FloatArray, dim: int) -> FloatArray:
    """(dim, dim−k) orthonormal basis of the directions orthogonal to ``span`` (dim, k)."""
    if span.shape[1] == 0:
        return np.eye(dim)
    q, _ = np.linalg.qr(np.hstack([span, np.eye(dim)]))
    return np.ascontiguousarray(q[:, span.shape[1] : dim])


def _check_case(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    actions = cm.case_actions(model, cid)
    assert actions is not None
    funit, lunit = model.units.force, model.units.length
    d = model.dim
    findings: list[Finding] = []
    R = cr.reactions if cr.has_reactions else np.full((model.n_nodes, d), np.nan)
    qR = cm.quantum_or_zero(cr.reaction_quantum, R)
    U = cr.displacements if cr.has_displacements else np.full((model.n_nodes, d), np.nan)
    qU = cm.quantum_or_zero(cr.displacement_quantum, U)
    fscale = max(cm.scale_of(R, actions.loads), actions.force_scale)
    counts = {"reactions_checked": 0, "restraints_checked": 0, "springs_checked": 0}
    not_checked = {"reaction_nodes": 0, "restraints": 0, "springs": 0}

    supported = np.zeros(model.n_nodes, dtype=bool)
    supported[model.restraint_node] = True
    supported[model.spring_node] = True

    # ---- reactions at unsupported nodes
    free_nodes = np.flatnonzero(~supported)
    Rf = R[free_nodes]
    ok = np.isfinite(Rf)
    allowed = tol.allowed(np.zeros_like(Rf), qR[free_nodes], fscale)
    bad = ok & (np.abs(np.nan_to_num(Rf)) > allowed)
    counts["reactions_checked"] += int(ok.any(axis=1).sum())
    sp101 = []
    for i, a in np.argwhere(bad).tolist():
        node = int(free_nodes[i])
        v = float(Rf[i, a])
        sp101.append(
            Finding(
                code="SP101",
                severity=Severity.ERROR,
                case=cid,
                location=Location(node=model.node_ids[node], axis=AXES[a]),
                message=f"a reaction of {cm.fmt(v)} {funit} along {AXES[a]} is reported at node "
                f"{model.node_ids[node]}, which has no support or spring",
                reported=v,
                expected=0.0,
                difference=v,
                tolerance=float(allowed[i, a]),
                units=funit,
                data=(("quantity", f"reaction {AXES[a]}, no support"), ("quantum", float(qR[node, a]))),
            )
        )
    findings += cm.listed(sp101)[0]

    # ---- supported nodes: reaction direction and springs
    for node in np.flatnonzero(supported).tolist():
        r = R[node]
        if not np.all(np.isfinite(r)):
            span_all = cm.support_span(model, node)
            if np.any(np.isnan(r) & (np.linalg.norm(span_all, axis=1) > 1e-12)):
                not_checked["reaction_nodes"] += 1
                if model.spring_node.size and np.any(model.spring_node == node):
                    not_checked["springs"] += int(np.sum(model.spring_node == node))
                continue
            r = np.nan_to_num(r)
        springs = np.flatnonzero(model.spring_node == node)
        u = U[node]
        spring_known = springs.size > 0 and bool(np.all(np.isfinite(u)))
        target = np.zeros(d)
        q = qR[node].copy()
        if spring_known:
            for s in springs.tolist():
                sd = model.spring_dir[s]
                k = float(model.spring_k[s])
                target -= k * float(sd @ u) * sd
                q = q + k * np.abs(np.outer(sd, sd)) @ qU[node]
            counts["springs_checked"] += int(springs.size)
            span = cm.support_span(model, node, with_springs=False)
        else:
            if springs.size:
                not_checked["springs"] += int(springs.size)
            span = cm.support_span(model, node, with_springs=True)
        counts["reactions_checked"] += 1
        Z = _complement(span, d)
        for c in range(Z.shape[1]):
            z = Z[:, c]
            comp = float(z @ (r - target))
            qc = float(np.abs(z) @ q)
            magnitude = float(np.abs(z) @ (np.abs(r) + np.abs(target)))
            allowed_c = float(tol.allowed(magnitude, qc, fscale))
            if abs(comp) <= allowed_c:
                continue
            axis, label = _direction_label(z)
            if spring_known:
                code, what = "SP104", f"the reaction differs from the spring force −k·u along {label}"
            else:
                code, what = "SP102", f"the reaction has a component along {label}, a direction the support leaves free"
            findings.append(
                Finding(
                    code=code,
                    severity=Severity.ERROR,
                    case=cid,
                    location=Location(node=model.node_ids[node], axis=axis),
                    message=f"node {model.node_ids[node]}: {what}: {cm.fmt(comp)} {funit} "
                    f"(allowed {cm.fmt(allowed_c)})",
                    reported=float(z @ r),
                    expected=float(z @ target),
                    difference=comp,
                    tolerance=allowed_c,
                    units=funit,
                    data=(
                        ("quantity", "spring reaction" if spring_known else "reaction, free direction"),
                        ("direction", [float(v) for v in z]),
                        ("quantum", qc),
                        ("reaction", [float(v) for v in r]),
                    ),
                )
            )

    # ---- prescribed displacements along restraints
    findings += _restraint_displacements(model, cid, U, qU, actions, tol, counts, not_checked)

    summary: list[tuple[str, Any]] = [*counts.items(), *(("not_checked_" + k, v) for k, v in not_checked.items())]
    summary.append(("force_scale", fscale))
    missing = {k: v for k, v in not_checked.items() if v}
    if missing:
        findings.append(
            Finding(
                code="SP001",
                severity=Severity.INFO,
                case=cid,
                message="not checked for want of reported values: "
                + ", ".join(f"{v} {k.replace('_', ' ')}" for k, v in missing.items()),
                data=tuple(missing.items()),
            )
        )
    if not any(counts.values()):
        return cm.not_run(
            CHECK_ID, cid, "neither reactions nor displacements at supports were reported", tuple(findings)
        )
    reason = (
        f"{counts['reactions_checked']} reaction nodes, {counts['restraints_checked']} restraints and "
        f"{counts['springs_checked']} springs checked ({lunit}, {funit})"
    )
    return cm.outcome(CHECK_ID, cid, findings, reason, summary)


def _restraint_displacements(
    model: Model,
    cid: str,
    U: FloatArray,
    qU: FloatArray,
    actions: cm.CaseActions,
    tol: Any,
    counts: dict[str, int],
    not_checked: dict[str, int],
) -> list[Finding]:
    """SP103: ``n_i · u = g_i`` at every restraint whose node's displacement was reported."""
    if model.n_restraints == 0:
        return []
    n = model.restraint_dir
    u = U[model.restraint_node]
    needed = np.abs(n) > 0
    known = ~np.any(needed & np.isnan(u), axis=1)
    along = np.einsum("ij,ij->i", n, np.nan_to_num(u))
    q = np.einsum("ij,ij->i", np.abs(n), qU[model.restraint_node])
    settlement = actions.settlement
    scale = max(cm.scale_of(U, settlement), actions.length_scale)
    allowed = tol.allowed(settlement, q, scale)
    counts["restraints_checked"] += int(known.sum())
    not_checked["restraints"] += int((~known).sum())
    lunit = model.units.length
    out = []
    for i in np.flatnonzero(known & (np.abs(along - settlement) > allowed)).tolist():
        node = int(model.restraint_node[i])
        label = model.restraint_label[i]
        axis = label if label in AXES else None
        out.append(
            Finding(
                code="SP103",
                severity=Severity.ERROR,
                case=cid,
                location=Location(node=model.node_ids[node], axis=axis),
                message=f"node {model.node_ids[node]} moves {cm.fmt(float(along[i]))} {lunit} along its restraint "
                f"{label}, but the restraint prescribes {cm.fmt(float(settlement[i]))}",
                reported=float(along[i]),
                expected=float(settlement[i]),
                difference=float(along[i] - settlement[i]),
                tolerance=float(allowed[i]),
                units=lunit,
                data=(("quantity", f"support movement {label}"), ("restraint", label), ("quantum", float(q[i]))),
            )
        )
    return cm.listed(out)[0]
