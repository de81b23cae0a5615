"""The rank of the equilibrium matrix and a mechanism basis: exact, from the factor, or numerical.

Three ways, in this order (see the package docstring for the mathematics):

* exact arithmetic (:mod:`audit.stability.exact`) up to the exact limit, unless the modular proof would be too
  slow or a deficient rank is too large for the exact null space;
* the successful SPD factorisation of the restrained K as evidence of no mechanism, when the pre-checks found
  none;
* the numerical null space of the geometry-only Gram matrix (:mod:`audit.stability.numerical`), deficient
  joints restrained virtually first.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from audit import linsolve
from audit.model import FloatArray, Model
from audit.solve import SINGULAR_CONDITION
from audit.stability.exact import exact_nullspace_T, exact_rows, full_rank_mod_p
from audit.stability.limits import EXACT_UNSTABLE_LIMIT, EXACT_WORK_LIMIT, MODULUS, ZERO_MODE_LIMIT
from audit.stability.numerical import gram, gram_norm, zero_modes
from audit.stability.prechecks import Constraints, Local


@dataclass(frozen=True)
class Rank:
    """What :func:`establish_rank` found, and how."""

    rank: int
    basis: FloatArray  #: (d·j, d·j − rank) mechanism basis
    exact: bool  #: the exact path ran (the self-stress basis may then be exact too)
    proof: str  #: "exact" or "numerical"
    method: str  #: how the rank was established, in words
    evidence: str  #: the numbers behind a numerical rank
    threshold: float | None  #: the numerical zero threshold used (relative), None when exact
    #: the numerical search stopped before finding every zero mode: ``rank`` is an upper bound, the
    #: mechanism count d·j − rank a lower bound (``basis`` may have fewer columns than that count)
    lower_bound_only: bool
    notes: tuple[str, ...]


def establish_rank(
    model: Model,
    cons: Constraints,
    factor: linsolve.Factor | None,
    local: list[Local],
    n_rigid: int,
    *,
    condition: float | None,
    method: str,
    exact_limit: int,
    dense_limit: int,
    zero_relative: float,
    zero_limit: int = ZERO_MODE_LIMIT,
) -> Rank:
    """Rank of A = [Bᵀ | C] and a basis of the null space of Aᵀ (the mechanisms).

    Parameters
    ----------
    local, n_rigid
        The pre-checks: joints that lack a direction, and the number of free rigid-body motions (either
        rules out a full rank, so the modular proof and the factor evidence are skipped).
    condition, method, exact_limit
        As for :func:`audit.stability.analyse`.
    dense_limit, zero_relative, zero_limit
        The numerical path's dense-decomposition order, relative zero threshold and the most zero modes its
        sparse search looks for.

    Notes
    -----
    A numerical count is never below what Calladine's rule s − M = m + r − d·j guarantees with s ≥ 0
    (Pellegrino & Calladine 1986): M ≥ d·j − m − r, and M is at least the free rigid-body motions and the
    missing joint directions the pre-checks found.  A search that finds fewer (capped, or not settled)
    reports the larger number as a lower bound (``lower_bound_only``), the rank then an upper bound.
    """
    d, j = model.dim, model.n_nodes
    nd = model.n_dofs
    notes: list[str] = []
    use_exact = method == "exact" or (method == "auto" and nd <= exact_limit)
    lower_bound = False
    threshold: float | None = None
    M_basis: FloatArray | None = None
    full = None
    if use_exact:
        rows, _ = exact_rows(model, cons)
        work = math.inf if method == "exact" else EXACT_WORK_LIMIT
        full = full_rank_mod_p(nd, rows, work) if not local and n_rigid == 0 else False
        if len(model.coords_text) != j:
            notes.append("some coordinates had no decimal text: their float values were used exactly")
        if isinstance(full, str):
            use_exact = False
            notes.append(f"exact proof not attempted: {full}")
            full = None
        elif not full and nd > EXACT_UNSTABLE_LIMIT and method != "exact":
            use_exact = False
            notes.append(
                f"no exact full-rank proof; above {EXACT_UNSTABLE_LIMIT} dofs the null space is found numerically"
            )
    if use_exact:
        proof = "exact"
        evidence = "exact arithmetic on the input's decimal text"
        if full:
            rank, M_basis = nd, np.zeros((nd, 0))
            how = f"exact: the Gram matrix of the integer equilibrium matrix has full rank modulo {MODULUS}"
        else:
            rank, M_basis = exact_nullspace_T(nd, rows)
            how = "exact rational rank of the equilibrium matrix (python-flint integer null space of Aᵀ)"
    elif factor is not None and not local and n_rigid == 0 and full is not False:
        rank, proof = nd, "numerical"
        cond = "" if condition is None or not np.isfinite(condition) else f" {condition:.3g}"
        how = "the SPD factorisation of the restrained stiffness succeeded"
        evidence = (
            f"factor ({factor.backend}) of the restrained K accepted: scaled condition estimate{cond} "
            f"<= {SINGULAR_CONDITION:.0e}; no joint lacks a direction and every part is supported"
        )
        threshold = 1.0 / SINGULAR_CONDITION
        M_basis = np.zeros((nd, 0))
    else:
        # numerical null space of the geometry-only Gram matrix, deficient joints restrained virtually
        proof = "numerical"
        vnode = np.array([loc.node for loc in local], dtype=np.int64)
        vdir = np.array([loc.direction for loc in local]).reshape(-1, d)
        G = gram(model, cons, vnode, vdir)
        # Calladine's rule with s >= 0: at least d·j − m − r mechanisms, whatever the geometry
        guaranteed = max(nd - model.n_members - int(cons.node.size), n_rigid, len(local))
        Z, below, above, capped, backend = zero_modes(
            G, dense_limit, zero_relative, at_least=max(0, guaranteed - len(local)), limit=zero_limit
        )
        L = np.zeros((nd, len(local)))
        for i, loc in enumerate(local):
            L[loc.node * d : (loc.node + 1) * d, i] = loc.direction
        M_basis = np.hstack([L, Z])
        found_modes = M_basis.shape[1]
        lower_bound = capped or found_modes < guaranteed
        rank = nd - max(found_modes, guaranteed)
        threshold = zero_relative
        gap = "no zero eigenvalue" if Z.shape[1] == 0 else f"largest zero eigenvalue {below / gram_norm(G):.2e}"
        how = f"geometry-only Gram matrix A Aᵀ (unit EA/L), {backend}; {len(local)} deficient joint directions first"
        nonzero = (
            f"smallest non-zero{' Ritz value' if 'subspace' in backend else ''} {above / gram_norm(G):.2e}"
            if math.isfinite(above)
            else "no non-zero eigenvalue among those computed"
        )
        evidence = f"{gap}, {nonzero} (relative to ‖G‖∞), threshold {threshold:.0e}"
        if lower_bound:
            stop = "the search stopped with its block full" if capped else "the search settled"
            evidence += (
                f"; {stop} at {found_modes} zero modes, and Calladine's rule (s ≥ 0) guarantees at least "
                f"{guaranteed}: the mechanism count is a lower bound and the rank an upper bound"
            )
        if factor is not None:
            notes.append("the restrained stiffness was factorised although the pre-checks found a mechanism")
    return Rank(
        rank=rank,
        basis=M_basis,
        exact=use_exact,
        proof=proof,
        method=how,
        evidence=evidence,
        threshold=threshold,
        lower_bound_only=lower_bound,
        notes=tuple(notes),
    )
