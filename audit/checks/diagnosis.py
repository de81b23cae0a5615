"""Diagnosis: when reported results disagree with the recomputation, say why.

Each likely cause is tested by correcting for it and asking whether every reported quantity then agrees
within the tolerances (:meth:`audit.tolerances.Tolerances.allowed`); a cause is reported only when it does,
with its evidence (a fitted ratio, the largest remaining difference over its allowance).  The errors
themselves are raised by the other checks; the findings here are warnings (a cause found) or information
(no single cause found, or a factor matching no unit).

Causes tested, in this order:

1. Scale of a whole kind of quantity, fitted by least squares, ``c = Σ r·p / Σ p²`` (r reported, p
   recomputed): axial forces ≈ −recomputed (sign convention reversed, DX101), reactions ≈ −recomputed
   (reactions given as the forces on the supports, DX110), forces or displacements a constant factor off
   that matches the ratio of two units of the format (DX102, DX103; ``audit.model.FORCE_UNITS`` /
   ``LENGTH_UNITS``), or that matches none (DX002).
2. One member's EA different in the source (DX104).  With reported displacements, the compatibility of
   each reported pair gives the implied EA (:func:`audit.checks.compatibility.implied_ea`).  Either way the
   candidate is confirmed by re-solving with that member's stiffness changed by Δk through the
   Sherman–Morrison formula on the existing factor of K (Sherman & Morrison, *Ann. Math. Statist.* 21
   (1950) 124; Golub & Van Loan, *Matrix Computations*, 4th ed., §2.1.4; section recalled from memory):
   ``u' = u − z · Δk (bᵀu − δ0) / (1 + Δk bᵀz)``, ``z = K⁻¹ b`` with b the member's compatibility row.
   The one-parameter family ``u(t) = u − t z`` is fitted to the reported values (t is the extra axial
   force that the stiffer or softer member carries) and Δk recovered as ``t / (bᵀu(t) − δ0)``.
3. A load missing, doubled or on the wrong node (DX105–DX107): the joint residuals of the reported forces
   are compared with the applied loads, and the model re-solved by superposition with that load removed,
   doubled or moved (one more solve with the factor per load).
4. A support the model lacks (DX108: the source reports a reaction where the model has no support) or
   one the source did not have (DX109): the restraint is added (unknown reactions X from the flexibility
   equations ``(Eᵀ K⁻¹ E) X = −Eᵀ u``) or released (a settlement chosen so that its reaction vanishes),
   again by superposition with the existing factor.

The structural candidates (2-4) and the superposition machinery live in
:mod:`audit.checks._diagnosis_causes`; this module runs them, fits the scales (1) and words the findings.

Cost on large models: the scales (1) are O(n) and, when they explain every differing kind, the structural
families are not tried.  Each structural family makes ONE block solve with the existing factor for all its
candidates (a 2-D right-hand side); the fit of t and an upper bound of each prediction's largest value are
reduced over all members in chunks as matrix products, and each candidate is first judged on a sample of
the reported quantities (the worst of the base comparison).  With an upper bound of the scale the allowance
can only grow, so that figure is a lower bound of the full one: a candidate whose bound exceeds 1 cannot
explain the results.  Only the candidates that may (bound ≤ 1), and, while none does, those that may be the
closest one, are evaluated over every reported quantity; every finding is the one an exhaustive evaluation
gives (:class:`audit.checks._diagnosis_block.Search`).  When few quantities differ (``LOCAL_LIMIT``) and
there are more loaded nodes than ``max_candidates``, loads equally suspect by their joint residuals are
tried nearest first (member hops from the joints with a differing quantity).
"""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction
from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks import _diagnosis_causes as dc
from audit.checks.equilibrium import joint_residuals
from audit.checks.recompute import compare_case
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity
from audit.model import FORCE_UNITS, LENGTH_UNITS, CaseResults, FloatArray, Model
from audit.rules import Rule

CHECK_ID = "diagnosis"

RULES = (
    Rule("DX001", Severity.INFO, "no single cause explains the differences from the recomputation", CHECK_ID),
    Rule(
        "DX002",
        Severity.INFO,
        "a kind of quantity is off by a constant factor that matches no unit conversion",
        CHECK_ID,
    ),
    Rule("DX101", Severity.WARNING, "axial forces have the opposite sign: the sign convention is reversed", CHECK_ID),
    Rule(
        "DX102", Severity.WARNING, "forces are off by the ratio of two force units: written in another unit", CHECK_ID
    ),
    Rule(
        "DX103",
        Severity.WARNING,
        "displacements are off by the ratio of two length units: written in another unit",
        CHECK_ID,
    ),
    Rule("DX104", Severity.WARNING, "one member's EA in the source differs from the model's", CHECK_ID),
    Rule("DX105", Severity.WARNING, "a load of the model is missing from the source's analysis", CHECK_ID),
    Rule("DX106", Severity.WARNING, "a load was applied twice in the source's analysis", CHECK_ID),
    Rule("DX107", Severity.WARNING, "a load was applied at another node in the source's analysis", CHECK_ID),
    Rule("DX108", Severity.WARNING, "the source had a support where the model has none", CHECK_ID),
    Rule("DX109", Severity.WARNING, "the model has a support the source did not have", CHECK_ID),
    Rule(
        "DX110",
        Severity.WARNING,
        "reactions have the opposite sign: given as the forces on the supports, not on the structure",
        CHECK_ID,
    ),
)


def unit_ratios(table: dict[str, Fraction]) -> list[tuple[float, str, str]]:
    """(ratio, written unit, declared unit) for every ordered pair of distinct units.

    A number written in unit X but declared as unit Y reads ``SI(Y)/SI(X)`` times too large.
    """
    return [(float(table[y] / table[x]), x, y) for x in table for y in table if x != y and table[x] != table[y]]


def match_unit(c: float, table: dict[str, Fraction], declared: str, rtol: float) -> tuple[str, str] | None:
    """The (written, declared) unit pair whose ratio matches |c|, preferring the declared unit; None if none."""
    hits = [(abs(abs(c) / r - 1.0), x, y) for r, x, y in unit_ratios(table) if abs(abs(c) / r - 1.0) <= rtol]
    if not hits:
        return None
    hits.sort(key=lambda h: (h[2] != declared, h[0]))
    return hits[0][1], hits[0][2]


def fit_ratio(reported: FloatArray, recomputed: FloatArray) -> float | None:
    """Least-squares c in ``reported ≈ c · recomputed`` over the quantities reported (None if undefined)."""
    r, p = np.ravel(reported), np.ravel(recomputed)
    ok = np.isfinite(r) & np.isfinite(p)
    if not ok.all():
        r, p = r[ok], p[ok]
    den = float(p @ p)
    if not ok.any() or den == 0.0:
        return None
    return float(r @ p) / den


def _with(cr: CaseResults, **arrays: Any) -> CaseResults:
    return replace(cr, **arrays)


# ----------------------------------------------------------------- the check
def run(ctx: Context) -> list[CheckOutcome]:
    return cm.per_case(ctx, CHECK_ID, lambda cid, cr: _diagnose(ctx, cid, cr))


def _diagnose(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    ref = cm.reference(ctx, cid)
    actions = cm.case_actions(model, cid)
    assert actions is not None
    if ref is None:
        return _diagnose_unsolved(ctx, cid, cr, actions.loads)
    js = compare_case(model, actions, cr, ref, tol)
    bad = {k: int(j.failed.sum()) for k, j in js.items()}
    if not any(bad.values()):
        return cm.outcome(
            CHECK_ID, cid, [], "the reported results agree with the recomputation: nothing to explain", []
        )
    findings: list[Finding] = []
    summary: list[tuple[str, Any]] = [("reference", ref.label), *((f"{k}_differing", v) for k, v in bad.items())]
    obs = cr
    explained: set[str] = set()

    # ---- 1. scale of whole kinds
    obs = _scale_tests(ctx, cid, actions, cr, ref, js, bad, findings, explained)
    if all(bad[k] == 0 or k in explained for k in bad):
        return cm.outcome(CHECK_ID, cid, findings, "explained by a scale of whole kinds of quantity", summary)

    # ---- 2-4. a structural cause: one member, one load, one support
    base = dc.Prediction(ref.displacements, ref.axial_forces, ref.reactions)
    candidates: list[dc.Candidate] = []
    if ctx.factor is not None:
        solver = dc.Superposition(ctx)
        ev = dc.Evaluator(model, actions, obs, tol, base)
        search = dc.Search()
        balanced, residual = _balanced(model, actions, obs, tol)
        summary.append(("reported_forces_balance_the_loads", balanced))
        if balanced is not False:
            candidates += dc.member_candidates(ctx, ev, obs, base, solver, actions.free_elongation, search)
            candidates += dc.support_candidates(ctx, ev, obs, base, solver, actions.loads, search)
        candidates += dc.load_candidates(
            ctx,
            ev,
            obs,
            base,
            solver,
            actions.loads,
            only_supported=balanced is True,
            search=search,
            near=lambda: _near_failing(model, js, bad),
            residual=residual,
        )
        summary.append(("candidates_evaluated_in_full", search.exact_evaluations))
    summary.append(("candidates_tried", len(candidates)))
    good = sorted((c for c in candidates if c.worst <= 1.0), key=lambda c: c.worst)
    if good:
        best = good[0]
        others = [c for c in good[1:] if (c.code, c.location) != (best.code, best.location)]
        location = best.location
        data: list[tuple[str, Any]] = [*best.data, ("residual_after", best.worst), ("reference", ref.label)]
        message = best.message
        if others:
            # e.g. one redundant: any member of the self-stress loop explains the forces equally well
            location = Location()
            data.append(("alternatives", tuple((c.code, c.location.label(), c.worst) for c in good)))
            message = (
                "the reported results cannot tell the cause apart among "
                + "; ".join(f"{c.code} at {c.location.label()}" for c in good)
                + f"; the closest: {best.message}"
            )
        findings.append(
            Finding(
                code=best.code,
                severity=Severity.WARNING,
                case=cid,
                location=location,
                message=message + f"; with this correction every reported quantity agrees "
                f"(largest difference {cm.fmt(best.worst)} of its allowance)",
                data=tuple(data),
            )
        )
        return cm.outcome(CHECK_ID, cid, findings, f"cause found: {best.code} at {location.label()}", summary)
    closest = min(candidates, key=lambda c: c.worst) if candidates else None
    data = [("candidates_tried", len(candidates)), ("reference", ref.label)]
    tail = ""
    if closest is not None:
        data += [
            ("closest_code", closest.code),
            ("closest_location", closest.location.label()),
            ("closest_residual", closest.worst),
        ]
        tail = (
            f"; the closest ({closest.code} at {closest.location.label()}) still leaves a difference "
            f"{cm.fmt(closest.worst)} times its allowance"
        )
    findings.append(
        Finding(
            code="DX001",
            severity=Severity.INFO,
            case=cid,
            message=f"no single cause found for the differences in '{cid}' ({len(candidates)} candidates tried: "
            "sign, units, one member's EA, one load, one support)" + tail,
            data=tuple(data),
        )
    )
    return cm.outcome(CHECK_ID, cid, findings, "no single cause found", summary)


#: at most this many differing quantities make the loads near them the first tried among equal suspects
LOCAL_LIMIT = 1000


def _near_failing(model: Model, js: dict[str, cm.Judgement], bad: dict[str, int]) -> FloatArray | None:
    """Member hops from each node to the nearest joint with a differing quantity (a differing member force
    counts at both its ends); None when too many quantities differ for nearness to mean anything."""
    if not 0 < sum(bad.values()) <= LOCAL_LIMIT:
        return None
    nodes = [np.flatnonzero(np.any(js[k].failed, axis=1)) for k in ("displacement", "reaction") if bad[k]]
    if bad["axial_force"]:
        nodes.append(model.conn[js["axial_force"].failed].ravel())
    return dc.locality(model, np.concatenate(nodes) if nodes else np.zeros(0, dtype=np.int64))


def _balanced(
    model: Model, actions: cm.CaseActions, obs: CaseResults, tol: Any
) -> tuple[bool | None, FloatArray | None]:
    """Whether the reported forces and reactions balance the model's loads at every joint checked (None
    when no member force is reported), and the joint residuals (None likewise).

    A source that analysed the model with one member's EA changed, or with a support added or removed,
    still balances the model's loads; one that missed, doubled or moved a load does not, at that joint
    (unless the joint is supported and the reaction took the difference).  So the answer prunes the
    candidates without losing the right one.
    """
    if not obs.has_axial_forces:
        return None, None
    res, q, mag = joint_residuals(model, actions.loads, obs)
    scale = max(cm.scale_of(actions.loads, obs.axial_forces, cm.effective_reactions(model, obs)), actions.force_scale)
    return not bool(cm.judge(res, np.zeros_like(res), q, scale, tol, magnitude=mag).failed.any()), res


# ----------------------------------------------------------------- 1. scales
def _scale_tests(
    ctx: Context,
    cid: str,
    actions: cm.CaseActions,
    cr: CaseResults,
    ref: cm.Reference,
    js: dict[str, cm.Judgement],
    bad: dict[str, int],
    findings: list[Finding],
    explained: set[str],
) -> CaseResults:
    """Fit reported/recomputed per kind; record the explained kinds; return the observations corrected."""
    model, tol = ctx.model, ctx.tolerances
    res = ctx.results
    declared_f = res.units.force if res is not None else model.units.force
    declared_l = res.units.length if res is not None else model.units.length
    obs = cr
    cN = fit_ratio(cr.axial_forces, ref.axial_forces) if bad["axial_force"] and cr.has_axial_forces else None
    cR = fit_ratio(cr.reactions, ref.reactions) if bad["reaction"] and cr.has_reactions else None
    cU = fit_ratio(cr.displacements, ref.displacements) if bad["displacement"] and cr.has_displacements else None

    def significant(kind: str) -> bool:
        """At least two values of the kind carry weight: one number is no evidence for a scale."""
        j = js[kind]
        return int(np.sum(j.checked & (np.abs(np.nan_to_num(j.expected)) > tol.floor * j.scale))) >= 2

    cN = cN if cN is not None and significant("axial_force") else None
    cR = cR if cR is not None and significant("reaction") else None
    cU = cU if cU is not None and significant("displacement") else None

    def passes(kind: str, values: FloatArray, quantum: FloatArray) -> float | None:
        fields = {
            "axial_force": ("axial_forces", "axial_force_quantum"),
            "reaction": ("reactions", "reaction_quantum"),
            "displacement": ("displacements", "displacement_quantum"),
        }[kind]
        trial = _with(cr, **{fields[0]: values, fields[1]: quantum})
        w = compare_case(model, actions, trial, ref, tol)[kind].worst()
        return None if w is None or w[1] > 1.0 else w[1]

    # forces: axial forces and reactions share the force unit; only axial forces carry a sign convention
    force_fit = [c for c in (cN, cR) if c is not None]
    for kind, c in (("axial_force", cN), ("reaction", cR)):
        if c is None or c == 0.0 or abs(c - 1.0) <= tol.ratio_match:
            continue
        attr, qattr = (
            ("axial_forces", "axial_force_quantum") if kind == "axial_force" else ("reactions", "reaction_quantum")
        )
        w = passes(kind, getattr(cr, attr) / c, getattr(cr, qattr) / abs(c))
        if w is None:
            continue
        explained.add(kind)
        obs = _with(obs, **{attr: getattr(cr, attr) / c, qattr: getattr(cr, qattr) / abs(c)})
        if c < 0:
            findings.append(_sign_finding(ctx, cid, kind, c, w))
    mags = [abs(c) for c in force_fit if c is not None and abs(abs(c) - 1.0) > tol.ratio_match]
    if mags and (len(mags) == len(force_fit)) and {"axial_force", "reaction"} & explained:
        c = float(np.mean(mags))
        kinds = [k for k, ck in (("axial_force", cN), ("reaction", cR)) if ck is not None and k in explained]
        findings.append(_unit_finding(cid, "force", c, kinds, FORCE_UNITS, declared_f, tol, model.units.force))
    if cU is not None and cU != 0.0 and abs(cU - 1.0) > tol.ratio_match:
        w = passes("displacement", cr.displacements / cU, cr.displacement_quantum / abs(cU))
        if w is not None:
            explained.add("displacement")
            obs = _with(
                obs, displacements=cr.displacements / cU, displacement_quantum=cr.displacement_quantum / abs(cU)
            )
            findings.append(
                _unit_finding(cid, "length", cU, ["displacement"], LENGTH_UNITS, declared_l, tol, model.units.length)
            )
    return obs


def _sign_finding(ctx: Context, cid: str, kind: str, c: float, worst: float) -> Finding:
    res = ctx.results
    if kind == "axial_force":
        declared = res.sign_convention if res is not None else "tension_positive"
        other = "compression_positive" if declared == "tension_positive" else "tension_positive"
        return Finding(
            code="DX101",
            severity=Severity.WARNING,
            case=cid,
            message=f"every reported axial force is {cm.fmt(c)} × the recomputed one: the results declare "
            f"'{declared}' but are written '{other}'; with the sign reversed they agree "
            f"(largest difference {cm.fmt(worst)} of its allowance)",
            data=(
                ("fit_ratio", c),
                ("declared_convention", declared),
                ("likely_convention", other),
                ("residual_after", worst),
            ),
        )
    return Finding(
        code="DX110",
        severity=Severity.WARNING,
        case=cid,
        message=f"every reported reaction is {cm.fmt(c)} × the recomputed one: they are the forces on the "
        f"supports, not on the structure; reversed they agree (largest difference {cm.fmt(worst)} of its allowance)",
        data=(("fit_ratio", c), ("residual_after", worst)),
    )


def _unit_finding(
    cid: str,
    what: str,
    c: float,
    kinds: list[str],
    table: dict[str, Fraction],
    declared: str,
    tol: Any,
    model_unit: str,
) -> Finding:
    pair = match_unit(c, table, declared, tol.ratio_match)
    names = " and ".join(k.replace("_", " ") + "s" for k in kinds)
    if pair is None:
        return Finding(
            code="DX002",
            severity=Severity.INFO,
            case=cid,
            message=f"the reported {names} are a constant {cm.fmt(abs(c))} × the recomputed ones, a factor that "
            f"matches no conversion between {what} units",
            data=(("fit_ratio", c), ("kinds", tuple(kinds))),
        )
    written, decl = pair
    code = "DX102" if what == "force" else "DX103"
    extra = "" if what == "force" else " (a uniform error in E by the same factor would look the same)"
    if decl == declared:
        how = f"consistent with numbers written in {written} but declared as {decl}"
    else:
        how = f"the ratio of {decl} to {written} (the results declare {declared}): a unit slip in the source"
    return Finding(
        code=code,
        severity=Severity.WARNING,
        case=cid,
        message=f"the reported {names} are {cm.fmt(abs(c))} × the recomputed ones: {how}{extra}",
        data=(
            ("fit_ratio", c),
            ("unit_ratio", float(table[decl] / table[written])),
            ("written_unit", written),
            ("declared_unit", decl),
            ("kinds", tuple(kinds)),
            ("model_unit", model_unit),
        ),
    )


# ----------------------------------------------------------------- no solution
def _diagnose_unsolved(ctx: Context, cid: str, cr: CaseResults, loads: FloatArray) -> CheckOutcome:
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
