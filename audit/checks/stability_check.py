"""Stability and determinacy: turns :class:`audit.stability.StabilityReport` into findings.

One model-wide outcome.  It fails exactly when the model has a mechanism
(rigid-body motions left free by the supports included): linear results are
then not valid, whether the mechanism is finite or first-order infinitesimal.
Each mechanism of the basis gets a finding (which joints move, along what),
and every recognised trap (parallel or concurrent reactions, a joint between
collinear members, a plane truss entered as 3D, a panel without a diagonal, a
Maxwell count that looks fine while the geometry is not) is explained in its
own finding.  The analysis itself, and its sources, are in
:mod:`audit.stability`.
"""

from __future__ import annotations

from typing import Any

from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity, Status
from audit.rules import Rule
from audit.stability import Mechanism, StabilityReport, Trap

CHECK_ID = "stability"

RULES = (
    Rule(
        "ST001",
        Severity.INFO,
        "stable: the rank shows no mechanism (classification, degree, how it was proven)",
        CHECK_ID,
    ),
    Rule(
        "ST002", Severity.INFO, "states of self-stress: the members that can carry self-equilibrated forces", CHECK_ID
    ),
    Rule("ST101", Severity.ERROR, "unstable: the model has mechanisms, so linear results are not valid", CHECK_ID),
    Rule("ST102", Severity.ERROR, "a rigid-body motion is left free by the supports", CHECK_ID),
    Rule("ST103", Severity.ERROR, "a finite internal mechanism (no state of self-stress can stiffen it)", CHECK_ID),
    Rule(
        "ST104", Severity.ERROR, "a first-order infinitesimal internal mechanism (stiffened by self-stress)", CHECK_ID
    ),
    Rule("ST105", Severity.ERROR, "an internal mechanism not proven infinitesimal", CHECK_ID),
    Rule("ST110", Severity.ERROR, "all reactions are parallel: a translation is free", CHECK_ID),
    Rule("ST111", Severity.ERROR, "all reaction lines meet in one point (or one axis): a rotation is free", CHECK_ID),
    Rule("ST112", Severity.ERROR, "too few reaction components (or none) to hold the structure", CHECK_ID),
    Rule("ST113", Severity.ERROR, "a part is joined to the rest by no member and carried by no support", CHECK_ID),
    Rule("ST114", Severity.ERROR, "a joint is connected to no member", CHECK_ID),
    Rule("ST115", Severity.ERROR, "a joint joins only collinear members (or hangs on one member)", CHECK_ID),
    Rule("ST116", Severity.ERROR, "the members at a joint of a space truss all lie in one plane", CHECK_ID),
    Rule("ST117", Severity.ERROR, "a plane truss entered as 3D is free to move out of its plane", CHECK_ID),
    Rule("ST118", Severity.ERROR, "a panel has no diagonal and can shear", CHECK_ID),
    Rule("ST119", Severity.WARNING, "Maxwell's count looks sufficient but the geometry is unstable", CHECK_ID),
    Rule(
        "ST120",
        Severity.WARNING,
        "the mechanism count is a lower bound (and the rank an upper one): the numerical search could not finish",
        CHECK_ID,
    ),
)

#: trap kind -> code
TRAP_CODES = {
    "parallel-reactions": "ST110",
    "concurrent-reactions": "ST111",
    "too-few-reactions": "ST112",
    "no-supports": "ST112",
    "unsupported-part": "ST113",
    "isolated-joint": "ST114",
    "collinear-joint": "ST115",
    "single-member-joint": "ST115",
    "coplanar-joint": "ST116",
    "plane-truss-as-3d": "ST117",
    "missing-diagonal": "ST118",
    "count-misleading": "ST119",
}

#: internal mechanism order -> code
ORDER_CODES = {"finite": "ST103", "first-order infinitesimal": "ST104"}

_SEVERITY = {r.code: r.severity for r in RULES}


def run(ctx: Context) -> list[CheckOutcome]:
    rep: StabilityReport = ctx.stability
    findings = findings_of(rep)
    failed = any(f.severity >= Severity.ERROR for f in findings)
    return [
        CheckOutcome(
            check=CHECK_ID,
            case=None,
            status=Status.FAIL if failed else Status.PASS,
            findings=tuple(findings),
            reason=rep.summary(),
            summary=_summary(rep, ctx.condition),
        )
    ]


def findings_of(rep: StabilityReport) -> list[Finding]:
    """All findings of one stability report, in a fixed order: verdict, mechanisms, traps, self-stress."""
    out: list[Finding] = []
    base = _base_data(rep)
    if rep.stable:
        out.append(
            Finding(
                "ST001",
                Severity.INFO,
                f"{rep.summary()}; {rep.method}" + (f" ({rep.evidence})" if rep.proof == "numerical" else ""),
                data=base,
            )
        )
    else:
        out.append(
            Finding(
                "ST101",
                Severity.ERROR,
                f"{rep.summary()}; linear results are not valid for a mechanism",
                reported=float(rep.maxwell_count),
                expected=float(rep.mechanisms),
                data=base,
            )
        )
        if rep.lower_bound_only:
            out.append(
                Finding(
                    "ST120",
                    Severity.WARNING,
                    f"the mechanism count is a lower bound: at least {rep.mechanisms} mechanisms (rank at most "
                    f"{rep.rank}), {rep.self_stress_words()}; the numerical search could not establish the exact "
                    f"number ({rep.evidence})",
                    reported=float(rep.mechanisms),
                    data=base,
                )
            )
    for i, mk in enumerate(rep.mechanism_list, 1):
        out.append(_mechanism_finding(i, mk))
    for trap in rep.traps:
        out.append(_trap_finding(trap))
    if rep.self_stress_list:
        states = "; ".join(
            f"({k}) members {', '.join(s.members[:8])}{' …' if len(s.members) > 8 else ''}"
            + (f" with reactions {', '.join(s.reactions)}" if s.reactions else "")
            for k, s in enumerate(rep.self_stress_list, 1)
        )
        more = rep.self_stress_states - len(rep.self_stress_list)
        out.append(
            Finding(
                "ST002",
                Severity.INFO,
                f"{rep.self_stress_states} independent state(s) of self-stress: {states}"
                + (f"; {more} more not listed" if more > 0 else ""),
                data=(("self_stress", tuple(s.as_dict() for s in rep.self_stress_list)),),
            )
        )
    return out


def _base_data(rep: StabilityReport) -> tuple[tuple[str, Any], ...]:
    return (
        ("classification", rep.classification),
        ("maxwell_count", rep.maxwell_count),
        ("rank", rep.rank),
        ("mechanisms", rep.mechanisms),
        ("rigid_body_mechanisms", rep.rigid_body_mechanisms),
        ("internal_mechanisms", rep.internal_mechanisms),
        ("self_stress_states", rep.self_stress_established),
        ("proof", rep.proof),
        ("threshold", rep.threshold),
        *_bounds(rep),
    )


def _bounds(rep: StabilityReport) -> tuple[tuple[str, Any], ...]:
    """The bound flags, only when the counts are bounds (a capped numerical search)."""
    if not rep.lower_bound_only:
        return ()
    return (
        ("mechanisms_at_least", rep.mechanisms),
        ("rank_at_most", rep.rank),
        ("self_stress_states_at_least", rep.self_stress_states),
    )


def _mechanism_finding(i: int, mk: Mechanism) -> Finding:
    if mk.kind == "rigid-body":
        code = "ST102"
        text = f"mechanism {i} (rigid-body motion left free by the supports): {mk.description}"
    else:
        code = ORDER_CODES.get(mk.order, "ST105")
        text = f"mechanism {i} (internal): {mk.description}"
    loc = Location(node=mk.joints[0]) if len(mk.joints) == 1 else Location()
    return Finding(
        code,
        _SEVERITY[code],
        text,
        location=loc,
        data=(
            ("mechanism", i),
            ("kind", mk.kind),
            ("order", mk.order),
            ("joints", mk.joints[:50]),
            ("mode", tuple((j, v) for j, v in mk.mode[:50])),
            ("trap", mk.trap),
        ),
    )


def _trap_finding(trap: Trap) -> Finding:
    code = TRAP_CODES.get(trap.kind, "ST101")
    loc = Location(node=trap.nodes[0]) if len(trap.nodes) == 1 else Location()
    return Finding(code, _SEVERITY[code], trap.message, location=loc, data=tuple(trap.as_dict().items()))


def _summary(rep: StabilityReport, condition: float) -> tuple[tuple[str, Any], ...]:
    return (
        ("maxwell_count", rep.maxwell_count),
        ("rank", rep.rank),
        ("mechanisms", rep.mechanisms),
        ("self_stress_states", rep.self_stress_established),
        ("classification", rep.classification),
        ("proof", rep.proof),
        ("condition_estimate", condition),
        *_bounds(rep),
    )
