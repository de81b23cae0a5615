"""Small dense linear algebra: column space, null space and a sign-fixed unit vector."""

from __future__ import annotations

import numpy as np

from audit.model import FloatArray
from audit.stability.limits import SMALL_RANK_TOLERANCE


def orth(M: FloatArray, tol: float = SMALL_RANK_TOLERANCE) -> FloatArray:
    """Orthonormal basis of the column space of M (rank decided relative to the largest singular value)."""
    if M.size == 0 or M.shape[1] == 0:
        return np.zeros((M.shape[0], 0))
    u, s, _ = np.linalg.svd(M, full_matrices=False)
    if s.size == 0 or s[0] == 0:
        return np.zeros((M.shape[0], 0))
    return u[:, s > tol * s[0]]


def null_space(M: FloatArray, ncols: int, tol: float = SMALL_RANK_TOLERANCE) -> FloatArray:
    """Orthonormal basis (ncols, k) of the null space of the small dense matrix M (any number of rows)."""
    if M.size == 0:
        return np.eye(ncols)
    if M.shape[0] > ncols:
        M = np.asarray(np.linalg.qr(M, mode="r"))  # same null space, ncols rows
    _, s, vt = np.linalg.svd(M)
    top = s[0] if s.size else 0.0
    rank = int(np.sum(s > tol * max(top, 1e-300))) if top > 0 else 0
    return vt[rank:].T.copy()


def canonical(v: FloatArray) -> FloatArray:
    """Sign-fixed unit vector (largest component positive), tiny components cleaned."""
    v = np.where(np.abs(v) < 1e-13, 0.0, v)
    k = int(np.argmax(np.abs(v)))
    return v / np.linalg.norm(v) * (1.0 if v[k] > 0 else -1.0)
