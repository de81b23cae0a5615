"""States of self-stress: a readable basis (exact when small, dense float otherwise) and its naming."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import scipy.linalg as sla

from audit.model import FloatArray, Model
from audit.stability.exact import exact_rows, exact_self_stress, int_row
from audit.stability.limits import DENSE_SELF_STRESS, DESCRIBE_LIMIT, EXACT_SELF_STRESS_COLUMNS
from audit.stability.numerical import equilibrium_matrix
from audit.stability.prechecks import Constraints
from audit.stability.report import SelfStress


def self_stress_basis(model: Model, cons: Constraints, s: int, exact: bool) -> FloatArray | None:
    """(m + r, s) basis of member tensions and reactions of the states of self-stress, or None if too big."""
    ncols = model.n_members + cons.node.size
    if s == 0 or s > DESCRIBE_LIMIT * 5:
        return None
    if exact and ncols <= EXACT_SELF_STRESS_COLUMNS:
        rows, _ = exact_rows(model, cons)
        q = exact_self_stress(model.n_dofs, rows, s)
        if q is not None:
            # unnormalised columns carry force densities t/L (members) and ρ/|raw| (reactions)
            scale = np.concatenate([model.lengths(), _raw_norms(model, cons)])
            return _sparse_basis(q * scale[:, None])
    if ncols * model.n_dofs > DENSE_SELF_STRESS:
        return None
    A = equilibrium_matrix(model, cons).toarray()
    vt = np.linalg.svd(A)[2]
    null = vt[A.shape[1] - s :].T if s else np.zeros((ncols, 0))
    return _sparse_basis(null)


def _raw_norms(model: Model, cons: Constraints) -> FloatArray:
    """|raw direction| of each reaction's exact column (its decimal text scaled to integers)."""
    out = np.ones(cons.node.size)
    for i, text in enumerate(cons.texts):
        raw = [Fraction(t) for t in text] if text is not None and len(text) == model.dim else None
        if raw is None:
            raw = [Fraction(float(c)) for c in cons.dirs[i]]
        v = int_row(raw)
        # scaled by a power of two so that integers beyond float range still give the (relative) norm
        shift = max(max((abs(c).bit_length() for c in v), default=0) - 900, 0)
        norm = math.sqrt(sum(float(c >> shift if c >= 0 else -((-c) >> shift)) ** 2 for c in v)) or 1.0
        try:
            out[i] = math.ldexp(norm, shift)
        except OverflowError:  # beyond float range: only the direction matters for naming the state
            out[i] = norm
    return out


def _sparse_basis(N: FloatArray) -> FloatArray:
    """The same column space, in a reduced echelon form (1 at a pivot row, 0 at the others): sparser, readable."""
    if N.shape[1] == 0:
        return N
    _, _, piv = sla.qr(N.T, pivoting=True, mode="economic")
    P = piv[: N.shape[1]]
    out = N @ np.linalg.inv(N[P])
    out[np.abs(out) < 1e-10 * np.abs(out).max(axis=0)] = 0.0
    return out / np.abs(out).max(axis=0)


def name_self_stress(model: Model, cons: Constraints, S: FloatArray) -> tuple[SelfStress, ...]:
    """Members (largest force first) and reactions of each state of self-stress in the basis S."""
    m = model.n_members
    out: list[SelfStress] = []
    for k in range(min(S.shape[1], DESCRIBE_LIMIT)):
        col = S[:, k]
        top = float(np.abs(col).max()) or 1.0
        col = col / top
        mem = np.flatnonzero(np.abs(col[:m]) > 1e-9)
        mem = mem[np.argsort(-np.abs(col[mem]), kind="stable")]
        rea = np.flatnonzero(np.abs(col[m:]) > 1e-9)
        out.append(
            SelfStress(
                members=tuple(model.member_ids[i] for i in mem.tolist()),
                forces=tuple(round(float(col[i]), 12) + 0.0 for i in mem.tolist()),
                reactions=tuple(cons.labels[i] for i in rea.tolist()),
            )
        )
    return tuple(out)
