"""The state of every case of a model with tension-only or compression-only members.

Per load case and combination (each solved as its own case, :mod:`audit.nonlinear`): which members
are slack, and the stability and determinacy of the *active* structure (the structure as built less its
slack members): it was factorised or updated without a singular pivot, so it has no mechanism, and its
degree of indeterminacy is ``m_active + r − d·j`` (Calladine's extended Maxwell rule with no mechanism;
Calladine 1978, "Buckminster Fuller's tensegrity structures and Clerk Maxwell's rules", Int. J. Solids
Structures 14).  A case whose active structure is a mechanism has no solution (``FORMAT.md``): NL101
names the members that would have to act in the sense they cannot.  A solve that reached its
iteration cap is NL102, an error: nothing about that case is passed.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity
from audit.nonlinear import MECHANISM, SOLVED
from audit.rules import Rule

CHECK_ID = "nonlinear"

RULES = (
    Rule(
        "NL001",
        Severity.INFO,
        "the case's active structure: its slack members, and its stability and determinacy",
        CHECK_ID,
    ),
    Rule(
        "NL101",
        Severity.ERROR,
        "the case has no solution: its active structure is a mechanism unless a member takes the sense it cannot carry",
        CHECK_ID,
    ),
    Rule("NL102", Severity.ERROR, "the non-linear solve of the case did not converge", CHECK_ID),
)

#: slack members named in one NL001 message
NAMED = 12


def run(ctx: Context) -> list[CheckOutcome]:
    model = ctx.model
    if not model.is_nonlinear:
        return [cm.not_run(CHECK_ID, None, "no tension- or compression-only members")]
    nl = ctx.solution.nonlinear if ctx.solution is not None else None
    if nl is None:
        return [cm.not_run(CHECK_ID, None, ctx.unsolvable_reason or "the model was not solved")]
    codes = model.behaviour_codes()
    r = ctx.stability.reactions
    dj = model.dim * model.n_nodes
    outs = []
    for st in nl.states:
        findings: list[Finding] = []
        summary: list[tuple[str, Any]] = [("method", st.method), ("iterations", st.iterations)]
        slack = np.flatnonzero((codes != 0) & ~st.active)
        if st.status == SOLVED:
            m_active = int(st.active.sum())
            degree = m_active + r - dj
            kind = "statically determinate" if degree == 0 else f"statically indeterminate to degree {degree}"
            names = ", ".join(model.member_ids[i] for i in slack[:NAMED].tolist())
            more = f" and {slack.size - NAMED} more" if slack.size > NAMED else ""
            slack_text = f"{slack.size} slack member(s): {names}{more}" if slack.size else "no member slack"
            findings.append(
                Finding(
                    code="NL001",
                    severity=Severity.INFO,
                    case=st.case_id,
                    message=f"'{st.case_id}': {slack_text}; the active structure ({m_active} members) is stable "
                    f"and {kind} (solved by {st.method} in {st.iterations} iteration(s))",
                    data=(
                        ("slack_members", tuple(model.member_ids[i] for i in slack.tolist())),
                        ("active_members", m_active),
                        ("indeterminacy", degree),
                    ),
                )
            )
            summary += [("slack", int(slack.size)), ("indeterminacy", degree)]
            reason = f"{slack.size} slack, active structure stable and {kind}"
        elif st.status == MECHANISM:
            for i in st.needed[: cm.MAX_LISTED]:
                sense = "compression" if codes[i] > 0 else "tension"
                findings.append(
                    Finding(
                        code="NL101",
                        severity=Severity.ERROR,
                        case=st.case_id,
                        location=Location(member=model.member_ids[i]),
                        message=f"'{st.case_id}' has no solution: the structure is stable only if "
                        f"{model.member_ids[i]} takes {sense}, which it cannot",
                        data=(("needed_sense", sense),),
                    )
                )
            if not st.needed:
                findings.append(Finding(code="NL101", severity=Severity.ERROR, case=st.case_id, message=st.message))
            reason = st.message
        else:
            findings.append(Finding(code="NL102", severity=Severity.ERROR, case=st.case_id, message=st.message))
            reason = st.message
        outs.append(cm.outcome(CHECK_ID, st.case_id, findings, reason, summary))
    return outs
