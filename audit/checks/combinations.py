"""Reported combinations against the factored sum of the reported cases they combine.

The model is linear, so a combination's results are ``Σ γ_i · (results of case i)`` (superposition;
common practice, e.g. Kassimali, *Matrix Analysis of Structures*, 2nd ed., §1.6, section recalled from
memory).  Each reported combination quantity is compared with that sum over the reported cases, with
the rounding quantum ``q_comb + Σ |γ_i| q_i``.  The comparison with the recomputed combination is made
by the recompute check (under the combination's id); this check adds whether the two agree, so that a
wrong combination can be told from wrong cases (CB002: the combination is consistent with its cases,
the cases are what differ).  When the combination disagrees with its cases, the factors that best
reproduce it are fitted by least squares over every reported quantity; factors that explain it are
reported (CB102).  A model with tension-only or compression-only members is checked by
:mod:`audit.checks._superposition` instead (CB103: a superposed combination).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks._superposition import check_nonlinear
from audit.checks.recompute import compare_case, quantity_name
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Severity
from audit.model import CaseResults, FloatArray
from audit.rules import Rule

CHECK_ID = "combinations"

RULES = (
    Rule("CB001", Severity.INFO, "a combination could not be checked against its cases: cases not reported", CHECK_ID),
    Rule(
        "CB101",
        Severity.ERROR,
        "a reported combination differs from the factored sum of the reported cases it combines",
        CHECK_ID,
    ),
    Rule(
        "CB002",
        Severity.INFO,
        "the combination is the factored sum of its reported cases; its differences from the recomputation "
        "come from the cases",
        CHECK_ID,
    ),
    Rule(
        "CB103",
        Severity.ERROR,
        "a combination of a non-linear model was superposed: it is the factored sum of its cases, and the "
        "combination solved as its own case differs",
        CHECK_ID,
    ),
    Rule(
        "CB102",
        Severity.WARNING,
        "the reported combination is reproduced by other factors than the declared ones",
        CHECK_ID,
    ),
)

_PARTS = (
    ("displacement", "displacements", "displacement_quantum", "has_displacements"),
    ("axial_force", "axial_forces", "axial_force_quantum", "has_axial_forces"),
    ("reaction", "reactions", "reaction_quantum", "has_reactions"),
)


def run(ctx: Context) -> list[CheckOutcome]:
    model = ctx.model
    if not model.combinations:
        return [cm.not_run(CHECK_ID, None, "the model has no combinations")]
    outs = []
    for comb in model.combinations:
        cr = cm.reported_case(ctx, comb.id)
        if ctx.results is None:
            outs.append(cm.not_run(CHECK_ID, comb.id, cm.NO_RESULTS))
        elif cr is None:
            outs.append(cm.not_run(CHECK_ID, comb.id, f"combination '{comb.id}' was not reported"))
        elif model.is_nonlinear:  # superposition does not hold (audit.checks._superposition)
            outs.append(check_nonlinear(ctx, comb.id, cr))
        else:
            outs.append(_check(ctx, comb.id, cr))
    return outs


def _values(cr: CaseResults, attr: str, has: str) -> FloatArray:
    v = getattr(cr, attr)
    return v if getattr(cr, has) else np.full(v.shape, np.nan)


def _check(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    assert ctx.results is not None
    comb = model.combinations[model.combination_index(cid)]  # type: ignore[index]
    case_ids = [model.load_cases[ci].id for ci, _f, _t in comb.factors]
    factors = np.array([f for _ci, f, _t in comb.factors])
    members = [cm.reported_case(ctx, c) for c in case_ids]
    missing = [c for c, r in zip(case_ids, members, strict=True) if r is None]
    findings: list[Finding] = []
    summary: list[tuple[str, Any]] = [("cases", tuple(case_ids)), ("factors", tuple(float(f) for f in factors))]
    if missing:
        findings.append(
            Finding(
                code="CB001",
                severity=Severity.INFO,
                case=cid,
                message=f"combination '{cid}' not checked against its cases: {', '.join(missing)} not reported",
                data=(("cases_not_reported", tuple(missing)),),
            )
        )
        return cm.not_run(CHECK_ID, cid, f"cases {', '.join(missing)} were not reported", tuple(findings))
    parts = [r for r in members if r is not None]
    units = {"displacement": model.units.length, "axial_force": model.units.force, "reaction": model.units.force}
    actions = cm.case_actions(model, cid)
    assert actions is not None
    checked = failed = 0
    stacks: list[tuple[FloatArray, FloatArray, FloatArray, float]] = []  # (combo, case columns, quantum, scale)
    for kind, attr, qattr, has in _PARTS:
        rep = _values(cr, attr, has).ravel()
        cols = np.stack([_values(p, attr, has).ravel() for p in parts], axis=1)
        expected = cols @ factors
        q = cm.quantum_or_zero(getattr(cr, qattr).ravel(), rep) + np.stack(
            [cm.quantum_or_zero(getattr(p, qattr).ravel(), _values(p, attr, has).ravel()) for p in parts], axis=1
        ) @ np.abs(factors)
        floor = actions.length_scale if kind == "displacement" else actions.force_scale
        scale = cm.first_nonzero(max(cm.scale_of(expected), floor), cm.scale_of(rep))
        j = cm.judge(rep, expected, q, scale, tol)
        checked += int(j.checked.sum())
        failed += int(j.failed.sum())
        summary += [(f"{kind}_{k}", v) for k, v in j.counts().items()]
        ok = j.checked
        if ok.any():
            stacks.append((rep[ok], cols[ok], q[ok], scale))
        bad = np.flatnonzero(j.failed)
        bad = bad[np.argsort(-np.abs(j.difference[bad]) / np.maximum(j.allowed[bad], 1e-300), kind="stable")]
        for i in cm.listed(bad.tolist())[0]:
            loc = cm.flat_location(model, kind, i)
            findings.append(
                Finding(
                    code="CB101",
                    severity=Severity.ERROR,
                    case=cid,
                    location=loc,
                    message=f"{loc.label()}: combination '{cid}' reports {kind.replace('_', ' ')} "
                    f"{cm.fmt(float(rep[i]))} {units[kind]}, but the factored sum of its reported cases is "
                    f"{cm.fmt(float(expected[i]))}",
                    reported=float(rep[i]),
                    expected=float(expected[i]),
                    difference=float(j.difference[i]),
                    tolerance=float(j.allowed[i]),
                    units=units[kind],
                    data=(("quantity", "combination " + quantity_name(kind, loc)), *cm.judgement_data(j, i)),
                )
            )
    if checked == 0:
        return cm.not_run(CHECK_ID, cid, "no quantity is reported for both the combination and its cases")
    ref = cm.reference(ctx, cid)
    if ref is not None:
        js = compare_case(model, actions, cr, ref, tol)
        agrees = all(int(j.failed.sum()) == 0 for j in js.values())
        summary.append(("agrees_with_recomputed", agrees))
        summary.append(("reference", ref.label))
        if not agrees and not failed:
            findings.append(
                Finding(
                    code="CB002",
                    severity=Severity.INFO,
                    case=cid,
                    message=f"combination '{cid}' is the factored sum of its reported cases, so its differences "
                    f"from the recomputed combination come from the cases ({', '.join(case_ids)})",
                    data=(("cases", tuple(case_ids)), ("reference", ref.label)),
                )
            )
    if failed:
        fit = _fit_factors(stacks, factors, tol)
        if fit is not None:
            fitted, residual, alike = fit
            text = ", ".join(f"{c}: {cm.fmt(float(g))}" for c, g in zip(case_ids, fitted, strict=True))
            declared = ", ".join(f"{c}: {cm.fmt(float(g))}" for c, g in zip(case_ids, factors, strict=True))
            findings.append(
                Finding(
                    code="CB102",
                    severity=Severity.WARNING,
                    case=cid,
                    message=f"combination '{cid}' is reproduced by factors {text} (declared {declared}); "
                    f"largest remaining difference {cm.fmt(residual)} of its allowance"
                    + ("; some of its cases act alike and only their joint effect is determined" if alike else ""),
                    data=(
                        ("fitted_factors", tuple(float(g) for g in fitted)),
                        ("declared_factors", tuple(float(g) for g in factors)),
                        ("cases", tuple(case_ids)),
                        ("residual_over_allowed", residual),
                        ("cases_alike", alike),
                    ),
                )
            )
    reason = f"{checked} quantities compared with the factored sum of {len(parts)} reported cases: {failed} differ"
    return cm.outcome(CHECK_ID, cid, findings, reason, summary)


def _fit_factors(
    stacks: list[tuple[FloatArray, FloatArray, FloatArray, float]], declared: FloatArray, tol: Any
) -> tuple[FloatArray, float, bool] | None:
    """Least-squares factors over all kinds (each row divided by its kind's scale); None unless they explain it.

    The change from the declared factors is the minimum-norm least-squares solution of
    ``A δ = b − A γ`` with singular values below 1e-3 of the largest dropped (Golub & Van Loan, *Matrix
    Computations*, 4th ed., §5.5, recalled from memory): cases that act alike (say a temperature change and
    a lack of fit of the same member) cannot be told apart from printed results, and their declared split
    is kept.  Returns the fitted factors, the largest |difference|/allowed after the fit, and whether some
    cases were alike.
    """
    rows = [(r / s, c / s) for r, c, _q, s in stacks if s > 0]
    if not rows:
        return None
    A = np.vstack([c for _r, c in rows])
    b = np.concatenate([r for r, _c in rows])
    norms = np.linalg.norm(A, axis=0)
    if A.size == 0 or np.any(norms == 0):
        return None
    U, sv, Vt = np.linalg.svd(A / norms, full_matrices=False)
    keep = sv > 1e-3 * sv[0]
    rhs = U.T @ (b - A @ declared)
    delta = (Vt[keep].T @ (rhs[keep] / sv[keep])) / norms
    g = declared + delta
    worst = 0.0
    for r, c, q, s in stacks:
        pred = c @ g
        allowed = tol.allowed(pred, q, s)
        worst = max(worst, float(np.max(np.abs(r - pred) / np.maximum(allowed, 1e-300))))
    if worst > 1.0 or np.allclose(g, declared, rtol=tol.ratio_match, atol=0):
        return None
    return g, worst, bool(not keep.all())
