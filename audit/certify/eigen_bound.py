"""Proven lower bounds on the smallest eigenvalue of a symmetric float matrix (positive definiteness).

Method (Rump 2006; Higham 2002):

* S. M. Rump, "Verification of positive definiteness", *BIT Numerical
  Mathematics* 46 (2006) 433–452: if a floating-point Cholesky (or LDLᵀ)
  factorisation of ``A − c·I`` runs to completion, then
  ``A − c·I + ΔA = L Lᵀ ⪰ 0`` for a symmetric ``ΔA`` bounded by the
  rounding errors of the factorisation, hence ``λ_min(A) ≥ c − ‖ΔA‖₂``.
* N. J. Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed.
  (SIAM 2002): Theorem 10.3 (Cholesky: ``R̃ᵀR̃ = A + ΔA``,
  ``|ΔA| ≤ γ_{k+1}|R̃ᵀ||R̃|``) and Theorem 9.3 (LU without pivoting:
  ``L̃Ũ = A + ΔA``, ``|ΔA| ≤ γ_k |L̃||Ũ|``), with ``γ_k = k·u/(1 − k·u)``,
  ``u = 2⁻⁵³``, ``k`` the longest inner product.  Both hold for any order of
  evaluating the inner products (blocked, supernodal, left or right
  looking).  §6.3: ``‖B‖₂ ≤ ‖B‖_∞`` for symmetric B and ``‖B‖₂² ≤ ‖B‖₁‖B‖_∞``.

Three factorisations are used:

* dense (n ≤ :data:`DENSE_LIMIT`): LAPACK ``potrf`` through numpy, with the
  a-posteriori bound ``‖ΔA‖₂ ≤ γ_{n+1}·‖|L̃||L̃|ᵀ‖_∞``;
* sparse, when cvxopt is installed: CHOLMOD's supernodal Cholesky, with the
  same bound (k = the longest row of L̃); measured 2–4× faster than SuperLU;
* sparse otherwise: SuperLU with a symmetric ordering and no row interchanges
  (checked: ``perm_r == perm_c``).  SuperLU does not return a symmetric
  factor, so the certificate is built from ``M = L̃ D̃ L̃ᵀ`` with
  ``D̃ = diag(Ũ) > 0`` (symmetric positive definite by construction) and
  ``M − PÃPᵀ = L̃(D̃L̃ᵀ − Ũ) + (L̃Ũ − PÃPᵀ)``, whose ∞-norm is bounded
  from the factors' entries with sparse matrix–vector products.

Every floating-point evaluation of a bound is a sum of non-negative terms;
its relative rounding error is below ``γ_{2k+4}``, covered by the explicit
safety factor :func:`round_up`.  What a certificate proves: the
*floating-point matrix given* has ``λ_min ≥ lambda_lo``.  The caller adds the
(separately bounded) distance between that matrix and the exact model's
(:mod:`audit.certify.restrained`).
"""

from __future__ import annotations

from collections.abc import Generator
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from audit.model import FloatArray

if TYPE_CHECKING:
    pass


U = 2.0**-53  #: unit roundoff of IEEE binary64


#: largest n for the dense Cholesky certificate
DENSE_LIMIT = 2500


#: largest n for the sparse certificate by default; above it the certificate is not attempted
SPARSE_LIMIT = 2_000_000


def gamma(k: int) -> float:
    """γ_k = k·u / (1 − k·u) (Higham 2002, eq. 3.8), rounded upward by a relative 1e-12."""
    ku = k * U
    if ku >= 0.5:
        return float("inf")
    return ku / (1.0 - ku) * (1.0 + 1e-12)


def round_up(x: float, terms: int) -> float:
    """An upper bound of a non-negative quantity evaluated in float64 as a sum/product of ``terms`` operations."""
    return float(x) * (1.0 + gamma(2 * terms + 4)) if np.isfinite(x) else float("inf")


@dataclass(frozen=True)
class Certificate:
    """Outcome of one attempt to prove ``λ_min(A) ≥ lambda_lo`` for a float matrix A."""

    lambda_lo: float | None  #: proven lower bound, None when not established
    method: str  #: "dense-cholesky", "sparse-cholesky-cholmod", "sparse-ldlt-superlu", or "none"
    shift: float  #: the shift c of the successful factorisation (nan if none)
    rounding_bound: float  #: the bound on ‖ΔA‖₂ that was subtracted (nan if none)
    attempts: int
    reason: str = ""  #: why not established

    def as_dict(self) -> dict[str, object]:
        return {
            "lambda_lo": self.lambda_lo,
            "method": self.method,
            "shift": json_float(self.shift),
            "rounding_bound": json_float(self.rounding_bound),
            "attempts": self.attempts,
            "reason": self.reason,
        }


def json_float(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None


def _dense_attempt(A: FloatArray, c: float) -> tuple[bool, float]:
    """Cholesky of A − cI in float64; returns (success, bound on ‖ΔA‖₂ incl. the shift's rounding)."""
    n = A.shape[0]
    As = A - c * np.eye(n)
    try:
        L = np.linalg.cholesky(As)
    except np.linalg.LinAlgError:
        return False, float("nan")
    if not np.all(np.isfinite(L)):
        return False, float("nan")
    absL = np.abs(L)
    row = absL @ (absL.T @ np.ones(n))  # ‖|L||L|ᵀ‖_∞ = max row sum
    bound = gamma(n + 1) * round_up(float(row.max()), 2 * n)
    # rounding of the shifted diagonal a_ii − c: |error| ≤ u·|a_ii − c|
    bound += round_up(U * float(np.max(np.abs(np.diag(As)))), 2)
    return True, round_up(bound, 2)


def cholmod_available() -> bool:
    try:
        import cvxopt.cholmod  # noqa: F401
    except Exception:  # pragma: no cover - depends on the machine
        return False
    return True


def _cholmod_attempt(A: sp.csr_matrix, c: float) -> tuple[bool, float, str]:
    """CHOLMOD (cvxopt) supernodal Cholesky of A − cI; returns (success, bound on ‖ΔA‖₂, reason).

    ``P(A − cI)Pᵀ + ΔA = L̃L̃ᵀ`` with ``|ΔA| ≤ γ_{k+1}|L̃||L̃|ᵀ`` (Higham 2002,
    Thm 10.3; supernodal BLAS-3 Cholesky only reorders the inner products),
    k the longest row of L̃; ``‖ΔA‖₂ ≤ ‖|L̃||L̃|ᵀ‖_∞`` needs only L̃, and the
    permutation does not change eigenvalues.
    """
    import cvxopt
    import cvxopt.cholmod as cholmod

    n = A.shape[0]
    As = sp.csr_matrix(A - c * sp.identity(n, format="csr"))
    low = sp.tril(As, format="coo")
    M = cvxopt.spmatrix(low.data, low.row.astype(np.int64), low.col.astype(np.int64), size=(n, n))
    saved = cholmod.options.get("supernodal", 1)
    cholmod.options["supernodal"] = 2
    try:
        F = cholmod.symbolic(M)
        cholmod.numeric(M, F)
    except ArithmeticError:
        return False, float("nan"), "Cholesky of the shifted matrix broke down"
    finally:
        cholmod.options["supernodal"] = saved
    colptr, rowind, vals = cholmod.getfactor(F).CCS
    del F
    L = sp.csc_matrix((np.asarray(vals).ravel(), np.asarray(rowind).ravel(), np.asarray(colptr).ravel()), shape=(n, n))
    if not np.all(np.isfinite(L.data)):
        return False, float("nan"), "the factor has non-finite entries"
    k = int(np.bincount(L.indices, minlength=n).max())
    np.abs(L.data, out=L.data)
    rows = L @ (L.T @ np.ones(n))  # ‖|L||L|ᵀ‖_∞
    bound = gamma(k + 1) * round_up(float(rows.max()), 2 * k)
    bound += U * float(np.max(np.abs(As.diagonal())))  # rounding of the shifted diagonal
    return True, round_up(bound, 2), ""


def _sparse_attempt(A: sp.csr_matrix, c: float) -> tuple[bool, float, str]:
    """SuperLU of A − cI with a symmetric ordering; returns (success, bound on ‖M − (A − cI)‖₂, reason)."""
    n = A.shape[0]
    As = sp.csc_matrix(A - c * sp.identity(n, format="csr"))
    try:
        lu = spla.splu(As, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
    except RuntimeError as exc:
        return False, float("nan"), f"factorisation failed ({exc})"
    if not np.array_equal(lu.perm_r, lu.perm_c):
        return False, float("nan"), "SuperLU interchanged rows: not a symmetric factorisation"
    L = lu.L  # csc: column j of L is row j of Lᵀ; Lᵀ as csr shares L's arrays
    Ur = lu.U.tocsr()
    d = Ur.diagonal()
    if not np.all(d > 0) or not np.all(np.isfinite(d)):
        return False, float("nan"), "a pivot is not positive"
    ones = np.ones(n)
    k = int(np.bincount(L.indices, minlength=n).max())  # longest row of L: bounds every inner product of L̃Ũ
    # W = D̃L̃ᵀ − Ũ (row j of Lᵀ is column j of L); same pattern as Ũ in a symmetric factorisation
    L.sort_indices()
    Ur.sort_indices()
    dlt = L.data * np.repeat(d, np.diff(L.indptr))
    if np.array_equal(L.indptr, Ur.indptr) and np.array_equal(L.indices, Ur.indices):
        w_abs = np.abs(dlt - Ur.data)
        W = sp.csr_matrix((w_abs, Ur.indices, Ur.indptr), shape=(n, n))
    else:
        DLt = sp.csr_matrix((dlt, L.indices, L.indptr), shape=(n, n))
        W = abs(DLt - Ur)
    np.abs(L.data, out=L.data)
    np.abs(Ur.data, out=Ur.data)
    absDLt = sp.csr_matrix((np.abs(dlt), L.indices, L.indptr), shape=(n, n))
    # (1) ‖L̃Ũ − PÃPᵀ‖_∞ ≤ γ_k ‖|L̃||Ũ|‖_∞
    e1 = gamma(k + 1) * round_up(float((L @ (Ur @ ones)).max()), 2 * k)
    # (2) |W_exact| ≤ (1+u)|fl(W)| + 2u|D̃||L̃ᵀ|  (one product, one subtraction each)
    e2 = round_up(float((L @ (W @ ones)).max()), 2 * k) * (1 + U) + 2 * U * round_up(
        float((L @ (absDLt @ ones)).max()), 2 * k
    )
    # (3) rounding of the shifted diagonal
    e3 = U * float(np.max(np.abs(As.diagonal())))
    return True, round_up(e1 + e2 + e3, 4), ""


def lower_eigen_bound(
    A: sp.spmatrix | FloatArray,
    estimate: float,
    *,
    dense_limit: int = DENSE_LIMIT,
    sparse_limit: int = SPARSE_LIMIT,
    max_attempts: int = 5,
    sparse_method: str = "auto",
) -> Certificate:
    """Prove a lower bound on λ_min of the symmetric float matrix A (Rump 2006, Theorem 2.3 in spirit).

    Tries the shifts ``c = 0.9·estimate`` (dense only), ``0.5·estimate``,
    then /8, /64, ... (``estimate`` should be an upper estimate of λ_min,
    e.g. a Ritz value) until the
    floating-point factorisation of ``A − c·I`` succeeds and ``c`` exceeds
    the rounding bound.  Then ``λ_min(A) ≥ c − ‖ΔA‖₂`` (module docstring).
    """
    n = A.shape[0]
    if n == 0:
        return Certificate(None, "none", float("nan"), float("nan"), 0, "empty matrix")
    if not (np.isfinite(estimate) and estimate > 0):
        return Certificate(
            None, "none", float("nan"), float("nan"), 0, "no positive estimate of the smallest eigenvalue"
        )
    if n > max(dense_limit, sparse_limit):
        return Certificate(
            None,
            "none",
            float("nan"),
            float("nan"),
            0,
            f"n = {n} exceeds the size limit {max(dense_limit, sparse_limit)} of the verified factorisation",
        )
    dense = n <= dense_limit
    use_cholmod = not dense and sparse_method in ("auto", "cholmod") and cholmod_available()
    if sparse_method == "cholmod" and not dense and not use_cholmod:
        return Certificate(None, "none", float("nan"), float("nan"), 0, "CHOLMOD (cvxopt) is not installed")
    method = "dense-cholesky" if dense else ("sparse-cholesky-cholmod" if use_cholmod else "sparse-ldlt-superlu")
    Ad = sp.csr_matrix(A).toarray() if dense else None
    # a dense attempt is cheap: try close to the estimate first; a sparse one costs a factorisation
    shifts = [0.9, 0.5] if dense else [0.5]
    shifts += [shifts[-1] / 8.0**i for i in range(1, max_attempts)]
    reason = ""
    for attempt, frac in enumerate(shifts[:max_attempts], start=1):
        c = frac * estimate
        if dense:
            ok, bound = _dense_attempt(np.asarray(Ad, dtype=np.float64), c)
            why = "" if ok else "Cholesky of the shifted matrix broke down"
        elif use_cholmod:
            ok, bound, why = _cholmod_attempt(sp.csr_matrix(A), c)
        else:
            ok, bound, why = _sparse_attempt(sp.csr_matrix(A), c)
        if ok and c > bound:
            lo = (c - bound) * (1.0 - 4 * U)
            return Certificate(float(lo), method, c, bound, attempt)
        reason = why if not ok else f"rounding bound {bound:.3g} exceeds the shift {c:.3g}"
        if not ok and not dense and "rows" in why:
            break
    return Certificate(None, method, float("nan"), float("nan"), max_attempts, reason)


def ritz_extremes(
    apply_a: object, solve_a: object, n: int, *, block: int = 4, steps: int = 4, seed: int = 0
) -> tuple[float, float]:
    """Estimates (λ_min, λ_max) of an SPD operator by block inverse / power iteration and Rayleigh–Ritz.

    Ritz values lie inside [λ_min, λ_max] (Courant–Fischer), so the first is
    an upper estimate of λ_min: a safe starting point for the shift of
    :func:`lower_eigen_bound`.  Higham 2002, §15 uses the same idea for
    condition estimation; this is an estimate, not a bound.  The iteration
    itself is :func:`ritz_chain`; this runs it alone with ``solve_a``.
    """
    chain = ritz_chain(apply_a, n, block=block, steps=steps, seed=seed)
    try:
        rhs = next(chain)
        while True:
            rhs = chain.send(np.asarray(solve_a(rhs)).reshape(rhs.shape))  # type: ignore[operator]
    except StopIteration as stop:
        lo, hi = stop.value
    return lo, hi


def ritz_chain(
    apply_a: object, n: int, *, block: int = 4, steps: int = 4, seed: int = 0
) -> Generator[FloatArray, FloatArray, tuple[float, float]]:
    """:func:`ritz_extremes` as a chain of solves: yields each block to solve with A, is sent A⁻¹ of it.

    So that it can share its solves with other chains (``audit.linsolve.solve_in_lockstep``).
    """
    rng = np.random.default_rng(seed)
    k = min(block, n)
    X = rng.standard_normal((n, k))
    Y = rng.standard_normal((n, k))
    for _ in range(steps):
        solved = yield X
        X, _r = np.linalg.qr(np.asarray(solved).reshape(n, k))
        Y, _r = np.linalg.qr(np.asarray(apply_a(Y)).reshape(n, k))  # type: ignore[operator]
    AX = np.asarray(apply_a(X)).reshape(n, k)  # type: ignore[operator]
    AY = np.asarray(apply_a(Y)).reshape(n, k)  # type: ignore[operator]
    lo = float(np.linalg.eigvalsh(0.5 * (X.T @ AX + AX.T @ X)).min())
    hi = float(np.linalg.eigvalsh(0.5 * (Y.T @ AY + AY.T @ Y)).max())
    return lo, hi


def inf_norm_upper(A: sp.spmatrix) -> float:
    """A rigorous upper bound of ‖A‖_∞ (≥ λ_max for symmetric A, Gershgorin)."""
    a = sp.csr_matrix(A)
    k = int(np.diff(a.indptr).max()) if a.nnz else 1
    return round_up(float(np.asarray(abs(a).sum(axis=1)).max()) if a.nnz else 0.0, k)
