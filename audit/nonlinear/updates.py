"""Solves with the stiffness of an active structure, reusing factorisations by low-rank updates.

The reduced stiffness of the structure with member weights ``ω`` (1 for an
active member, 0 for a slack one, a small μ for a regularised slack one) is

    K(ω) = B_rᵀ diag(k·ω) B_r + K_s,      B_r = B T,

so it differs from the factored stiffness of a base structure ``ω₀`` by a
sum of rank-one terms, one per member whose weight changed:
``K(ω) = K(ω₀) + U D Uᵀ`` with ``U`` those members' rows of ``B_r``
(transposed) and ``D = diag(k·(ω − ω₀))``.  The Sherman–Morrison–Woodbury
identity (Golub & Van Loan, *Matrix Computations*, 4th ed., §2.1.4)

    K(ω)⁻¹ r = y − Z (D⁻¹ + Uᵀ Z)⁻¹ Uᵀ y,    y = K(ω₀)⁻¹ r,  Z = K(ω₀)⁻¹ U,

answers a solve with one solve of the base factor, once ``Z`` is known (one
solve per changed member, cached per base).  The capacitance matrix
``C = D⁻¹ + UᵀZ`` is singular exactly when ``K(ω)`` is; its null vector ``q``
gives the mechanism ``Z q`` of the active structure.  Every update is
followed by one step of iterative refinement against ``K(ω)`` itself, and a
residual that stays large sends the solve to a fresh factorisation.

Two bases are kept: the structure as built (the engine's factor, always) and
the last structure factorised here.  A solve whose update would need more
than :data:`REFACTOR_COLUMNS` new columns of ``Z``, or more than
:func:`max_rank` columns in all (memory: ``n·rank`` floats), factorises the
new structure instead and makes it the second base.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from audit import linsolve
from audit.model import FloatArray

#: a solve needing more new columns of Z than this factorises instead (a column costs one solve)
REFACTOR_COLUMNS = 48
#: the capacitance matrix (scaled so that D⁻¹ is ±I) counts as singular beyond this condition
CAPACITANCE_CONDITION = 1.0e12
#: the largest relative residual accepted after one refinement step of an updated solve
UPDATE_RESIDUAL = 1.0e-9


def max_rank(n: int) -> int:
    """The largest update kept: Z is n × rank floats, at most about 160 MB."""
    return int(max(8, min(256, 2.0e7 // max(n, 1))))


class SingularError(Exception):
    """The active structure's stiffness is singular; ``direction`` is a mechanism (reduced dofs) when known."""

    def __init__(self, direction: FloatArray | None) -> None:
        super().__init__("singular active structure")
        self.direction = direction


@dataclass
class _Base:
    weights: FloatArray  #: (m,) member weights of the factored structure
    factor: linsolve.Factor
    columns: dict[int, FloatArray] = field(default_factory=dict)  #: member -> K(ω₀)⁻¹ U_i


@dataclass
class ActiveSolver:
    """Solves K(ω) x = r for changing member weights ω (see the module docstring)."""

    Br: sp.csr_matrix  #: (m, n) reduced compatibility matrix B T
    k: FloatArray  #: (m,) EA/L
    Ks: sp.csr_matrix  #: (n, n) reduced spring stiffness
    full: _Base
    backend: str = "auto"
    extra: _Base | None = None
    factorisations: int = 0
    updates: int = 0
    largest_rank: int = 0

    @classmethod
    def build(cls, Br: sp.csr_matrix, k: FloatArray, Ks: sp.csr_matrix, factor: linsolve.Factor, backend: str):
        return cls(Br=Br, k=k, Ks=Ks, full=_Base(np.ones(Br.shape[0]), factor), backend=backend)

    @property
    def n(self) -> int:
        return int(self.Br.shape[1])

    def matvec(self, weights: FloatArray, x: FloatArray) -> FloatArray:
        """K(ω) x."""
        return self.Br.T @ (self.k * weights * (self.Br @ x)) + self.Ks @ x

    def solve(self, weights: FloatArray, r: FloatArray) -> FloatArray:
        """K(ω)⁻¹ r; raises :class:`SingularError` when the structure ω is a mechanism."""
        bases = [b for b in (self.full, self.extra) if b is not None]
        changed = [np.flatnonzero(weights != b.weights) for b in bases]
        j = int(np.argmin([c.size for c in changed]))
        base, idx = bases[j], changed[j]
        if idx.size == 0:
            return base.factor.solve(r)
        new = sum(1 for i in idx.tolist() if i not in base.columns)
        if new <= REFACTOR_COLUMNS and idx.size <= max_rank(self.n):
            x = self._updated(base, idx, weights, r)
            if x is not None:
                return x
        return self._refactor(weights, r)

    def _columns(self, base: _Base, idx: np.ndarray) -> FloatArray:
        missing = [i for i in idx.tolist() if i not in base.columns]
        if missing:
            U = self.Br[missing].T.toarray()
            Z = base.factor.solve(U if len(missing) > 1 else U[:, 0]).reshape(self.n, len(missing))
            for c, i in enumerate(missing):
                base.columns[i] = Z[:, c]
        return np.stack([base.columns[i] for i in idx.tolist()], axis=1)

    def _capacitance(self, base: _Base, idx: np.ndarray, weights: FloatArray) -> tuple[FloatArray, FloatArray]:
        Z = self._columns(base, idx)
        U = self.Br[idx]
        d = self.k[idx] * (weights[idx] - base.weights[idx])
        C = np.diag(1.0 / d) + np.asarray(U @ Z)
        return C, Z

    def _updated(self, base: _Base, idx: np.ndarray, weights: FloatArray, r: FloatArray) -> FloatArray | None:
        C, Z = self._capacitance(base, idx, weights)
        d = np.abs(self.k[idx] * (weights[idx] - base.weights[idx]))
        s = np.sqrt(d)
        sv = np.linalg.svd(C * s[:, None] * s[None, :], compute_uv=False)
        # scaled, D⁻¹ is ±I: a singular value far below max(1, the largest) means K(ω) is singular
        if not np.all(np.isfinite(sv)) or sv[-1] <= max(1.0, sv[0]) / CAPACITANCE_CONDITION:
            raise SingularError(self._null_direction(C, Z))
        U = self.Br[idx]

        def apply(rhs: FloatArray) -> FloatArray:
            y = base.factor.solve(rhs)
            return y - Z @ np.linalg.solve(C, U @ y)

        x = apply(r)
        res = r - self.matvec(weights, x)
        x = x + apply(res)
        res = r - self.matvec(weights, x)
        scale = float(np.abs(r).max()) or 1.0
        self.updates += 1
        self.largest_rank = max(self.largest_rank, int(idx.size))
        if float(np.abs(res).max()) > UPDATE_RESIDUAL * scale:
            return None
        return x

    @staticmethod
    def _null_direction(C: FloatArray, Z: FloatArray) -> FloatArray:
        _u, _s, vt = np.linalg.svd(C)
        return Z @ vt[-1]

    def _refactor(self, weights: FloatArray, r: FloatArray) -> FloatArray:
        from audit.solve import SINGULAR_CONDITION, condition_estimate

        K = (self.Br.T @ sp.diags(self.k * weights) @ self.Br + self.Ks).tocsr()
        self.factorisations += 1
        diag = K.diagonal()
        try:
            if np.any(diag <= 0.0):
                raise np.linalg.LinAlgError("a free degree of freedom has no stiffness")
            factor = linsolve.factorize(K, self.backend)
            cond = condition_estimate(K, factor)
        except np.linalg.LinAlgError:
            raise SingularError(self.mechanism_of(weights)) from None
        if not np.isfinite(cond) or cond > SINGULAR_CONDITION:
            raise SingularError(self.mechanism_of(weights))
        self.extra = _Base(weights.copy(), factor)
        return factor.solve(r)

    def mechanism_of(self, weights: FloatArray) -> FloatArray | None:
        """A mechanism of the structure ω from an update of the structure as built, when small enough."""
        idx = np.flatnonzero(weights != self.full.weights)
        if idx.size == 0 or idx.size > max_rank(self.n):
            return None
        C, Z = self._capacitance(self.full, idx, weights)
        return self._null_direction(C, Z)
