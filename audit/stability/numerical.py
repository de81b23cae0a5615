"""Geometry-only matrices (unit EA/L) and the numerical null space of G = A Aᵀ (dense or shift-invert)."""

from __future__ import annotations

import math

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp

from audit import linsolve, stiffness
from audit.model import FloatArray, IntArray, Model
from audit.stability.limits import SUBSPACE_STEPS, ZERO_MODE_ENTRIES, ZERO_MODE_LIMIT
from audit.stability.prechecks import Constraints


def gram(model: Model, cons: Constraints, extra_node: IntArray, extra_dir: FloatArray) -> sp.csr_matrix:
    """G = A Aᵀ with unit member columns and unit reaction columns (plus virtual ones): the geometry-only
    stiffness with unit EA/L, whose null space is exactly the mechanism space."""
    from dataclasses import replace

    node = np.concatenate([cons.node, extra_node]).astype(np.int64)
    dirs = np.vstack([cons.dirs, extra_dir.reshape(-1, model.dim)])
    ghost = replace(model, spring_node=node, spring_dir=dirs, spring_k=np.ones(node.size))
    return stiffness.assemble(ghost, member_stiffness=np.ones(model.n_members), springs=True)


def equilibrium_matrix(model: Model, cons: Constraints) -> sp.csr_matrix:
    """A (d·j, m + r) with unit member and reaction columns."""
    Bt = stiffness.compatibility_matrix(model).T.tocsc()
    d = model.dim
    rows = (cons.node[:, None] * d + np.arange(d)).ravel()
    cols = np.repeat(np.arange(cons.node.size), d)
    C = sp.csc_matrix((cons.dirs.ravel(), (rows, cols)), shape=(model.n_dofs, cons.node.size))
    return sp.hstack([Bt, C]).tocsr()


def zero_modes(
    G: sp.csr_matrix,
    dense_limit: int,
    zero_relative: float,
    at_least: int = 0,
    limit: int = ZERO_MODE_LIMIT,
) -> tuple[FloatArray, float, float, bool, str]:
    """(basis (n, z) of the numerical null space of PSD G, largest zero eigenvalue, smallest non-zero one,
    capped flag, backend) by dense eigh or by shift-invert subspace iteration with an SPD factor of G + σI.

    Eigenvalues below ``zero_relative`` · ‖G‖∞ count as zero; G is decomposed densely up to order
    ``dense_limit`` (the caller passes the package's ``ZERO_EIGEN_RELATIVE`` and ``DENSE_EIGEN_LIMIT``).

    Above it, a block X of p orthonormal columns is iterated, X ← orth((G + σI)⁻¹ X) with σ = 10⁻⁸ ‖G‖∞,
    with a Rayleigh-Ritz step (eigenvalues θ of Xᵀ G X) after each solve.  A block method finds a null
    space of any multiplicity, where a single-vector Lanczos run sees one copy of a repeated eigenvalue
    and the rest only through round-off (Saad, *Numerical Methods for Large Eigenvalue Problems*, 2nd ed.,
    SIAM 2011, the chapters on subspace iteration and on Lanczos; recalled from memory).  By Cauchy
    interlacing the k-th smallest θ is at least the k-th smallest eigenvalue of G (Parlett, *The Symmetric
    Eigenvalue Problem*, SIAM 1998; recalled from memory), so the number of θ below the threshold never
    exceeds the true number of zero eigenvalues: the count can only be short.  Once settled with fewer
    zero θ than columns it is complete (every null direction is amplified 1/σ against at most
    1/(λ + σ) for the rest); a full block is widened.  The block starts with max(16, ``at_least`` + 8)
    columns (the caller passes the count that Calladine's rule guarantees, d·j − m − r) and is doubled
    while every θ is zero, up to ``limit`` + 1 columns (and :data:`ZERO_MODE_ENTRIES` entries); a search
    that stops with a full block, or whose count did not settle within :data:`SUBSPACE_STEPS` solves, is
    returned as capped (a lower bound).  The "smallest non-zero" value is then the first non-zero θ, an
    upper estimate of the smallest non-zero eigenvalue.
    """
    n = G.shape[0]
    norm = gram_norm(G)
    tol = zero_relative * norm
    if n <= dense_limit:
        w, v = np.linalg.eigh(G.toarray())
        z = w < tol
        below = float(w[z].max()) if z.any() else 0.0
        above = float(w[~z].min()) if (~z).any() else math.inf
        return v[:, z], below, above, False, "dense eigh"
    sigma = 1.0e-8 * norm
    factor = linsolve.factorize((G + sigma * sp.eye(n, format="csr")).tocsr())
    cap = max(1, min(limit, n, max(16, ZERO_MODE_ENTRIES // n)))
    p = min(n, max(16, at_least + 8), cap + 1)
    # a fixed seed: a random start block otherwise changes the named basis from run to run
    rng = np.random.default_rng(20261201)
    X = _orth(rng.standard_normal((n, p)))
    while True:
        Y, theta, settled = _subspace_iteration(G, factor, X, tol)
        nz = int(np.sum(theta < tol))
        if nz < p or p > cap:
            break
        # every Ritz value is zero: the block may be too small for the null space; widen it
        grow = min(n, 2 * p, cap + 1)
        if grow <= p:
            break
        X = _orth(np.hstack([Y, rng.standard_normal((n, grow - p))]))
        p = grow
    capped = nz >= p or not settled
    below = float(theta[:nz].max()) if nz else 0.0
    above = float(theta[nz]) if nz < theta.size else math.inf
    return Y[:, :nz], below, above, capped, f"shift-invert subspace iteration, block of {p} ({factor.backend})"


def _subspace_iteration(
    G: sp.csr_matrix, factor: linsolve.Factor, X: FloatArray, tol: float
) -> tuple[FloatArray, FloatArray, bool]:
    """(Ritz vectors, ascending Ritz values, settled) of the block X after shift-invert steps.

    Stops once the number of Ritz values below ``tol`` is the same after three successive steps, or after
    :data:`SUBSPACE_STEPS` solves (then ``settled`` is False).  A null direction not yet in the block is
    damped relative to the zero modes by σ / (λ + σ) per step (λ the non-zero eigenvalues the block still
    holds), so a count that stands for three steps has stopped growing.
    """
    counts: list[int] = []
    Y, theta = X, np.zeros(X.shape[1])
    for _step in range(SUBSPACE_STEPS):
        X = _orth(factor.solve(X))
        GX = np.asarray(G @ X)
        H = X.T @ GX
        theta, V = np.linalg.eigh((H + H.T) / 2)
        Y = X @ V
        counts.append(int(np.sum(theta < tol)))
        if len(counts) >= 3 and counts[-1] == counts[-2] == counts[-3]:
            return Y, theta, True
        X = Y
    return Y, theta, False


def _orth(X: FloatArray) -> FloatArray:
    """Orthonormal basis of the columns of the tall block X (Householder QR, LAPACK on a Fortran copy)."""
    return np.asarray(sla.qr(np.asfortranarray(X), mode="economic", overwrite_a=True, check_finite=False)[0])


def gram_norm(G: sp.csr_matrix) -> float:
    """‖G‖∞ (1 for an empty matrix): the scale of the numerical zero threshold."""
    return float(abs(G).sum(axis=1).max()) if G.nnz else 1.0
