"""Independent recomputation: every reported displacement, member force and reaction against the auditor's own
solution of the model (the high-precision answer when :mod:`audit.precision` produced one, else float64).

Per quantity: reported value, recomputed value, difference, allowed difference and verdict ("rounding",
"tolerance" or "fail"), judged by :meth:`audit.tolerances.Tolerances.allowed` against the scale of its kind
in the case (largest |displacement|; largest |member force|; largest reaction or load).  What was not
reported is counted and listed as not checked, never as passed.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity
from audit.model import CaseResults, Model
from audit.rules import Rule

CHECK_ID = "recompute"

RULES = (
    Rule("RC001", Severity.INFO, "quantities not reported, so not checked against the recomputation", CHECK_ID),
    Rule(
        "RC002",
        Severity.INFO,
        "the comparison used the float64 solution: no high-precision recomputation was available",
        CHECK_ID,
    ),
    Rule("RC101", Severity.ERROR, "a reported displacement differs from the recomputed value", CHECK_ID),
    Rule("RC102", Severity.ERROR, "a reported member force differs from the recomputed value", CHECK_ID),
    Rule("RC103", Severity.ERROR, "a reported reaction differs from the recomputed value", CHECK_ID),
    Rule(
        "RC104",
        Severity.WARNING,
        "a reported number is printed too coarsely to judge: it agrees only within its own rounding, which is "
        "a large share of the case's scale",
        CHECK_ID,
    ),
)

#: a printed rounding (half a unit in the last digit) above this share of the case's scale of its kind is
#: too coarse to tell a right number from a wrong one when the agreement rests on that rounding alone
COARSE_SHARE = 0.01

#: rows of the discrepancy table kept per case (worst first); failures beyond it are counted
TABLE_ROWS = 60

KINDS = ("displacement", "axial_force", "reaction")
CODES = {"displacement": "RC101", "axial_force": "RC102", "reaction": "RC103"}


def run(ctx: Context) -> list[CheckOutcome]:
    return cm.per_case(ctx, CHECK_ID, lambda cid, cr: _check_case(ctx, cid, cr))


def compare_case(
    model: Model, actions: cm.CaseActions, cr: CaseResults, ref: cm.Reference, tol: Any
) -> dict[str, cm.Judgement]:
    """Judgements per kind (displacement, axial_force, reaction) of reported against reference values."""
    loads = actions.loads
    nan2 = np.full((model.n_nodes, model.dim), np.nan)
    U = cr.displacements if cr.has_displacements else nan2
    N = cr.axial_forces if cr.has_axial_forces else np.full(model.n_members, np.nan)
    R = cr.reactions if cr.has_reactions else nan2
    uscale = cm.first_nonzero(max(cm.scale_of(ref.displacements), actions.length_scale), cm.scale_of(U))
    rscale = cm.first_nonzero(max(cm.scale_of(ref.reactions, loads), actions.force_scale), cm.scale_of(R))
    nscale = cm.first_nonzero(max(cm.scale_of(ref.axial_forces), actions.force_scale), cm.scale_of(N))
    return {
        "displacement": cm.judge(U, ref.displacements, cr.displacement_quantum, uscale, tol),
        "axial_force": cm.judge(N, ref.axial_forces, cr.axial_force_quantum, nscale, tol),
        "reaction": cm.judge(R, ref.reactions, cr.reaction_quantum, rscale, tol),
    }


def quantity_name(kind: str, loc: Location) -> str:
    """What a finding compares, for the reports: ``"axial force"``, ``"displacement x"``, ``"reaction y"``."""
    return kind.replace("_", " ") + (f" {loc.axis}" if loc.axis else "")


def _check_case(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    ref = cm.reference(ctx, cid)
    if ref is None:
        reason = cm.unsolved_reason(ctx, cid) or f"'{cid}' was not recomputed"
        return cm.not_run(CHECK_ID, cid, f"no recomputation: {reason}")
    actions = cm.case_actions(model, cid)
    assert actions is not None
    js = compare_case(model, actions, cr, ref, tol)
    units = {"displacement": model.units.length, "axial_force": model.units.force, "reaction": model.units.force}
    findings: list[Finding] = []
    summary: list[tuple[str, Any]] = [("reference", ref.label), ("reference_status", ref.status)]
    rows: list[tuple[float, tuple[Any, ...]]] = []
    not_listed = 0
    for kind in KINDS:
        j = js[kind]
        summary += [(f"{kind}_{k}", v) for k, v in j.counts().items()]
        summary.append((f"{kind}_scale", j.scale))
        flat_checked = np.flatnonzero(j.checked.ravel())
        ratio = np.abs(j.difference.ravel()[flat_checked]) / np.maximum(j.allowed.ravel()[flat_checked], 1e-300)
        order = flat_checked[np.argsort(-ratio, kind="stable")]
        for i in order[:TABLE_ROWS].tolist():
            loc = cm.flat_location(model, kind, i)
            rows.append(
                (
                    float(abs(j.difference.ravel()[i]) / max(float(j.allowed.ravel()[i]), 1e-300)),
                    (
                        kind,
                        loc.label(),
                        float(j.reported.ravel()[i]),
                        float(j.expected.ravel()[i]),
                        float(j.difference.ravel()[i]),
                        float(j.allowed.ravel()[i]),
                        cm.verdict_label(j, i),
                    ),
                )
            )
        failed_flat = j.failed.ravel()
        fails = order[failed_flat[order]].tolist()  # the failed ones, in the order of the table
        kept, left = cm.listed(fails)
        not_listed += left
        for i in kept:
            rep, exp, diff, al = (float(a.ravel()[i]) for a in (j.reported, j.expected, j.difference, j.allowed))
            loc = cm.flat_location(model, kind, i)
            rel = f" ({100 * abs(diff) / abs(exp):.3g} %)" if exp else ""
            findings.append(
                Finding(
                    code=CODES[kind],
                    severity=Severity.ERROR,
                    case=cid,
                    location=loc,
                    message=f"{loc.label()}: reported {kind.replace('_', ' ')} {cm.fmt(rep)} {units[kind]}, "
                    f"recomputed {cm.fmt(exp)}: off by {cm.fmt(diff)}{rel}, allowed {cm.fmt(al)}",
                    reported=rep,
                    expected=exp,
                    difference=diff,
                    tolerance=al,
                    units=units[kind],
                    data=(("quantity", quantity_name(kind, loc)), *cm.judgement_data(j, i), ("reference", ref.label)),
                )
            )
    findings += _too_coarse(model, cid, js, units)
    rows.sort(key=lambda r: -r[0])
    summary.append(("table_columns", ("kind", "where", "reported", "recomputed", "difference", "allowed", "verdict")))
    summary.append(("table", tuple(r[1] for r in rows[:TABLE_ROWS])))
    summary.append(("findings_not_listed", not_listed))
    findings += _not_reported(model, cid, cr)
    if ref.label != "high precision":
        findings.append(
            Finding(
                code="RC002",
                severity=Severity.INFO,
                case=cid,
                message="compared with the float64 solution: no high-precision recomputation was available for "
                f"'{cid}'",
                data=(("reference", ref.label),),
            )
        )
    checked = sum(int(j.checked.sum()) for j in js.values())
    if checked == 0:
        return cm.not_run(CHECK_ID, cid, "nothing reported that could be compared", tuple(findings))
    failed = sum(int(j.failed.sum()) for j in js.values())
    rounding = sum(int(j.rounding.sum()) for j in js.values())
    reason = (
        f"{checked} quantities compared with the {ref.label} recomputation: {failed} beyond tolerance, "
        f"{rounding} within printed rounding"
    )
    return cm.outcome(CHECK_ID, cid, findings, reason, summary)


def _too_coarse(model: Model, cid: str, js: dict[str, cm.Judgement], units: dict[str, str]) -> list[Finding]:
    """RC104: numbers that pass only because their printed rounding is a large share of the scale.

    A bare ``0`` for a force of 0.0104 MN carries a rounding of ±0.5 MN: it "agrees" with anything
    smaller, so the audit cannot say it is right and must not pass it silently.
    """
    out: list[Finding] = []
    for kind in KINDS:
        j = js[kind]
        q = j.quantum.ravel()
        adiff = np.abs(np.nan_to_num(j.difference.ravel(), nan=0.0))
        coarse = j.passed.ravel() & (q > COARSE_SHARE * j.scale) & (adiff > j.allowed.ravel() - q)
        idx = np.flatnonzero(coarse)
        kept, left = cm.listed(idx[np.argsort(-q[idx], kind="stable")].tolist())
        for i in kept:
            loc = cm.flat_location(model, kind, i)
            rep, exp = float(j.reported.ravel()[i]), float(j.expected.ravel()[i])
            out.append(
                Finding(
                    code="RC104",
                    severity=Severity.WARNING,
                    case=cid,
                    location=loc,
                    message=f"{loc.label()}: reported {kind.replace('_', ' ')} {cm.fmt(rep)} {units[kind]} is printed "
                    f"to ±{cm.fmt(float(q[i]))}, {100 * float(q[i]) / j.scale:.3g} % of the case's largest; "
                    f"the recomputed {cm.fmt(exp)} lies within that rounding, so the number could not be judged",
                    reported=rep,
                    expected=exp,
                    difference=rep - exp,
                    tolerance=float(j.allowed.ravel()[i]),
                    units=units[kind],
                    data=(("quantity", quantity_name(kind, loc)), *cm.judgement_data(j, i), ("not_listed", left)),
                )
            )
    return out


def _not_reported(model: Model, cid: str, cr: CaseResults) -> list[Finding]:
    """RC001: counts of displacements, member forces and support reaction components not reported."""
    n_u = int(np.isnan(cr.displacements).sum()) if cr.has_displacements else model.n_nodes * model.dim
    n_n = int(np.isnan(cr.axial_forces).sum()) if cr.has_axial_forces else model.n_members
    push = cm.can_push(model)
    n_r = int((np.isnan(cr.reactions) & push).sum()) if cr.has_reactions else int(push.sum())
    if not (n_u or n_n or n_r):
        return []
    return [
        Finding(
            code="RC001",
            severity=Severity.INFO,
            case=cid,
            message=f"not reported, so not checked: {n_u} displacement components, {n_n} member forces, "
            f"{n_r} support reaction components",
            data=(
                ("displacements_not_reported", n_u),
                ("axial_forces_not_reported", n_n),
                ("reactions_not_reported", n_r),
            ),
        )
    ]
