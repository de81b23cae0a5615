"""Diagnosis: when reported results disagree with the recomputation, say why.

A package with one module per cause family (:mod:`audit.checks.diagnosis.families` registers them):

1. ``axes``, ``scales``: an axis reversed (DX118), the scale of a whole kind of quantity: a sign convention
   (DX101, DX110), a unit (DX102, DX103) or a factor matching no unit (DX002);
2. the single-cause search of ``members``, ``loads``, ``supports`` (bounded by sampled lower bounds, one
   block solve per family with the existing factor): one member's EA (DX104), a load missing, doubled or
   moved (DX105-DX107), a support added or missing (DX108, DX109);
3. ``fit``: when no single structural cause explains every number, the smallest set of up to three causes
   from every family (members and members left out DX111, loads at any factor DX112, supports, springs
   DX114, and table mistakes: a slip of one number DX115, two labels swapped DX116, two components swapped
   DX117), each a predicted change of the reported numbers fitted against the residual in units of each
   number's allowance; "no explanation found" (DX001) names the closest set and what it leaves.

The errors themselves are raised by the other checks; the findings here are warnings (a cause found) or
information (no explanation, a factor matching no unit).  See :mod:`audit.checks.diagnosis.core`.
"""

from __future__ import annotations

from audit.checks import _common as cm
from audit.checks.diagnosis import core, families, unsolved
from audit.checks.diagnosis.base import CHECK_ID
from audit.checks.diagnosis.scales import fit_ratio, match_unit, unit_ratios
from audit.context import Context
from audit.findings import CheckOutcome

RULES = tuple(sorted((r for m in (core, *families.RULE_FAMILIES) for r in m.RULES), key=lambda r: r.code))


def run(ctx: Context) -> list[CheckOutcome]:
    return cm.per_case(ctx, CHECK_ID, lambda cid, cr: core.diagnose(ctx, cid, cr))


__all__ = ["CHECK_ID", "RULES", "cm", "fit_ratio", "match_unit", "run", "unit_ratios", "unsolved"]
