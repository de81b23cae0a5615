"""Proof status of the recomputation and of the reported results (high precision, codes HP1xx).

Reads :class:`audit.precision.PrecisionReport` from the context.  Model-wide:
the digits proven, the certified λ_lo of the restrained stiffness and the
condition estimate (HP101), or why a bound could not be established (HP105),
and any case whose refinement stopped short of the requested digits (HP104).

Per case with reported results, each reported displacement, member force
and reaction is put in one of three classes against the exact solution of
the model as given (the recomputed value ± its proven bound):

* proven within its printed rounding (``|d_rep − d*| ≤ quantum``);
* proven beyond its printed rounding (``|d_rep − d*| > quantum``);
* undecided (the proven bound is too wide to tell).

Displacements proven beyond rounding are an ERROR (HP102) when the
reported displacements' backward error ω (Oettli & Prager 1964) also exceeds
the relative rounding quantum of the input data: then neither the printed
rounding nor the precision of the data explains them.  Otherwise a quantity
beyond rounding is a WARNING (HP103): the printed digits claim more accuracy
than the numbers have, though they solve a model within the data's own
rounding.  The tolerance verdicts belong to the recompute check.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit import precision
from audit.checks import _common as cm
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity
from audit.model import AXES, CaseResults, Model
from audit.rules import Rule
from audit.tolerances import Tolerances

CHECK_ID = "precision"

RULES = (
    Rule("HP101", Severity.INFO, "digits proven for the recomputation, certified λ_lo and condition", CHECK_ID),
    Rule(
        "HP102",
        Severity.ERROR,
        "reported displacements are proven farther from the exact solution than their rounding or the data's "
        "precision explain",
        CHECK_ID,
    ),
    Rule(
        "HP103",
        Severity.WARNING,
        "a reported quantity is proven to differ from the exact solution by more than its printed rounding",
        CHECK_ID,
    ),
    Rule("HP104", Severity.WARNING, "the high-precision refinement stopped short of the requested digits", CHECK_ID),
    Rule("HP105", Severity.WARNING, "an error bound could not be established (reason given)", CHECK_ID),
    Rule("HP106", Severity.INFO, "proof status of a case's reported results: bound, backward error", CHECK_ID),
    Rule("HP107", Severity.INFO, "reported quantities proven within their printed rounding of the exact", CHECK_ID),
)

_KINDS = (
    ("displacements", "displacement_quantum", "displacement"),
    ("axial_forces", "axial_force_quantum", "axial force"),
    ("reactions", "reaction_quantum", "reaction"),
)


def run(ctx: Context) -> list[CheckOutcome]:
    rep = ctx.precision
    if rep is None:
        reason = ctx.unsolvable_reason or "the high-precision recomputation did not run"
        return [cm.not_run(CHECK_ID, None, reason)]
    out = [_model_wide(rep)]
    for c in rep.cases:
        cr = cm.reported_case(ctx, c.case_id)
        if cr is None:
            continue
        out.append(_case(ctx.model, rep, c, cr, ctx.tolerances))
    return out


def _model_wide(rep: precision.PrecisionReport) -> CheckOutcome:
    findings: list[Finding] = []
    proven = [c.proven_digits for c in rep.cases if c.proven_digits is not None]
    lo = rep.lambda_lo
    findings.append(
        Finding(
            code="HP101",
            severity=Severity.INFO,
            message=(
                f"recomputed to {rep.digits} digits; proven {min(proven) if proven else 'none'} digits"
                f"{' (worst case)' if len(proven) > 1 else ''}; λ_lo = {cm.fmt(lo) if lo else 'not certified'} "
                f"({rep.lambda_method}); condition ≈ {cm.fmt(rep.condition_estimate)}"
            ),
            data=(
                ("digits_requested", rep.digits),
                ("digits_proven", min(proven) if proven else None),
                ("lambda_lo", lo),
                ("lambda_method", rep.lambda_method),
                ("condition_estimate", rep.condition_estimate),
                ("condition_upper_bound", rep.condition_upper),
            ),
        )
    )
    if lo is None:
        estimated = [c.estimated_digits for c in rep.cases if c.estimated_digits is not None]
        reached = (
            f"; the refinement reached about {min(estimated)} digits by its own estimate (not proven)"
            if estimated
            else ""
        )
        findings.append(
            Finding(
                code="HP105",
                severity=Severity.WARNING,
                message=f"no error bound could be proven: {rep.lambda_reason}{reached}",
                data=(
                    ("reason", rep.lambda_reason),
                    ("digits_estimated_not_proven", min(estimated) if estimated else None),
                ),
            )
        )
    for c in rep.cases:
        short = c.proven_digits is not None and c.proven_digits < rep.digits
        if short or (c.proven_digits is None and not c.converged):
            findings.append(
                Finding(
                    code="HP104",
                    severity=Severity.WARNING,
                    case=c.case_id,
                    message=(
                        f"refinement stopped after {c.iterations} steps; digits proven "
                        f"{c.proven_digits if c.proven_digits is not None else 'none'} of {rep.digits} requested"
                    ),
                    data=(("iterations", c.iterations), ("digits_proven", c.proven_digits)),
                )
            )
    summary: list[tuple[str, Any]] = [("digits_requested", rep.digits), ("lambda_lo", lo)]
    return cm.outcome(CHECK_ID, None, findings, "high-precision recomputation", summary)


def _location(model: Model, kind: str, index: tuple[int, ...]) -> Location:
    if kind == "axial_forces":
        return Location(member=model.member_ids[index[0]])
    return Location(node=model.node_ids[index[0]], axis=AXES[index[1]])


def _case(
    model: Model, rep: precision.PrecisionReport, c: precision.CasePrecision, cr: CaseResults, tol: Tolerances
) -> CheckOutcome:
    r = c.reported
    findings: list[Finding] = []
    if c.bound_dof is None:
        why = c.reason or r.reason or "no proven bound"
        return cm.not_run(
            CHECK_ID,
            c.case_id,
            why,
            (Finding(code="HP105", severity=Severity.WARNING, case=c.case_id, message=f"no error bound: {why}"),),
        )
    findings.append(
        Finding(
            code="HP106",
            severity=Severity.INFO,
            case=c.case_id,
            message=(
                f"reported displacements: {r.status}"
                + (f", proven within {cm.fmt(r.bound)} of the exact solution (2-norm)" if r.bound is not None else "")
                + (f", backward error ω = {cm.fmt(r.backward_error)}" if r.backward_error is not None else "")
                + (f" (data precision {cm.fmt(rep.data_precision)})" if np.isfinite(rep.data_precision) else "")
            ),
            data=(
                ("status", r.status),
                ("bound_to_exact", r.bound),
                ("distance_lower_bound", r.distance_lower),
                ("backward_error", r.backward_error),
                ("as_good_as_data", r.as_good_as_data),
                ("digits_proven", c.proven_digits),
            ),
        )
    )
    counts: dict[str, dict[str, int]] = {}
    ours = {"displacements": c.displacements, "axial_forces": c.axial_forces, "reactions": c.reactions}
    bounds = {"displacements": c.bound_dof, "axial_forces": c.bound_axial, "reactions": c.bound_reaction}
    for kind, qname, label in _KINDS:
        values = getattr(cr, kind)
        b = bounds[kind]
        if not getattr(cr, f"has_{kind}") or b is None:
            continue
        mask = np.isfinite(values)
        if kind == "reactions":
            sup = np.zeros(model.n_nodes, dtype=bool)
            sup[model.restraint_node] = True
            sup[model.spring_node] = True
            mask &= sup[:, None]
        q = precision.classify(values, getattr(cr, qname), ours[kind], b, mask, kind)
        counts[kind] = q.counts()
        beyond = np.argwhere(q.verdict == 2)
        if beyond.size:
            excess = np.where(q.verdict == 2, q.difference - q.quantum, -np.inf)
            worst = tuple(int(x) for x in np.unravel_index(int(np.argmax(excess)), excess.shape))
            # an error only when the proven excess beyond rounding also exceeds the audit's tolerance for the
            # quantity: a 4-figure rounding of a float64 solve is "beyond rounding" at components that are
            # float noise (1e-18 of a 1e-3 m deflection), which is no error in the reported results
            scale = float(np.max(np.abs(np.nan_to_num(ours[kind])), initial=0.0))
            proven_excess = np.nan_to_num(q.difference - b - q.quantum, nan=-np.inf)
            significant = (q.verdict == 2) & (proven_excess > tol.allowed(ours[kind], 0.0, scale))
            is_error = kind == "displacements" and r.as_good_as_data is False and bool(significant.any())
            code, sev = ("HP102", Severity.ERROR) if is_error else ("HP103", Severity.WARNING)
            findings.append(
                Finding(
                    code=code,
                    severity=sev,
                    case=c.case_id,
                    location=_location(model, kind, worst),
                    message=(
                        f"{len(beyond)} reported {label}(s) proven beyond their printed rounding of the exact "
                        f"solution; worst differs by {cm.fmt(float(q.difference[worst]))} (rounding allows "
                        f"{cm.fmt(float(q.quantum[worst]))}, our proven error ≤ {cm.fmt(float(b[worst]))})"
                        + (
                            f"; backward error {cm.fmt(r.backward_error or 0.0)} exceeds the data precision "
                            f"{cm.fmt(rep.data_precision)}"
                            if is_error
                            else ""
                        )
                    ),
                    reported=float(values[worst]),
                    expected=float(ours[kind][worst]),
                    difference=float(q.difference[worst]),
                    tolerance=float(q.quantum[worst]),
                    data=(("count", len(beyond)), ("proven_error_of_expected", float(b[worst]))),
                )
            )
        within = counts[kind]["within_rounding"]
        if within:
            findings.append(
                Finding(
                    code="HP107",
                    severity=Severity.INFO,
                    case=c.case_id,
                    message=f"{within} reported {label}(s) proven within their printed rounding of the exact solution",
                    data=(("count", within), ("kind", kind)),
                )
            )
    summary: list[tuple[str, Any]] = [("quantities", counts), ("backward_error", r.backward_error)]
    return cm.outcome(CHECK_ID, c.case_id, findings, "proof status of the reported results", summary)
