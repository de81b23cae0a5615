"""An axis reversed in the source (DX118): displacements (and reactions) along one axis with the opposite
sign, as from a source that measures y downwards.  Member forces do not depend on the axes and keep their
sign; the recomputation is compared with the reported numbers of that axis negated.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from audit.checks import _common as cm
from audit.checks.diagnosis.base import CHECK_ID
from audit.checks.recompute import compare_case
from audit.findings import Finding, Location, Severity
from audit.model import AXES, CaseResults
from audit.rules import Rule

RULES = (
    Rule(
        "DX118",
        Severity.WARNING,
        "one axis reversed in the source: displacements and reactions along it have the opposite sign",
        CHECK_ID,
    ),
)

#: numbers that may still differ once the axis is reversed (left to the other causes)
OUTLIERS = 3


def _flip(cr: CaseResults, a: int, reactions: bool) -> CaseResults:
    U = cr.displacements.copy()
    U[:, a] = -U[:, a]
    if not reactions:
        return replace(cr, displacements=U)
    R = cr.reactions.copy()
    R[:, a] = -R[:, a]
    return replace(cr, displacements=U, reactions=R)


def _left_after_flip(j: cm.Judgement, a: int) -> int:
    """Numbers of a kind still differing with axis a of the reported values negated (the allowances do not
    depend on the reported values: no new comparison is needed)."""
    col = j.checked[:, a]
    flipped = np.abs(np.nan_to_num(-j.reported[:, a] - j.expected[:, a], nan=np.inf)) > j.allowed[:, a]
    other = np.delete(j.failed, a, axis=1)
    return int(other.sum()) + int(np.sum(col & flipped))


def axis_reversal(
    model: object,
    actions: cm.CaseActions,
    cr: CaseResults,
    ref: cm.Reference,
    tol: object,
    cid: str,
    js: dict[str, cm.Judgement] | None = None,
) -> tuple[Finding, CaseResults, int] | None:
    """(the finding, the results with the axis reversed back, numbers still differing) or None.

    Tried only when a displacement along the axis carries weight and differs: an axis reversal of the
    reactions alone is the sign of the reactions (DX110), whose test comes after this one.  Each axis with
    the reactions reversed too (then one displacement is enough, the reactions of that axis are the rest
    of the evidence), then the displacements alone (two at least: one is a slip).
    """
    if not cr.has_displacements:
        return None
    if js is None:
        js = compare_case(model, actions, cr, ref, tol)  # type: ignore[arg-type]
    ju = js["displacement"]
    d = cr.displacements.shape[1]
    for a in range(d):
        exp = np.nan_to_num(ju.expected[:, a])
        sig = ju.checked[:, a] & (np.abs(exp) > 10 * tol.floor * ju.scale)  # type: ignore[attr-defined]
        n_sig = int(np.sum(sig & ju.failed[:, a]))
        if n_sig == 0:
            continue
        for with_r in (True, False):
            if (with_r and not cr.has_reactions) or (not with_r and n_sig < 2):
                continue  # displacements alone need two numbers: one is a slip
            kinds = ("displacement", "reaction") if with_r else ("displacement",)
            before = sum(int(js[k].failed.sum()) for k in kinds)
            if sum(_left_after_flip(js[k], a) for k in kinds) > OUTLIERS:
                continue  # the cheap count first; the comparison below only for an axis that fits
            trial = _flip(cr, a, with_r)
            jt = compare_case(model, actions, trial, ref, tol)  # type: ignore[arg-type]
            left = sum(int(jt[k].failed.sum()) for k in kinds)
            if left > OUTLIERS or left >= before:
                continue
            worst = max(
                (w[1] for k in kinds if (w := jt[k].worst()) is not None and jt[k].failed.sum() == 0), default=0.0
            )
            what = "displacements and reactions" if with_r else "displacements"
            return (
                Finding(
                    code="DX118",
                    severity=Severity.WARNING,
                    case=cid,
                    location=Location(axis=AXES[a]),
                    message=f"the reported {what} along {AXES[a]} have the opposite sign: the source measures "
                    f"{AXES[a]} the other way; reversed, they agree"
                    + (f" (largest difference {cm.fmt(worst)} of its allowance)" if left == 0 else ""),
                    data=(("axis", AXES[a]), ("kinds", what), ("differing_after", left)),
                ),
                trial,
                left,
            )
    return None
