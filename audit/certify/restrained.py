"""λ_lo of the exact restrained stiffness: the float matrix's certificate minus the proven assembly error (Weyl).

The engine's ``K_r`` is assembled in float64 from float data; the exact model
is the one written in the input's decimal texts.  With Σ a power-of-two
scaling of the reduced dofs, ``λ_min(Σ K_r* Σ) ≥ λ_lo(Σ K̃_r Σ) − ‖Σ(K̃_r −
K_r*)Σ‖₂`` (Weyl's inequality; Higham 2002, §6.3 for the norm bounds), the
first term from :func:`audit.certify.eigen_bound.lower_eigen_bound` when the
size policy (:mod:`audit.certify.policy`) lets it run, the second bounded
entrywise (:func:`certify_restrained`).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np
import scipy.sparse as sp

from audit.model import FloatArray

if TYPE_CHECKING:
    from audit.linsolve import Factor
    from audit.solve import System

from .eigen_bound import (
    DENSE_LIMIT,
    SPARSE_LIMIT,
    Certificate,
    U,
    gamma,
    inf_norm_upper,
    lower_eigen_bound,
    ritz_extremes,
    round_up,
)
from .policy import (
    CERTIFICATE_BUDGET,
    CERTIFICATE_FREE_NONZEROS,
    MAX_FACTOR_NONZEROS,
    CertificatePlan,
    certificate_plan,
)


@dataclass(frozen=True)
class AssemblyData:
    """What bounds the distance between the float-assembled and the exact restrained stiffness.

    All arrays describe the *exact* model (from the input's decimal texts)
    and how far the float data the matrix was assembled from lie from it.
    """

    n_nodes: int
    dim: int
    s_idx: np.ndarray  #: (m,) start node of each member
    e_idx: np.ndarray  #: (m,) end node
    lengths: FloatArray  #: (m,) member lengths (float, for relative errors)
    coord_dev: FloatArray  #: (n_nodes,) bound on ‖float coordinates − exact‖₂
    rel_ea: FloatArray  #: (m,) bound on the relative error of the float E·A
    k_member: FloatArray  #: (m,) EA/L (an upper bound of the exact value)
    sp_node: np.ndarray  #: (n_springs,)
    sp_abs: FloatArray  #: (n_springs,) bound on each float spring matrix's entry errors
    rn: np.ndarray  #: (n_rn,) restrained nodes
    Z: np.ndarray  #: (n_rn, dim, dim) integer bases of the exact free directions (zero columns padded)
    inclined: np.ndarray  #: (n_rn,) bool


@dataclass(frozen=True)
class RestrainedBound:
    sigma: FloatArray  #: (n_free,) power-of-two scaling of each reduced dof
    sig_glob: FloatArray  #: (n_nodes, dim) σ of the reduced dof(s) at each global dof (0 on restrained axes)
    lam_s: float | None  #: proven λ_min of the exact scaled restrained matrix Σ K_r* Σ
    lam_k: float | None  #: proven λ_min of the exact restrained matrix K_r*
    certificate: Certificate
    eta_s: float  #: proven ‖Σ(K̃_r − K_r*)Σ‖₂ bound
    lam_est: float  #: Ritz estimate of λ_min(K_r)
    lam_max_est: float
    norm_upper: float  #: proven upper bound of ‖K_r*‖₂
    reason: str
    seconds: float
    plan: CertificatePlan | None = None  #: the size policy's decision


def _member_abs_apply(ex: AssemblyData, eps_k: FloatArray, z: FloatArray) -> FloatArray:
    """y = |ΔK| z for the entrywise bound |ΔK| ≤ Σ_e eps_k[e]·𝟙𝟙ᵀ on each member's 2·dim dofs."""
    zn = z.reshape(ex.n_nodes, ex.dim)
    tot = (zn[ex.s_idx].sum(axis=1) + zn[ex.e_idx].sum(axis=1)) * eps_k
    y = np.zeros(ex.n_nodes)
    np.add.at(y, ex.s_idx, tot)
    np.add.at(y, ex.e_idx, tot)
    return np.repeat(y, ex.dim)


def certify_restrained(
    system: System,
    factor: Factor,
    ex: AssemblyData,
    *,
    sparse_limit: int = SPARSE_LIMIT,
    dense_limit: int = DENSE_LIMIT,
    max_factor_nonzeros: int = MAX_FACTOR_NONZEROS,
    budget: float = CERTIFICATE_BUDGET,
    free_nonzeros: int = CERTIFICATE_FREE_NONZEROS,
) -> RestrainedBound:
    """λ_lo of the exact restrained stiffness: the float certificate minus the proven assembly error (Weyl).

    With Σ the power-of-two scaling of each reduced dof (exact in float):
    ``λ_min(Σ K_r* Σ) ≥ λ_lo(Σ K̃_r Σ) − ‖Σ(K̃_r − K_r*)Σ‖₂`` and the last
    norm is bounded by the ∞-norm of an entrywise bound: per member
    ``ε_e·k_e`` on its 2·dim × 2·dim block with ``ε_e = 1.1·(5β_e + ρ_EA
    + 16u) + (deg+3)u`` (β_e the relative error of the member vector from
    the coordinates' rounding, first order with a 10 % margin, valid while
    β_e < 10⁻³, checked), the springs' likewise, the rounding of ``Tᵀ K T``
    (γ of its inner-product length) and, at restrained nodes, the distance
    of the float orthonormal basis from an exact one (exact rational arithmetic,
    :func:`_node_basis_deviation`; +inf with a reason when not established).
    Unscaled: ``λ_min(K_r*) ≥ λ_min(ΣK_r*Σ)·min σ⁻²``; for n ≤ dense_limit
    the unscaled matrix is certified directly as well and the larger bound
    kept.
    """
    t0 = time.perf_counter()
    d, nn = ex.dim, ex.n_nodes
    Kr = system.K_r
    n = Kr.shape[0]
    Tc = sp.csc_matrix(system.T)
    col_node = Tc.indices[Tc.indptr[:-1]] // d
    diag = Kr.diagonal()
    sigma = np.ldexp(1.0, -np.rint(np.log2(diag) / 2).astype(np.int64))
    incl_nodes = np.array([int(x) for j, x in enumerate(ex.rn.tolist()) if ex.inclined[j]], dtype=np.int64)
    if incl_nodes.size:
        nm = np.full(nn, np.inf)
        np.minimum.at(nm, col_node, sigma)
        is_incl = np.isin(col_node, incl_nodes)
        sigma = np.where(is_incl, nm[col_node], sigma)
    absT = abs(sp.csr_matrix(system.T))
    sig_glob = np.asarray(absT.multiply(sigma[None, :]).max(axis=1).todense()).reshape(nn, d)
    if incl_nodes.size:
        sig_glob[incl_nodes] = np.asarray([sigma[np.flatnonzero(col_node == j)[0]] for j in incl_nodes.tolist()])[
            :, None
        ]
    S = sp.csr_matrix(sp.diags(sigma) @ Kr @ sp.diags(sigma))

    def solve_s(x: FloatArray) -> FloatArray:
        return sigma[:, None] ** -1 * np.asarray(factor.solve(x / sigma[:, None])).reshape(x.shape)

    plan = certificate_plan(
        factor,
        Kr,
        dense_limit=dense_limit,
        sparse_limit=sparse_limit,
        max_factor_nonzeros=max_factor_nonzeros,
        budget=budget,
        free_nonzeros=free_nonzeros,
    )
    known = getattr(factor, "ritz_estimates", None)  # made beside the condition estimate (audit.solve)
    lam_est, lam_max_est = (
        known
        if known is not None
        else ritz_extremes(
            lambda x: Kr @ x, lambda x: np.asarray(factor.solve(x)).reshape(x.shape), n, block=2, steps=3
        )
    )
    if plan.run:
        # a few block iterations suffice: the shift only needs λ_min within a factor ~2 (a miss costs a retry)
        lam_s_est, _hi = ritz_extremes(lambda x: S @ x, solve_s, n, block=3, steps=3)
        cert = lower_eigen_bound(S, lam_s_est, dense_limit=dense_limit, sparse_limit=sparse_limit)
    else:
        cert = Certificate(None, "none", float("nan"), float("nan"), 0, plan.reason)
    # ---- proven distance between the float matrix and the exact one (scaled)
    reason = cert.reason
    m = ex.s_idx.size
    Lf = ex.lengths
    beta = ((ex.coord_dev[ex.s_idx] + ex.coord_dev[ex.e_idx]) / Lf + U) * 1.01 if m else np.zeros(0)
    deg = np.bincount(np.concatenate([ex.s_idx, ex.e_idx]), minlength=nn) if m else np.zeros(nn, dtype=np.int64)
    if ex.sp_node.size:
        deg = deg + np.bincount(ex.sp_node, minlength=nn)
    eps = 1.1 * (5 * beta + ex.rel_ea + 16 * U) + (int(deg.max(initial=0)) + 3) * U * 1.01
    eps_k = eps * ex.k_member
    ok_beta = bool(np.all(beta < 1e-3))
    Kabs = abs(sp.csr_matrix(system.K + system.K_springs))
    sp_abs = ex.sp_abs

    def dK(z: FloatArray) -> FloatArray:
        y = _member_abs_apply(ex, eps_k, z) if m else np.zeros(nn * d)
        if sp_abs.size:
            zn = z.reshape(nn, d)
            yy = np.zeros(nn)
            np.add.at(yy, ex.sp_node, sp_abs * zn[ex.sp_node].sum(axis=1))
            y = y + np.repeat(yy, d)
        return y

    # orthonormal basis of the float system against the exact one, per restrained node (exact rationals)
    DT, basis_reason = _basis_deviation(system, ex, col_node) if not system.selection and ok_beta else (None, "")
    ok_basis = not basis_reason

    def eta_for(sig: FloatArray) -> float:
        if not ok_basis:
            return float("inf")
        z = absT @ sig
        y = sig * (absT.T @ dK(z))
        if not system.selection:
            kmax = int(np.diff(Kabs.indptr).max(initial=1))
            y = y + gamma(2 * d * kmax + 4) * sig * (absT.T @ (Kabs @ z))
            if DT is not None and DT.nnz:
                Kz = lambda x: Kabs @ x + dK(x)  # noqa: E731
                y = y + sig * (DT.T @ Kz(z)) + sig * ((absT + DT).T @ Kz(DT @ sig))
        return round_up(float(np.max(y, initial=0.0)), 8)

    eta_s = eta_for(sigma) if ok_beta else float("inf")
    lam_s = None
    if not ok_beta:
        reason = "a member is too short against its coordinates' magnitude for the float assembly bound"
    elif not ok_basis:
        reason = basis_reason
    elif cert.lambda_lo is not None:
        lam_s = cert.lambda_lo - eta_s
        if lam_s <= 0:
            reason = f"the float assembly error bound {eta_s:.3g} exceeds the certified {cert.lambda_lo:.3g}"
            lam_s = None
    lam_k = lam_s * float(np.min(sigma**-2.0)) * (1 - 4 * U) if lam_s is not None else None
    if n <= dense_limit and ok_beta and ok_basis:
        direct = lower_eigen_bound(Kr, lam_est, dense_limit=dense_limit, sparse_limit=0)
        if direct.lambda_lo is not None:
            lo = direct.lambda_lo - eta_for(np.ones(n))
            if lo > 0 and (lam_k is None or lo > lam_k):
                lam_k = lo
    norm_up = inf_norm_upper(Kr) + (eta_for(np.ones(n)) if ok_beta and ok_basis else float("inf"))
    return RestrainedBound(
        sigma=sigma,
        sig_glob=sig_glob,
        lam_s=lam_s,
        lam_k=lam_k,
        certificate=cert,
        eta_s=eta_s,
        lam_est=lam_est,
        lam_max_est=lam_max_est,
        norm_upper=norm_up,
        reason="" if lam_s is not None else reason,
        seconds=time.perf_counter() - t0,
        plan=plan,
    )


def _sqrt_up(q: Fraction) -> float:
    """An upper bound in float64 of √q for an exact rational q ≥ 0 (0 only when q = 0).

    q is scaled by an exact power of four into [1, 4) (integer bit lengths), so
    ``float`` (correctly rounded) and ``math.sqrt`` (correctly rounded) each err
    by at most u relatively and ``(1 + 4u)`` covers both (IEEE 754; Higham
    2002, §2.2).  Results below 2⁻⁹⁹⁰ are returned as 2⁻⁹⁹⁰ (no subnormal
    rounding); results beyond the float range as +inf.
    """
    if q <= 0:
        return 0.0
    e = (q.denominator.bit_length() - q.numerator.bit_length()) // 2  # q·4^e within a factor 16 of 1
    scaled = q * Fraction(4) ** e
    while scaled >= 4:
        scaled /= 4
        e -= 1
    while scaled < 1:
        scaled *= 4
        e += 1
    s = math.sqrt(float(scaled)) * (1.0 + 4 * U)  # √(q·4^e) ∈ [1, 2) rounded up, < 2.1
    if 2 - e <= -990:
        return math.ldexp(1.0, -990)
    if -e >= 1023:
        return float("inf")
    return math.ldexp(s, -e)  # exact: a normal number times a power of two in range


def _fractions(a: np.ndarray) -> list[list[Fraction]]:
    """The exact rational values of a 2-D array of floats or integers."""
    return [[Fraction(x) for x in row] for row in a.tolist()]


def _node_basis_deviation(Tn: FloatArray, Z: list[list[int]]) -> tuple[float, str]:
    """Bound on ‖T̃ − T*‖ entrywise for one restrained node, T* an orthonormal basis of range(Z), exactly.

    T̃ (d × k, float) is the engine's basis of the free directions, Z (d × k,
    integer, full column rank) the exact one.  All of the following is exact
    rational arithmetic (no matrix is inverted numerically):

    * Y = Z G⁻¹ Zᵀ T̃ with G = ZᵀZ (Cramer/adjugate, det G ≠ 0 checked): the
      orthogonal projection of T̃ onto range(Z); R = T̃ − Y;
    * F = YᵀY − I, f ≥ ‖F‖_F ≥ ‖F‖₂ (rounded up).

    If f < 1/2, Y has full rank and T* = Y (YᵀY)^(−1/2) (the polar factor) is
    an orthonormal basis of range(Z); since the eigenvalues of YᵀY = I + F lie
    in [1 − f, 1 + f],
    ``‖T* − Y‖₂ ≤ ‖Y‖₂·‖(I+F)^(−1/2) − I‖₂ ≤ √(1+f)·((1−f)^(−1/2) − 1) ≤ √(1+f)·f / (2(1−f))``
    (Higham, *Functions of Matrices*, 2008, §8.1 for the polar factor; the
    last step from (1−f)^(−1/2) − 1 = f / (√(1−f)(1 + √(1−f)))).  Every entry
    of T̃ − T* is then at most ``‖T* − Y‖₂ + ‖R‖_F``.  Any orthonormal basis of
    the exact free space gives a restrained matrix orthogonally similar to
    any other, so λ_min does not depend on which one is taken.

    Returns
    -------
    (bound, reason)
        ``reason`` is empty when the bound holds, otherwise it says why no
        bound was established (bound then +inf).
    """
    if not np.all(np.isfinite(Tn)):
        return float("inf"), "the engine's basis of the free directions at a restrained node is not finite"
    d = len(Z)
    k = len(Z[0]) if d else 0
    G = [[sum(Z[a][p] * Z[a][q] for a in range(d)) for q in range(k)] for p in range(k)]
    det, adj = _det_adj(G)
    if det == 0:
        return float("inf"), "the exact free directions at a restrained node are linearly dependent"
    T = _fractions(Tn)
    ZtT = [[sum((Z[a][p] * T[a][c] for a in range(d)), Fraction(0)) for c in range(k)] for p in range(k)]
    X = [
        [sum((adj[p][q] * ZtT[q][c] for q in range(k)), Fraction(0)) / det for c in range(k)] for p in range(k)
    ]  # G⁻¹ZᵀT̃
    Y = [[sum((Z[a][p] * X[p][c] for p in range(k)), Fraction(0)) for c in range(k)] for a in range(d)]
    R = [T[a][c] - Y[a][c] for a in range(d) for c in range(k)]
    F = [
        sum((Y[a][p] * Y[a][q] for a in range(d)), Fraction(0)) - Fraction(int(p == q))
        for p in range(k)
        for q in range(k)
    ]
    r2 = sum((x * x for x in R), Fraction(0))
    f2 = sum((x * x for x in F), Fraction(0))
    f, r = _sqrt_up(f2), _sqrt_up(r2)
    if not f < 0.5:
        return float("inf"), (
            f"the engine's basis of the free directions at a restrained node is not near orthonormal "
            f"(‖YᵀY − I‖ up to {f:.3g})"
        )
    if f == 0.0 and r == 0.0:
        return 0.0, ""
    c = math.sqrt(1.0 + f) * f / (2.0 * (1.0 - f))
    return (c + r) * (1.0 + 16 * U) + math.ldexp(1.0, -990), ""


def _det_adj(G: list[list[int]]) -> tuple[int, list[list[int]]]:
    """Determinant and adjugate of a k × k integer matrix, k ≤ 3 (Cramer's rule; common practice)."""
    k = len(G)
    if k == 1:
        return G[0][0], [[1]]
    if k == 2:
        (a, b), (c, e) = G
        return a * e - b * c, [[e, -b], [-c, a]]
    cof = [
        [
            (G[(i + 1) % 3][(j + 1) % 3] * G[(i + 2) % 3][(j + 2) % 3])
            - (G[(i + 1) % 3][(j + 2) % 3] * G[(i + 2) % 3][(j + 1) % 3])
            for j in range(3)
        ]
        for i in range(3)
    ]
    det = sum(G[0][j] * cof[0][j] for j in range(3))
    return det, [[cof[j][i] for j in range(3)] for i in range(3)]


def _basis_deviation(system: System, ex: AssemblyData, col_node: np.ndarray) -> tuple[sp.csr_matrix, str]:
    """Sparse |ΔT| bound: at each restrained node, a bound on |T̃_node − T*_node| on every entry of its block.

    T* is an orthonormal basis of the exact free directions
    (:func:`_node_basis_deviation`, exact rational arithmetic).  Nodes whose
    float block equals Z exactly with ZᵀZ = I (axis restraints) have T* = T̃.

    Returns
    -------
    (|ΔT| bound, reason)
        ``reason`` is non-empty when some node's bound could not be
        established; the matrix is then meaningless.
    """
    d = ex.dim
    T = sp.csc_matrix(system.T)
    rows: list[int] = []
    cols: list[int] = []
    vals: list[float] = []
    for j, node in enumerate(ex.rn.tolist()):
        cj = np.flatnonzero(col_node == node)
        k = cj.size
        if k == 0:
            continue
        Tn = np.asarray(T[node * d : (node + 1) * d][:, cj].todense(), dtype=np.float64)
        Zj = [[int(ex.Z[j, a, c]) for c in range(d)] for a in range(d)]
        nz = [c for c in range(d) if any(Zj[a][c] for a in range(d))]
        if nz != list(range(k)):
            return sp.csr_matrix(T.shape), (
                "the engine's free directions at a restrained node do not match the exact ones in number"
            )
        Zk = [row[:k] for row in Zj]
        if (
            not ex.inclined[j]
            and all(Tn[a, c] == Zk[a][c] and abs(Zk[a][c]) <= 1 for a in range(d) for c in range(k))
            and all(sum(Zk[a][c] != 0 for a in range(d)) == 1 for c in range(k))
        ):
            G_is_i = all(
                sum(Zk[a][p] * Zk[a][q] for a in range(d)) == (1 if p == q else 0) for p in range(k) for q in range(k)
            )
            if G_is_i:
                continue  # T̃ is exactly an orthonormal basis of range(Z)
        dev, why = _node_basis_deviation(Tn, Zk)
        if why:
            return sp.csr_matrix(T.shape), why
        if dev == 0.0:
            continue
        for a in range(d):
            for c in cj.tolist():
                rows.append(node * d + a)
                cols.append(c)
                vals.append(dev)
    return sp.csr_matrix((vals, (rows, cols)), shape=T.shape), ""
