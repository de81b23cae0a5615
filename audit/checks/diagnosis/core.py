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
tried nearest first (member hops from the joints with a differing quantity).  A load candidate is dropped
with no solve when a joint whose load it keeps is left unbalanced by the reported forces beyond the sum of
its members' allowances (:func:`audit.checks.diagnosis.block.unbalanced_joints`), and before its solve when
a few differing numbers prove it wrong (``witness_screen``).  The multi-cause fit's families first say which
columns they need (``plan``) and all are solved in one block (``Superposition.prefetch``): a direct solve
reads the whole factor once per call, so one wide call costs far less than one per family.
"""

from __future__ import annotations

import functools
import operator
from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks.diagnosis import axes, fit, loads, members, nonlinear, scales, supports, table, unsolved
from audit.checks.diagnosis import families as registry
from audit.checks.diagnosis.base import CHECK_ID
from audit.checks.diagnosis.block import Candidate, Evaluator, Needs, Prediction, Search, Superposition
from audit.checks.recompute import compare_case
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity
from audit.model import CaseResults, FloatArray, Model
from audit.rules import Rule

RULES = (
    Rule(
        "DX001", Severity.INFO, "no explanation found: no set of up to three causes explains the differences", CHECK_ID
    ),
)


def diagnose(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    return _diagnose(ctx, cid, cr)


def _diagnose(ctx: Context, cid: str, cr: CaseResults) -> CheckOutcome:
    model, tol = ctx.model, ctx.tolerances
    ref = cm.reference(ctx, cid)
    actions = cm.case_actions(model, cid)
    assert actions is not None
    if ref is None:
        return unsolved.diagnose_unsolved(ctx, cid, cr, actions.loads)
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

    # ---- 1. the case's one load at another value, an axis reversed, the scale of whole kinds (sign
    # conventions, units)
    whole = scales.case_scale(ctx, cid, actions, cr, ref)
    if whole is not None:
        findings.append(whole[0])
        obs = whole[1]
        if whole[2] == 0:
            return cm.outcome(CHECK_ID, cid, findings, "explained by the case's one load at another value", summary)
    flipped = axes.axis_reversal(model, actions, obs, ref, tol, cid, js if obs is cr else None)
    if flipped is not None:
        findings.append(flipped[0])
        obs = flipped[1]
        if flipped[2] == 0:
            explained.update(("displacement", "reaction"))
    js_obs = js if obs is cr else compare_case(model, actions, obs, ref, tol)
    bad_obs = {k: int(j.failed.sum()) for k, j in js_obs.items()}
    scaled_from = obs
    before = (obs, list(findings), set(explained))
    obs = scales.scale_tests(ctx, cid, actions, obs, ref, js_obs, bad_obs, findings, explained)
    js_left = js_obs if obs is scaled_from else compare_case(model, actions, obs, ref, tol)
    if any(int(j.failed.sum()) for j in js_left.values()) and any(f.code == "DX002" for f in findings):
        obs, findings, explained = before[0], list(before[1]), set(before[2])
        obs = scales.scale_tests(ctx, cid, actions, obs, ref, js_obs, bad_obs, findings, explained, plain_only=True)
        js_left = compare_case(model, actions, obs, ref, tol)
    if not any(int(j.failed.sum()) for j in js_left.values()):
        return cm.outcome(
            CHECK_ID, cid, findings, "explained by an axis or a scale of whole kinds of quantity", summary
        )

    # ---- 2-4. a structural cause: one member, one load, one support
    base = Prediction(ref.displacements, ref.axial_forces, ref.reactions)
    if (
        ctx.factor is not None
        and model.n_dofs > fit.LARGE_DOFS
        and _one_number(js_left)
        and not _at_loaded_support(model, actions, js_left)
    ):
        # one number of a large model differs: a slip explains it, and a structural cause of a large connected
        # model changes more than one number (a load at a support, missing or doubled, changes that reaction
        # only: that case takes the full search); on small models the full search decides (base.RANK_*)
        solver = Superposition(ctx)
        found, _closest, _n, rows = _fit_causes(ctx, cid, obs, base, actions, solver, families=())
        if found is not None and rows is not None:
            findings += _fit_findings(ctx, cid, rows, found, ref.label)
            return cm.outcome(CHECK_ID, cid, findings, "explained by one number wrong (a slip)", summary)
    candidates: list[Candidate] = []
    if ctx.factor is not None and nonlinear.applies(model):  # non-linear members, self weight
        candidates += nonlinear.candidates(ctx, Evaluator(model, actions, obs, tol, base), cid, obs)
    if ctx.factor is not None and not model.is_nonlinear:  # the families below predict by superposition
        solver = Superposition(ctx)
        ev = Evaluator(model, actions, obs, tol, base)
        search = Search(closest=False)  # DX001 quotes the fit's closest set, not the single search's
        balanced, residual = _balanced(model, actions, obs, tol, solver)
        summary.append(("reported_forces_balance_the_loads", balanced))
        if balanced is not False:
            candidates += members.member_candidates(ctx, ev, obs, base, solver, actions.free_elongation, search)
            candidates += supports.support_candidates(ctx, ev, obs, base, solver, actions.loads, search)
        candidates += loads.load_candidates(
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
    if good and _one_number(js_left) and not _plain(good[0]):
        good = []  # one number differs: a slip explains it as simply; the fit below decides (base.RANK_*)
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
        agreement = (
            f"with this corrected, every reported number agrees (largest difference {cm.fmt(best.worst)} of its "
            "allowance)"
        )
        findings.append(
            Finding(
                code=best.code,
                severity=Severity.WARNING,
                case=cid,
                location=location,
                message=message + "; " + agreement,
                data=(
                    *data,
                    ("cause", message),
                    ("agreement", agreement),
                    ("explains", sum(bad.values())),
                    ("causes_in_set", 1),
                ),
            )
        )
        return cm.outcome(CHECK_ID, cid, findings, f"cause found: {best.code} at {location.label()}", summary)
    if ctx.factor is None:
        findings.append(
            Finding(
                code="DX001",
                severity=Severity.INFO,
                case=cid,
                message=f"no explanation found for the differences in '{cid}': the model could not be factorised, "
                "so no structural cause could be tried",
                data=(("reference", ref.label),),
            )
        )
        return cm.outcome(CHECK_ID, cid, findings, "no explanation found", summary)
    # ---- 5. sets of up to three causes (every family, table mistakes and slips included)
    # a non-linear model: only the table mistakes (slips, swaps), which do not predict by superposition
    fams = (table,) if model.is_nonlinear else registry.FIT_FAMILIES
    fit_solver = Superposition(ctx) if model.is_nonlinear else solver  # the single search's, with its solves
    found, closest, n_pool, rows = _fit_causes(ctx, cid, obs, base, actions, fit_solver, fams)
    summary.append(("fit_candidates", n_pool))
    if found is not None:
        findings += _fit_findings(ctx, cid, rows, found, ref.label)
        codes = ", ".join(
            f"{c.code_for(t)} at {c.location.label()}" for c, t in zip(found.causes, found.theta, strict=True)
        )
        return cm.outcome(CHECK_ID, cid, findings, f"explained by {len(found.causes)} cause(s): {codes}", summary)
    findings.append(_no_explanation(ctx, cid, rows, closest, n_pool + len(candidates), ref.label))
    return cm.outcome(CHECK_ID, cid, findings, "no explanation found", summary)


def _at_loaded_support(model: Model, actions: cm.CaseActions, js: dict[str, cm.Judgement]) -> bool:
    """Whether the one differing number is a reaction at a loaded node."""
    j = js["reaction"]
    if not j.failed.any():
        return False
    nodes = np.flatnonzero(np.any(j.failed, axis=1))
    return bool(np.any(actions.loads[nodes] != 0.0))


def _fit_causes(
    ctx: Context,
    cid: str,
    obs: CaseResults,
    base: Prediction,
    actions: cm.CaseActions,
    solver: Superposition,
    families: tuple[Any, ...] | None = None,
) -> tuple[fit.FitResult | None, fit.FitResult | None, int, fit.Rows | None]:
    """The multi-cause fit over the candidates of ``families`` (default: every registered fit family; ``()``:
    slips only)."""
    model, tol = ctx.model, ctx.tolerances
    ev = Evaluator(model, actions, obs, tol, base)
    rows = fit.Rows(ev, base, model.dim)
    if len(rows) == 0:
        return None, None, 0, None
    pb = fit.Problem(ctx, cid, obs, base, actions, rows, fit.Responses(solver, rows))
    fams = registry.FIT_FAMILIES if families is None else families
    # the families that say beforehand which columns their candidates need get them from one block solve
    plans = [fam.plan(pb) if hasattr(fam, "plan") else None for fam in fams]
    solver.prefetch(functools.reduce(operator.or_, (p.needs for p in plans if p is not None), Needs()))
    pool = [c for fam, p in zip(fams, plans, strict=True) for c in (fam.candidates(pb, p) if p else fam.candidates(pb))]

    def exact(causes: tuple[Any, ...], thetas: tuple[FloatArray, ...]) -> float:
        return ev.worst(fit.apply_set(base, causes, thetas))

    found, closest = fit.search(rows, pool, lambda i: table.slip(pb, i), exact)
    return found, closest, len(pool), rows


def _attribution(rows: fit.Rows, res: fit.FitResult) -> list[list[int]]:
    """The differing rows each cause of a set explains (each row to the cause that changes it most)."""
    failing = np.flatnonzero(np.abs(rows.e) > 1.0)
    change = np.zeros((len(res.causes), failing.size))
    for i, (c, th) in enumerate(zip(res.causes, res.theta, strict=True)):
        g = np.zeros(len(rows))
        if c.cols is not None:
            g += c.cols @ th
        if c.fixed is not None:
            g += c.fixed
        change[i] = np.abs(g[failing]) / rows.a[failing]
        if c.takes is not None:
            change[i, failing == c.takes] = np.inf
    owner = np.argmax(change, axis=0) if failing.size else np.zeros(0, dtype=np.int64)
    return [failing[owner == i].tolist() for i in range(len(res.causes))]


def _fit_findings(ctx: Context, cid: str, rows: Any, res: fit.FitResult, ref_label: str) -> list[Finding]:
    model = ctx.model
    owned = _attribution(rows, res)
    n = len(res.causes)
    worst = float(res.exact if res.exact is not None else res.score)
    tail = (
        f"; with {'this' if n == 1 else f'these {n} causes'} corrected, every reported number agrees "
        f"(largest difference {cm.fmt(worst)} of its allowance)"
    )
    out = []
    for i, (c, th) in enumerate(zip(res.causes, res.theta, strict=True)):
        message, data = c.describe(th)
        total = rows.n_failing if n == 1 else len(owned[i])
        out.append(
            Finding(
                code=c.code_for(th),
                severity=Severity.WARNING,
                case=cid,
                location=c.location,
                message=message + tail,
                data=(
                    *data,
                    ("cause", message),
                    ("agreement", tail.lstrip("; ")),
                    ("fitted", [float(x) for x in th]),
                    ("explains", total),
                    ("explained", tuple(rows.label(model, j) for j in owned[i][:10])),
                    ("causes_in_set", n),
                    ("residual_after", worst),
                    ("reference", ref_label),
                ),
            )
        )
    return out


def _no_explanation(
    ctx: Context, cid: str, rows: Any, closest: fit.FitResult | None, tried: int, ref_label: str
) -> Finding:
    data: list[tuple[str, Any]] = [("candidates_tried", tried), ("reference", ref_label)]
    tail = ""
    if closest is not None and rows is not None:
        left = np.flatnonzero(np.abs(closest.residual) > 1.0)
        labels = tuple(rows.label(ctx.model, int(j)) for j in left[np.argsort(-np.abs(closest.residual[left]))][:10])
        names = " + ".join(
            f"{c.code_for(t)} at {c.location.label()}" for c, t in zip(closest.causes, closest.theta, strict=True)
        )
        figure = closest.exact if closest.exact is not None else closest.score
        data += [
            ("closest_codes", tuple(c.code_for(t) for c, t in zip(closest.causes, closest.theta, strict=True))),
            ("closest_locations", tuple(c.location.label() for c in closest.causes)),
            ("closest_residual", float(figure)),
            ("unexplained", labels),
        ]
        tail = (
            f"; the closest set ({names}) still leaves {max(left.size, 1)} number(s) unexplained "
            f"(largest difference {cm.fmt(float(figure))} of its allowance)"
            + (": " + ", ".join(labels) if labels else "")
        )
    return Finding(
        code="DX001",
        severity=Severity.INFO,
        case=cid,
        message=f"no explanation found for the differences in '{cid}' ({tried} candidate causes tried, in sets of "
        f"up to {fit.MAX_CAUSES}: signs, units, axes, members, loads, supports, springs, table slips and swaps)" + tail,
        data=tuple(data),
    )


def _one_number(js: dict[str, cm.Judgement]) -> bool:
    return sum(int(j.failed.sum()) for j in js.values()) == 1


def _plain(c: Candidate) -> bool:
    """A single-search cause whose fitted value is one a hand-off mistake typically makes."""
    if c.code != "DX104":
        return True
    r = float(dict(c.data)["EA_ratio"])
    return any(abs(r - p) <= max(members.LEFT_OUT, 0.005 * p) for p in members.PLAIN_RATIOS)


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
    return loads.locality(model, np.concatenate(nodes) if nodes else np.zeros(0, dtype=np.int64))


def _balanced(
    model: Model, actions: cm.CaseActions, obs: CaseResults, tol: Any, solver: Superposition
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
    res, q, mag = solver.joint_residuals(actions.loads, obs)
    scale = max(cm.scale_of(actions.loads, obs.axial_forces, cm.effective_reactions(model, obs)), actions.force_scale)
    return not bool(cm.judge(res, np.zeros_like(res), q, scale, tol, magnitude=mag).failed.any()), res
