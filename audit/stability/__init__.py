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
  neither hides nor fakes a mechanism) by shift-invert Lanczos with an SPD
  factor of ``G + |σ| I``, eigenvalues below :data:`ZERO_EIGEN_RELATIVE` · ‖G‖∞
  counted as zero and the gap to the first non-zero one reported.

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

from typing import Any

import numpy as np

from audit import linsolve
from audit.model import Model
from audit.solve import System
from audit.stability.first_order import first_order_test, with_order
from audit.stability.limits import (
    DENSE_EIGEN_LIMIT,
    DESCRIBE_LIMIT,
    EXACT_DOF_LIMIT,
    EXACT_UNSTABLE_LIMIT,
    ZERO_EIGEN_RELATIVE,
)
from audit.stability.naming import name_mechanisms
from audit.stability.prechecks import connected_parts, constraints, local_deficiencies
from audit.stability.rank import establish_rank
from audit.stability.report import Mechanism, SelfStress, StabilityReport, Trap
from audit.stability.rigid import rigid_motions
from audit.stability.self_stress import name_self_stress, self_stress_basis
from audit.stability.traps import find_traps


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
    ``DENSE_EIGEN_LIMIT`` and ``ZERO_EIGEN_RELATIVE`` are read from this package at call time.
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
    local = local_deficiencies(model, cons)

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
    )
    rank, M_basis, proof = found.rank, found.basis, found.proof
    mech = nd - rank
    s = m + r - rank
    n_rigid = min(n_rigid, mech)

    # self-stress basis (for naming and the first-order test), when small enough
    S_basis = self_stress_basis(model, cons, s, found.exact)
    mechanisms, internal_basis = name_mechanisms(model, rigid, local, M_basis, labels, mech - n_rigid)
    order: dict[str, Any] = {}
    if mech > n_rigid:
        order = first_order_test(model, cons, M_basis, internal_basis, s, proof)
        verdicts = order.pop("verdicts", [])
        it = iter(verdicts)
        mechanisms = tuple(
            with_order(mk, next(it, order["result"])) if mk.kind == "internal" else mk for mk in mechanisms
        )
    traps = find_traps(model, cons, rigid, local, mechanisms, maxwell, mech, s, labels)
    stresses = name_self_stress(model, cons, S_basis) if S_basis is not None else ()
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
        proof=proof,
        method=found.method,
        evidence=found.evidence,
        threshold=found.threshold,
        lower_bound_only=found.lower_bound_only,
        components=n_parts,
        mechanism_list=mechanisms,
        self_stress_list=stresses,
        traps=traps,
        order_test=order,
        notes=found.notes,
    )


__all__ = [
    "DENSE_EIGEN_LIMIT",
    "DESCRIBE_LIMIT",
    "EXACT_DOF_LIMIT",
    "EXACT_UNSTABLE_LIMIT",
    "ZERO_EIGEN_RELATIVE",
    "Mechanism",
    "SelfStress",
    "StabilityReport",
    "Trap",
    "analyse",
]
