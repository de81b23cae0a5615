"""Geometry-only matrices (unit EA/L) and the numerical null space of G = A Aᵀ (dense or shift-invert)."""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from audit import linsolve, stiffness
from audit.model import FloatArray, IntArray, Model
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


def zero_modes(G: sp.csr_matrix, dense_limit: int, zero_relative: float) -> tuple[FloatArray, float, float, bool, str]:
    """(basis (n, z) of the numerical null space of PSD G, largest zero eigenvalue, smallest non-zero one,
    lower-bound flag, backend) by dense eigh or shift-invert Lanczos with an SPD factor of G + |σ| I.

    Eigenvalues below ``zero_relative`` · ‖G‖∞ count as zero; G is decomposed densely up to order
    ``dense_limit`` (the caller passes the package's ``ZERO_EIGEN_RELATIVE`` and ``DENSE_EIGEN_LIMIT``).
    """
    n = G.shape[0]
    norm = float(abs(G).sum(axis=1).max()) if G.nnz else 1.0
    tol = zero_relative * norm
    if n <= dense_limit:
        w, v = np.linalg.eigh(G.toarray())
        z = w < tol
        below = float(w[z].max()) if z.any() else 0.0
        above = float(w[~z].min()) if (~z).any() else math.inf
        return v[:, z], below, above, False, "dense eigh"
    sigma = -1.0e-8 * norm
    factor = linsolve.factorize((G - sigma * sp.eye(n, format="csr")).tocsr())
    op = spla.LinearOperator((n, n), matvec=factor.solve, dtype=np.float64)
    k = min(2, n - 2)
    while True:
        # zero modes are the dominant, well separated eigenvalues of (G − σI)⁻¹ and converge first; the
        # loose Lanczos tolerance only affects the non-zero Ritz values, and each zero mode is confirmed by
        # its own Rayleigh quotient vᵀ G v below
        # a fixed start vector: ARPACK otherwise starts from a random one and the named basis changes run to run
        v0 = np.random.default_rng(20261201).standard_normal(n)
        w, v = spla.eigsh(
            G, k=k, sigma=sigma, which="LM", OPinv=op, tol=1e-8, ncv=min(n - 1, max(2 * k + 1, 10)), v0=v0
        )
        order = np.argsort(w)
        w, v = w[order], v[:, order]
        w = np.where(w < tol, np.einsum("ik,ik->k", v, np.asarray(G @ v)), w)
        z = w < tol
        if not z.all() or k >= min(n - 2, 512):
            break
        k = min(4 * k, n - 2, 512)
    below = float(w[z].max()) if z.any() else 0.0
    above = float(w[~z].min()) if (~z).any() else math.inf
    return v[:, z], below, above, bool(z.all()), f"shift-invert Lanczos ({factor.backend})"


def gram_norm(G: sp.csr_matrix) -> float:
    """‖G‖∞ (1 for an empty matrix): the scale of the numerical zero threshold."""
    return float(abs(G).sum(axis=1).max()) if G.nnz else 1.0
