"""Stability and determinacy of a truss: Maxwell's count, the rank, mechanisms and states of self-stress.

The equilibrium matrix (Pellegrino & Calladine 1986, "Matrix analysis of
statically and kinematically indeterminate frameworks", Int. J. Solids
Structures 22(4)) is ``A = [Bᵀ | C]``: one column per member (Bᵀ, from
:func:`audit.stiffness.compatibility_matrix`) and one per reaction component
(its unit direction at its node), ``d·j`` rows.  With ρ = rank A:

* mechanisms (joint motions that stretch no member and break no support,
  rigid-body motions the supports leave free included) ``M = d·j − ρ``, the
  null space of Aᵀ;
* independent states of self-stress ``s = m + r − ρ``, the null space of A;

so ``s − M = m + r − d·j`` (Calladine's extended Maxwell rule).  The classical
count ``m + r − d·j`` (Maxwell 1864, "On the calculation of the equilibrium and
stiffness of frames") is reported as an indication only.

Reaction components ``r``: every restraint direction, and every spring of
non-zero stiffness (a spring stiffens the direction it acts along, so for
stability it removes a mechanism exactly as a restraint does; a zero spring
removes nothing and is not counted).

The rank is established

* ``"exact"`` up to :data:`EXACT_DOF_LIMIT` degrees of freedom: rational
  arithmetic on the input as written (coordinates ``Fraction(text)``; each
  member column is the unnormalised vector end − start, which has the same
  rank as the unit vector; restraint directions from their text, each column
  scaled to integers).  Full rank is proven by an LDLᵀ elimination of the
  integer Gram matrix modulo the prime 2³¹ − 1 (a non-zero determinant mod p
  is non-zero); a deficient rank, with its mechanisms, comes from
  python-flint's exact integer null space of Aᵀ (up to
  :data:`EXACT_UNSTABLE_LIMIT` dofs);
* ``"numerical"`` above that: when the restrained K was factorised (the
  factorisation refuses a scaled condition above 1e14) that is the evidence of
  no mechanism; otherwise the null space of the geometry-only Gram matrix
  ``G = A Aᵀ`` (unit member stiffness, unit reaction springs: a spread of EA/L
  neither hides nor fakes a mechanism) by dense eigh or by shift-invert block
  subspace iteration with an SPD factor of ``G + |σ| I`` (a block finds a null
  space of any multiplicity), eigenvalues below :data:`ZERO_EIGEN_RELATIVE` ·
  ‖G‖∞ counted as zero and the gap to the first non-zero one reported.  A
  numerical count never breaks Calladine's rule with s ≥ 0 (M ≥ d·j − m − r);
  a search capped at :data:`ZERO_MODE_LIMIT` zero modes reports a lower bound.

Mechanisms are split into rigid-body motions the supports leave free (per
connected part) and internal mechanisms, named joint by joint, and internal
ones are tested for first-order stiffening by self-stress (Calladine &
Pellegrino 1991, "First-order infinitesimal mechanisms", Int. J. Solids
Structures 27(4)).  Typical mistakes ("traps") are recognised and explained.

Modules: :mod:`~audit.stability.limits` (limits and tolerances), :mod:`~audit.stability.prechecks` (reaction
components, connected parts, joints lacking a direction), :mod:`~audit.stability.rigid` (free rigid-body
motions), :mod:`~audit.stability.rank` (which way the rank is established), :mod:`~audit.stability.exact`,
:mod:`~audit.stability.numerical`, :mod:`~audit.stability.naming` (mechanisms),
:mod:`~audit.stability.self_stress`, :mod:`~audit.stability.first_order`, :mod:`~audit.stability.traps`,
:mod:`~audit.stability.report` (the records), with :mod:`~audit.stability.wording` and
:mod:`~audit.stability.linalg` as small shared helpers.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, TypeVar

import numpy as np

from audit import linsolve
from audit.model import IntArray, Model
from audit.solve import System
from audit.stability.first_order import first_order_test, with_order
from audit.stability.limits import (
    DENSE_EIGEN_LIMIT,
    DESCRIBE_LIMIT,
    EXACT_DOF_LIMIT,
    EXACT_UNSTABLE_LIMIT,
    ZERO_EIGEN_RELATIVE,
    ZERO_MODE_LIMIT,
)
from audit.stability.naming import name_mechanisms
from audit.stability.prechecks import Constraints, Local, connected_parts, constraints, local_deficiencies, near_words
from audit.stability.rank import Rank, establish_rank
from audit.stability.report import Mechanism, SelfStress, StabilityReport, Trap
from audit.stability.rigid import Rigid, rigid_motions
from audit.stability.self_stress import name_self_stress, self_stress_basis
from audit.stability.traps import find_traps

T = TypeVar("T")

#: the first-order verdict when the test itself failed numerically (the reason is in the notes)
_ORDER_FAILED: dict[str, Any] = {
    "tested": False,
    "result": "not proven infinitesimal",
    "reason": "a numerical step of the product-force test failed (see the notes)",
}
#: ... and when the mechanism count is only a lower bound
_ORDER_BOUND: dict[str, Any] = {
    "tested": False,
    "result": "not proven infinitesimal",
    "reason": "the mechanism count is only a lower bound, so neither the mechanism basis nor the "
    "states of self-stress are complete",
}


def analyse(
    model: Model,
    system: System,
    factor: linsolve.Factor | None,
    *,
    condition: float | None = None,
    method: str = "auto",
    exact_limit: int = EXACT_DOF_LIMIT,
) -> StabilityReport:
    """Counts, rank, mechanisms, self-stress and traps of ``model``.

    Parameters
    ----------
    system
        The assembled system (its K_r was given to the factorisation).
    factor
        The factor of ``system.K_r``, or None when factorisation failed or was refused as singular.
    condition
        The scaled condition estimate of K_r behind ``factor``, if known (quoted as evidence).
    method
        ``"auto"`` (exact up to ``exact_limit`` dofs), ``"exact"`` or ``"numerical"`` (forces the
        numerical path, e.g. to cross-check it against the exact one).

    Notes
    -----
    ``DENSE_EIGEN_LIMIT``, ``ZERO_EIGEN_RELATIVE`` and ``ZERO_MODE_LIMIT`` are read from this package at call
    time.  The counts always satisfy Calladine's rule with s ≥ 0: when the numerical search is capped the
    mechanism count is a lower bound (``lower_bound_only``), the rank an upper bound and the number of
    states of self-stress a lower bound ``max(0, m + r − rank)`` (``self_stress_is_lower_bound``); no
    self-stress basis and no first-order test are formed then.  A numerical failure while describing the
    mechanisms or states of self-stress, or in the first-order test, becomes a note, never an exception.
    """
    d, j, m = model.dim, model.n_nodes, model.n_members
    nd = model.n_dofs
    cons = constraints(model)
    r = int(cons.node.size)
    n_springs = int(model.spring_node.size)
    counted = int(np.sum(model.spring_k > 0))
    maxwell = m + r - d * j

    # cheap pre-checks: connected parts, their rigid-body freedom, deficient joints
    n_parts, labels = connected_parts(model)
    rigid = rigid_motions(model, cons, labels, n_parts)
    n_rigid = sum(p.basis.shape[1] for p in rigid)
    local, near = local_deficiencies(model, cons)
    near_notes = [near_words(model, nr) for nr in near]

    found = establish_rank(
        model,
        cons,
        factor,
        local,
        n_rigid,
        condition=condition,
        method=method,
        exact_limit=exact_limit,
        dense_limit=DENSE_EIGEN_LIMIT,
        zero_relative=ZERO_EIGEN_RELATIVE,
        zero_limit=ZERO_MODE_LIMIT,
    )
    rank, proof = found.rank, found.proof
    lower_bound = found.lower_bound_only
    notes = list(found.notes) + near_notes
    if nd - rank < max(-maxwell, 0):
        # Calladine's rule s − M = m + r − d·j with s >= 0: never fewer than d·j − m − r mechanisms
        lower_bound = True
        notes.append(
            f"the rank found ({rank}) would leave fewer than the d·j − m − r = {-maxwell} mechanisms that "
            "Calladine's rule guarantees: the count is reported as that lower bound"
        )
        rank = m + r
    mech = nd - rank
    # with the mechanism count only a lower bound the rank is an upper bound, and s = m + r − rank a lower one
    s = max(0, m + r - rank) if lower_bound else m + r - rank
    n_rigid = min(n_rigid, mech)

    mechanisms, order, traps, stresses = _describe(
        model, cons, found, rigid, local, labels, mech, n_rigid, s, maxwell, lower_bound, notes
    )
    return StabilityReport(
        dim=d,
        joints=j,
        members=m,
        reactions=r,
        springs_counted=counted,
        springs_zero=n_springs - counted,
        maxwell_count=maxwell,
        rank=rank,
        mechanisms=mech,
        rigid_body_mechanisms=n_rigid,
        internal_mechanisms=mech - n_rigid,
        self_stress_states=s,
        self_stress_is_lower_bound=lower_bound,
        proof=proof,
        method=found.method,
        evidence=found.evidence,
        threshold=found.threshold,
        lower_bound_only=lower_bound,
        components=n_parts,
        mechanism_list=mechanisms,
        self_stress_list=stresses,
        traps=traps,
        order_test=order,
        notes=tuple(notes),
    )


def _describe(
    model: Model,
    cons: Constraints,
    found: Rank,
    rigid: list[Rigid],
    local: list[Local],
    labels: IntArray,
    mech: int,
    n_rigid: int,
    s: int,
    maxwell: int,
    lower_bound: bool,
    notes: list[str],
) -> tuple[tuple[Mechanism, ...], dict[str, Any], tuple[Trap, ...], tuple[SelfStress, ...]]:
    """The named mechanisms (with their first-order verdicts), the first-order test, the traps and the named
    states of self-stress.  Each stage is optional: a numerical failure in one becomes a note."""
    # the self-stress basis (naming only) is formed when the count is known, never for a mere bound
    S_basis = (
        None if lower_bound else _guarded(notes, "self-stress basis", self_stress_basis, model, cons, s, found.exact)
    )
    n_internal = mech - n_rigid
    named = _guarded(
        notes, "naming the mechanisms", name_mechanisms, model, rigid, local, found.basis, labels, n_internal
    )
    mechanisms, internal_basis = named if named is not None else ((), None)
    order: dict[str, Any] = {}
    if n_internal > 0:
        if lower_bound:
            order = dict(_ORDER_BOUND)
        else:
            args = (model, cons, found.basis, internal_basis, s, found.proof)
            order = _guarded(notes, "first-order test", first_order_test, *args) or dict(_ORDER_FAILED)
        it = iter(order.pop("verdicts", []))
        mechanisms = tuple(
            with_order(mk, next(it, order["result"])) if mk.kind == "internal" else mk for mk in mechanisms
        )
    args_t = (model, cons, rigid, local, mechanisms, maxwell, mech, s, labels, lower_bound)
    traps = _guarded(notes, "recognising the traps", find_traps, *args_t) or ()
    stresses = (
        (_guarded(notes, "naming the states of self-stress", name_self_stress, model, cons, S_basis) or ())
        if S_basis is not None
        else ()
    )
    return mechanisms, order, traps, stresses


def _guarded(notes: list[str], stage: str, fn: Callable[..., T], *args: Any) -> T | None:
    """``fn(*args)``, or None with a note when a numerical step of an optional stage fails.

    The counts and the rank are established before these stages; describing the mechanisms and states of
    self-stress must never turn a valid model into a crash (a singular or indefinite factor, a
    non-converged SVD, running out of memory on a huge basis).
    """
    try:
        return fn(*args)
    except (np.linalg.LinAlgError, ArithmeticError, MemoryError, ValueError, RuntimeError) as exc:
        notes.append(f"{stage} not done: {type(exc).__name__}: {exc}")
        return None


__all__ = [
    "DENSE_EIGEN_LIMIT",
    "DESCRIBE_LIMIT",
    "EXACT_DOF_LIMIT",
    "EXACT_UNSTABLE_LIMIT",
    "ZERO_EIGEN_RELATIVE",
    "ZERO_MODE_LIMIT",
    "Mechanism",
    "SelfStress",
    "StabilityReport",
    "Trap",
    "analyse",
]
