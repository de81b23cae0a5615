"""Scale of a whole kind of quantity: sign conventions (DX101, DX110) and units (DX102, DX103, DX002).

The least-squares ratio ``c = Σ r·p / Σ p²`` (r reported, p recomputed) of each kind is compared with −1 and
with the ratios of two units of the format (``audit.model.FORCE_UNITS`` / ``LENGTH_UNITS``).  A scale is
accepted when, divided out, the kind agrees with the recomputation except for at most ``OUTLIERS`` numbers
(those are left to the other causes, e.g. a slip beside a unit factor).
"""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction
from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks.diagnosis.base import CHECK_ID
from audit.checks.recompute import compare_case
from audit.context import Context
from audit.findings import Finding, Location, Severity
from audit.model import FORCE_UNITS, LENGTH_UNITS, CaseResults, FloatArray
from audit.rules import Rule

#: numbers of a kind that may still differ once a sign or unit scale is divided out (left to other causes)
OUTLIERS = 3

RULES = (
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


# ----------------------------------------------------------------- 1. scales
def scale_tests(
    ctx: Context,
    cid: str,
    actions: cm.CaseActions,
    cr: CaseResults,
    ref: cm.Reference,
    js: dict[str, cm.Judgement],
    bad: dict[str, int],
    findings: list[Finding],
    explained: set[str],
    plain_only: bool = False,
) -> CaseResults:
    """Fit reported/recomputed per kind; record the explained kinds; return the observations corrected.
    ``plain_only``: only a sign or a unit ratio counts (no DX002)."""
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

    def passes(kind: str, values: FloatArray, quantum: FloatArray, c: float) -> tuple[float, int] | None:
        """(largest difference over allowance among the agreeing numbers, numbers still differing) with the
        kind divided by c; None when the scale does not explain the kind.  A few numbers (``OUTLIERS``) may
        still differ when c is a sign or a unit ratio: they are left to the other causes."""
        fields = {
            "axial_force": ("axial_forces", "axial_force_quantum"),
            "reaction": ("reactions", "reaction_quantum"),
            "displacement": ("displacements", "displacement_quantum"),
        }[kind]
        trial = _with(cr, **{fields[0]: values, fields[1]: quantum})
        j = compare_case(model, actions, trial, ref, tol)[kind]
        w = j.worst()
        if w is None:
            return None
        if w[1] <= 1.0:
            return w[1], 0
        n_out = int(j.failed.sum())
        table = FORCE_UNITS if kind != "displacement" else LENGTH_UNITS
        plain = abs(c + 1.0) <= tol.ratio_match or match_unit(c, table, "", tol.ratio_match) is not None
        if not plain or n_out > OUTLIERS or int(j.checked.sum()) < 3 * max(n_out, 1):
            return None
        ok = j.checked & ~j.failed
        ratio = np.where(ok, np.abs(j.difference) / np.maximum(j.allowed, 1e-300), 0.0)
        return float(np.max(ratio)), n_out

    def robust(c: float | None, kind: str) -> float | None:
        """The median ratio of the kind when the least-squares one is pulled off by a few outliers."""
        j = js[kind]
        p = np.ravel(j.expected)
        r = np.ravel(j.reported)
        ok = np.ravel(j.checked) & (np.abs(np.nan_to_num(p)) > 10 * tol.floor * j.scale)
        if int(ok.sum()) < 2:
            return c
        m = float(np.median(r[ok] / p[ok]))
        return m if c is None or abs(m - c) > tol.ratio_match * max(1.0, abs(m)) else c

    # forces: axial forces and reactions share the force unit; only axial forces carry a sign convention
    cN = robust(cN, "axial_force") if cN is not None else None
    cR = robust(cR, "reaction") if cR is not None else None
    cU = robust(cU, "displacement") if cU is not None else None
    if plain_only:
        # a factor matching no unit and no sign is evidence only when it explains everything; beside another
        # cause (a load at another value changes forces and displacements alike) it is left to the fit
        cN = cN if cN is not None and _is_plain(cN, FORCE_UNITS, tol) else None
        cR = cR if cR is not None and _is_plain(cR, FORCE_UNITS, tol) else None
        cU = cU if cU is not None and _is_plain(cU, LENGTH_UNITS, tol) else None
    force_fit = [c for c in (cN, cR) if c is not None]
    scaled: set[str] = set()
    for kind, c in (("axial_force", cN), ("reaction", cR)):
        if c is None or c == 0.0 or abs(c - 1.0) <= tol.ratio_match:
            continue
        attr, qattr = (
            ("axial_forces", "axial_force_quantum") if kind == "axial_force" else ("reactions", "reaction_quantum")
        )
        got = passes(kind, getattr(cr, attr) / c, getattr(cr, qattr) / abs(c), c)
        if got is None:
            continue
        w, n_out = got
        scaled.add(kind)
        if n_out == 0:
            explained.add(kind)
        obs = _with(obs, **{attr: getattr(cr, attr) / c, qattr: getattr(cr, qattr) / abs(c)})
        if c < 0:
            findings.append(_sign_finding(ctx, cid, kind, c, w))
    mags = [abs(c) for c in force_fit if c is not None and abs(abs(c) - 1.0) > tol.ratio_match]
    if mags and (len(mags) == len(force_fit)) and {"axial_force", "reaction"} & scaled:
        c = float(np.mean(mags))
        kinds = [k for k, ck in (("axial_force", cN), ("reaction", cR)) if ck is not None and k in scaled]
        findings.append(_unit_finding(cid, "force", c, kinds, FORCE_UNITS, declared_f, tol, model.units.force))
    if cU is not None and cU != 0.0 and abs(cU - 1.0) > tol.ratio_match:
        got = passes("displacement", cr.displacements / cU, cr.displacement_quantum / abs(cU), cU)
        if got is not None:
            if got[1] == 0:
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


def _is_plain(c: float, table: dict[str, Fraction], tol: Any) -> bool:
    return abs(abs(c) - 1.0) <= tol.ratio_match or match_unit(c, table, "", tol.ratio_match) is not None


def case_scale(
    ctx: Context, cid: str, actions: cm.CaseActions, cr: CaseResults, ref: cm.Reference
) -> tuple[Finding, CaseResults, int] | None:
    """A case with one loaded node and nothing else acting, whose every reported number is c × the
    recomputed one: that load entered at c × its value (DX106 for c = 2, DX112 otherwise), the results
    divided by c, and the numbers still differing (at most ``OUTLIERS``, left to the other causes); None when
    that is not what the numbers show.  (A linear structure's whole answer scales with
    its one load; common practice.)"""
    model, tol = ctx.model, ctx.tolerances
    loaded = np.flatnonzero(np.any(actions.loads != 0.0, axis=1))
    if loaded.size != 1 or np.any(actions.free_elongation != 0.0) or np.any(actions.settlement != 0.0):
        return None
    parts = [
        (cr.displacements, ref.displacements, cr.has_displacements),
        (cr.axial_forces, ref.axial_forces, cr.has_axial_forces),
        (cr.reactions, ref.reactions, cr.has_reactions),
    ]
    rep = np.concatenate([np.ravel(r) for r, _p, has in parts if has] or [np.zeros(0)])
    pre = np.concatenate([np.ravel(p) for _r, p, has in parts if has] or [np.zeros(0)])
    # each kind in its own scale, so that metres do not vanish beside kilonewtons
    scales = [cm.scale_of(p) or 1.0 for _r, p, has in parts if has]
    w = np.concatenate(
        [np.full(np.size(p), 1.0 / s) for (_r, p, has), s in zip([q for q in parts if q[2]], scales, strict=True)]
        or [np.zeros(0)]
    )
    c = fit_ratio(rep * w, pre * w)
    sig = np.isfinite(rep) & np.isfinite(pre) & (np.abs(pre * w) > 10 * tol.floor)
    if int(sig.sum()) >= 3:
        # robust: the median ratio, refitted over the numbers within 1 % of it (a slip must not pull c off)
        ratio = rep[sig] / pre[sig]
        med = float(np.median(ratio))
        near = np.abs(ratio - med) <= 0.01 * abs(med)
        c = fit_ratio((rep * w)[sig][near], (pre * w)[sig][near]) if near.any() else med
    if c is None or c == 0.0 or abs(c - 1.0) <= tol.ratio_match:
        return None
    trial = _with(
        cr,
        displacements=cr.displacements / c,
        displacement_quantum=cr.displacement_quantum / abs(c),
        axial_forces=cr.axial_forces / c,
        axial_force_quantum=cr.axial_force_quantum / abs(c),
        reactions=cr.reactions / c,
        reaction_quantum=cr.reaction_quantum / abs(c),
    )
    js = compare_case(model, actions, trial, ref, tol)
    left = sum(int(j.failed.sum()) for j in js.values())
    checked = sum(int(j.checked.sum()) for j in js.values())
    if left > min(OUTLIERS, checked // 10):
        return None  # a few slips beside the scale at most: one in ten numbers
    worst = [
        float(
            np.max(
                np.where(
                    j.checked & ~j.failed, np.abs(np.nan_to_num(j.difference)) / np.maximum(j.allowed, 1e-300), 0.0
                )
            )
        )
        for j in js.values()
        if j.checked.any()
    ]
    node = int(loaded[0])
    nid = model.node_ids[node]
    load = "(" + ", ".join(cm.fmt(float(v)) for v in actions.loads[node]) + f") {model.units.force}"
    code = "DX106" if abs(c - 2.0) <= 2.0 * tol.ratio_match else "DX112"
    figure = max(worst, default=0.0)
    cause = (
        f"the load {load} at node {nid} is applied twice in the source's analysis"
        if code == "DX106"
        else f"the load {load} at node {nid} is entered at {cm.fmt(c)}× its value in the source"
    )
    agreement = (
        f"with every reported number divided by {cm.fmt(c)} (the case's one load), every reported number agrees "
        f"(largest difference {cm.fmt(figure)} of its allowance)"
        if left == 0
        else f"divided by {cm.fmt(c)}, all but {left} reported number(s) agree (those are explained below)"
    )
    return (
        Finding(
            code=code,
            severity=Severity.WARNING,
            case=cid,
            location=Location(node=nid),
            message=f"{cause}; {agreement}",
            data=(
                ("node", nid),
                ("component", "all"),
                ("factor_applied", c),
                ("cause", cause),
                ("agreement", agreement),
                ("residual_after", figure),
                ("differing_after", left),
            ),
        ),
        trial,
        left,
    )
