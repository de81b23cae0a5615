"""Helpers shared by the checks on reported results (equilibrium, supports, compatibility, recompute,
combinations, diagnosis): the case's loads, the reference solution, scales and the judgement rule.

Nothing here reads global state; every function is a pure function of its arguments.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any, TypeVar

import numpy as np
from numpy.typing import NDArray

from audit import stiffness
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Status
from audit.model import AXES, CaseResults, FloatArray, Model
from audit.selfweight import self_weight_loads
from audit.tolerances import Tolerances

BoolArray = NDArray[np.bool_]
T = TypeVar("T")

NO_RESULTS = "no reported results"
#: at most this many findings of one code per case are listed; the rest are counted in the summary
MAX_LISTED = 50


def fmt(x: float) -> str:
    """A number for a message: 5 significant figures."""
    return f"{x:.5g}"


def axis_name(a: int) -> str:
    return AXES[a]


def flat_location(model: Model, kind: str, i: int) -> Location:
    """Location of flat index ``i`` of a per-member (``kind == "axial_force"``) or per-node-and-axis array."""
    if kind == "axial_force":
        return Location(member=model.member_ids[i])
    node, a = divmod(i, model.dim)
    return Location(node=model.node_ids[node], axis=AXES[a])


# ------------------------------------------------------------------ cases
#: share of the initial-strain / settlement force bound that still counts as a force scale (a noise floor)
BOUND_SHARE = 1e-6


@dataclass(frozen=True)
class CaseActions:
    """What acts in one load case or combination (a combination: the factored sum of its cases)."""

    loads: FloatArray  #: (n_nodes, dim) nodal loads, self weight included
    free_elongation: FloatArray  #: (n_members,) alpha*delta*L + length error
    settlement: FloatArray  #: (n_restraints,) prescribed displacement along each restraint
    is_combination: bool
    force_scale: float  #: largest of |load| and BOUND_SHARE·(EA/L·|free elongation|, max(EA/L)·|settlement|)
    length_scale: float  #: largest of |free elongation|, |settlement|, force_scale / max(EA/L)


def case_actions(model: Model, case_id: str) -> CaseActions | None:
    """Loads, free elongations and settlements of a load case or a combination; None for an unknown id."""
    ci = model.case_index(case_id)
    if ci is not None:
        lc = model.load_cases[ci]
        d0 = stiffness.initial_elongation(model, lc.temperature, lc.length_error)
        loads = lc.loads + self_weight_loads(model, lc)
        return _actions(model, loads, np.asarray(d0, dtype=np.float64), lc.settlement.copy(), False)
    bi = model.combination_index(case_id)
    if bi is None:
        return None
    loads = np.zeros((model.n_nodes, model.dim))
    d0 = np.zeros(model.n_members)
    g = np.zeros(model.n_restraints)
    for idx, factor, _text in model.combinations[bi].factors:
        lc = model.load_cases[idx]
        loads += factor * (lc.loads + self_weight_loads(model, lc))
        d0 += factor * stiffness.initial_elongation(model, lc.temperature, lc.length_error)
        g += factor * lc.settlement
    return _actions(model, loads, d0, g, True)


def _actions(model: Model, loads: FloatArray, d0: FloatArray, g: FloatArray, comb: bool) -> CaseActions:
    """Attach the scales the inputs of a case set, so that a case whose answer is (nearly) zero, e.g. a
    temperature change on a determinate truss, is judged against what it could have produced, not against
    float noise."""
    k = model.axial_stiffness() if model.n_members else np.zeros(1)
    kmax = float(np.max(k)) if k.size else 0.0
    bound = max(scale_of(k * d0) if model.n_members else 0.0, kmax * scale_of(g))
    ls = max(scale_of(d0), scale_of(g), max(scale_of(loads), bound) / kmax if kmax > 0 else 0.0)
    # EA/L·δ0 and max(EA/L)·|settlement| bound what the initial strains and settlements could produce, but
    # loosely: a settlement of a determinate truss moves it rigidly and stresses nothing.  As a scale they
    # would widen every tolerance (a 5 % wrong force passed beside a 0.1 m settlement), so they only set a
    # noise floor, BOUND_SHARE of the bound; the recomputed forces and the loads set the real scale.
    fs = max(scale_of(loads), BOUND_SHARE * bound)
    return CaseActions(loads, d0, g, comb, fs, ls)


def reported_case(ctx: Context, case_id: str) -> CaseResults | None:
    """The reported results of a case with :func:`zero_quanta` applied; None when not reported."""
    cr = ctx.results.case(case_id) if ctx.results is not None else None
    return zero_quanta(cr) if cr is not None else None


def _zero_quantum(values: FloatArray, quantum: FloatArray) -> FloatArray:
    nonzero = np.isfinite(values) & (values != 0.0)
    if not nonzero.any():
        return quantum
    cap = float(np.nanmax(np.where(nonzero, quantum, np.nan)))
    return np.where(np.isfinite(values) & (values == 0.0), np.minimum(quantum, cap), quantum)


def zero_quanta(cr: CaseResults) -> CaseResults:
    """Cap the rounding quantum of every reported exact zero at the largest quantum of the non-zero values of
    the same kind in the case.

    A zero written as ``0`` carries no digits to read a resolution from (the reader gives it half a unit,
    0.5 in the declared unit, which for displacements in metres would excuse anything).  The printer that
    wrote the other numbers of the same kind resolved at least as finely as its coarsest non-zero number, so
    that is the most a zero can be off by rounding.  Values written ``0.000`` keep their own, smaller
    quantum.
    """
    return replace(
        cr,
        displacement_quantum=_zero_quantum(cr.displacements, cr.displacement_quantum),
        axial_force_quantum=_zero_quantum(cr.axial_forces, cr.axial_force_quantum),
        reaction_quantum=_zero_quantum(cr.reactions, cr.reaction_quantum),
    )


def not_run(check: str, case: str | None, reason: str, findings: tuple[Finding, ...] = ()) -> CheckOutcome:
    return CheckOutcome(check=check, case=case, status=Status.NOT_RUN, findings=findings, reason=reason)


def outcome(
    check: str, case: str | None, findings: list[Finding], reason: str, summary: list[tuple[str, Any]]
) -> CheckOutcome:
    """PASS or FAIL: FAIL exactly when a finding is an error."""
    from audit.findings import Severity

    failed = any(f.severity >= Severity.ERROR for f in findings)
    return CheckOutcome(
        check=check,
        case=case,
        status=Status.FAIL if failed else Status.PASS,
        findings=tuple(findings),
        reason=reason,
        summary=tuple(summary),
    )


def per_case(ctx: Context, check: str, run_case: Callable[[str, CaseResults], CheckOutcome]) -> list[CheckOutcome]:
    """One outcome per load case and combination, in file order: NOT_RUN where nothing was reported."""
    outs: list[CheckOutcome] = []
    for cid in ctx.model.all_case_ids():
        if ctx.results is None:
            outs.append(not_run(check, cid, NO_RESULTS))
            continue
        cr = reported_case(ctx, cid)
        if cr is None:
            outs.append(not_run(check, cid, f"no results reported for '{cid}'"))
        else:
            outs.append(run_case(cid, cr))
    return outs


def listed(items: list[T], limit: int = MAX_LISTED) -> tuple[list[T], int]:
    """The first ``limit`` items (callers sort worst first) and how many were left off."""
    return items[:limit], max(0, len(items) - limit)


# -------------------------------------------------------------- reference
@dataclass(frozen=True)
class Reference:
    """The recomputed answer a case is compared with."""

    displacements: FloatArray  #: (n_nodes, dim)
    axial_forces: FloatArray  #: (n_members,)
    reactions: FloatArray  #: (n_nodes, dim)
    label: str  #: "high precision" or "float64"
    status: str = ""  #: the high-precision case's own status (e.g. "proven"), "" for float64


def reference(ctx: Context, case_id: str) -> Reference | None:
    """The high-precision answer when :mod:`audit.precision` produced one for this case, else the float64 one."""
    model = ctx.model
    shape = (model.n_nodes, model.dim)
    prec = ctx.precision
    if prec is not None:
        getter = getattr(prec, "case", None)
        pc = None
        if callable(getter):
            try:
                pc = getter(case_id)
            except (KeyError, LookupError, ValueError):
                pc = None
        if pc is not None:
            try:
                u = np.asarray(pc.displacements, dtype=np.float64).reshape(shape)
                n = np.asarray(pc.axial_forces, dtype=np.float64).reshape(model.n_members)
                r = np.asarray(pc.reactions, dtype=np.float64).reshape(shape)
            except (AttributeError, TypeError, ValueError):
                pass
            else:
                if np.all(np.isfinite(u)) and np.all(np.isfinite(n)) and np.all(np.isfinite(r)):
                    return Reference(u, n, r, "high precision", str(getattr(pc, "status", "")))
    if ctx.solution is None:
        return None
    cs = ctx.solution.case(case_id)
    if cs is None:
        return None
    return Reference(cs.displacements, cs.axial_forces, cs.reactions, "float64")


def unsolved_reason(ctx: Context, case_id: str) -> str:
    """Why a case has no recomputation ("" when it has one or nothing is known)."""
    nl = ctx.solution.nonlinear if ctx.solution is not None else None
    state = nl.state(case_id) if nl is not None else None
    if state is not None and state.message:
        return state.message
    return ctx.unsolvable_reason


# ------------------------------------------------------------------ scales
def scale_of(*arrays: FloatArray) -> float:
    """Largest finite |value| over the arrays (0 when there is none)."""
    best = 0.0
    for a in arrays:
        v = np.abs(np.asarray(a, dtype=np.float64))
        if not v.size:
            continue
        top = float(v.max())
        if not math.isfinite(top):  # an inf or NaN among them (rare): the largest of the finite ones
            top = float(np.max(v, where=np.isfinite(v), initial=0.0))
        best = max(best, top)
    return best


def first_nonzero(*values: float) -> float:
    for v in values:
        if v > 0:
            return v
    return 0.0


# ---------------------------------------------------------------- judging
@dataclass(frozen=True)
class Judgement:
    """Element-wise comparison of reported values with expected ones (NaN reported = not checked)."""

    reported: FloatArray
    expected: FloatArray
    difference: FloatArray  #: reported − expected
    allowed: FloatArray  #: quantum + max(relative·|expected|, floor·scale)
    quantum: FloatArray
    checked: BoolArray
    passed: BoolArray  #: checked and |difference| <= allowed
    rounding: BoolArray  #: checked and |difference| within the rounding band (quantum + noise)
    scale: float

    @property
    def failed(self) -> BoolArray:
        return self.checked & ~self.passed

    def counts(self) -> dict[str, int]:
        return {
            "checked": int(self.checked.sum()),
            "passed": int(self.passed.sum()),
            "within_rounding": int(self.rounding.sum()),
            "within_tolerance_beyond_rounding": int((self.passed & ~self.rounding).sum()),
            "failed": int(self.failed.sum()),
        }

    def worst(self) -> tuple[int, float] | None:
        """(flat index, |difference|/allowed) of the worst checked quantity."""
        if not self.checked.any():
            return None
        ratio = np.where(self.checked, np.abs(self.difference) / np.maximum(self.allowed, 1e-300), -1.0).ravel()
        i = int(np.argmax(ratio))
        return i, float(ratio[i])


def judge(
    reported: FloatArray,
    expected: FloatArray,
    quantum: FloatArray,
    scale: float,
    tol: Tolerances,
    magnitude: FloatArray | None = None,
) -> Judgement:
    """Judge reported against expected with :meth:`Tolerances.allowed`; NaN on either side is not checked.

    ``magnitude`` replaces |expected| in the relative allowance (a residual, expected 0, is judged
    relative to the size of the terms it sums).
    """
    rep = np.asarray(reported, dtype=np.float64)
    exp = np.asarray(expected, dtype=np.float64)
    q = np.broadcast_to(np.asarray(quantum, dtype=np.float64), rep.shape)
    checked = np.isfinite(rep) & np.isfinite(exp)
    diff = np.where(checked, rep - exp, np.nan)
    allowed = tol.allowed(exp if magnitude is None else magnitude, q, scale)
    band = tol.rounding_band(q, scale)
    adiff = np.abs(np.nan_to_num(diff, nan=np.inf))
    passed = checked & (adiff <= allowed)
    rounding = checked & (adiff <= band)
    return Judgement(rep, exp, diff, allowed, np.nan_to_num(q, nan=0.0), checked, passed, rounding, scale)


def verdict_label(j: Judgement, i: int) -> str:
    """ "rounding", "tolerance", "fail" or "not checked" for flat index i."""
    if not j.checked.ravel()[i]:
        return "not checked"
    if j.rounding.ravel()[i]:
        return "rounding"
    return "tolerance" if j.passed.ravel()[i] else "fail"


def judgement_data(j: Judgement, i: int) -> tuple[tuple[str, Any], ...]:
    """Finding data for flat index i: the quantum and the verdict basis."""
    q = float(j.quantum.ravel()[i])
    return (("quantum", q), ("scale", j.scale), ("basis", verdict_label(j, i)))


# ----------------------------------------------------------------- support geometry
def support_span(model: Model, node: int, with_springs: bool = True) -> FloatArray:
    """(dim, k) orthonormal basis of the directions along which a support at ``node`` can push."""
    dirs = [model.restraint_dir[model.restraint_node == node]]
    if with_springs:
        dirs.append(model.spring_dir[model.spring_node == node])
    C = np.vstack(dirs) if dirs else np.zeros((0, model.dim))
    if C.shape[0] == 0:
        return np.zeros((model.dim, 0))
    _, s, vt = np.linalg.svd(C)
    rank = int(np.sum(s > 1e-12 * max(1.0, float(s[0]))))
    return np.ascontiguousarray(vt[:rank].T)


def equilibrium_residual(
    model: Model, loads: FloatArray, forces: FloatArray, reactions: FloatArray, B: Any = None
) -> FloatArray:
    """(n_nodes, dim) joint residuals ``f + r − Bᵀ N`` (zero at every joint in equilibrium).

    A member in tension N pulls each end joint towards the other end: the force on its start joint is
    ``+N n`` and on its end joint ``−N n`` (n the unit vector start→end), which is ``−Bᵀ N`` with the
    compatibility matrix B (method of joints; common practice, e.g. Hibbeler, *Structural Analysis*,
    §3.4; section number recalled from memory).  NaN forces or reactions make the affected joint components NaN.
    """
    B = stiffness.compatibility_matrix(model) if B is None else B  # B: the caller's, when it holds it
    n_ok = np.nan_to_num(forces, nan=0.0)
    internal = (B.T @ n_ok).reshape(model.n_nodes, model.dim)
    res = loads + np.nan_to_num(reactions, nan=0.0) - internal
    # joints touched by an unreported member force are unknown on every axis the member acts along
    if np.isnan(forces).any():
        absB = abs(B)
        unknown = (absB.T @ np.isnan(forces).astype(np.float64)).reshape(model.n_nodes, model.dim) > 0
        res = np.where(unknown, np.nan, res)
    return np.where(np.isnan(reactions), np.nan, res)


def can_push(model: Model) -> BoolArray:
    """(n_nodes, dim) True where a support at the node can exert a force component along the axis."""
    out = np.zeros((model.n_nodes, model.dim), dtype=bool)
    nodes = np.unique(np.concatenate([model.restraint_node, model.spring_node]))
    for node in nodes.tolist():
        span = support_span(model, int(node))
        out[int(node)] = np.linalg.norm(span, axis=1) > 1e-12
    return out


def effective_reactions(model: Model, cr: CaseResults) -> FloatArray:
    """Reported reactions with unreported components that no support can exert set to 0 (others stay NaN)."""
    R = cr.reactions.copy() if cr.has_reactions else np.full((model.n_nodes, model.dim), np.nan)
    return np.where(np.isnan(R) & ~can_push(model), 0.0, R)


def quantum_or_zero(q: FloatArray, values: FloatArray) -> FloatArray:
    """Quanta with 0 where the value itself is not reported."""
    return np.where(np.isfinite(values), np.nan_to_num(q, nan=0.0), 0.0)
