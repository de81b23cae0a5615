"""Supports, loads, the linear solve, member forces and reactions.

Supports are nodal constraints ``n_i · u = g_i`` (one per restraint
component, ``n_i`` a unit vector, ``g_i`` the prescribed settlement).  At
each restrained node the displacement is written ``u = u_p + Z w`` with Z an
orthonormal basis of the directions left free and u_p the least-norm
displacement meeting the prescribed values; free nodes keep their global
dofs.  The reduced stiffness is ``K_r = Tᵀ (K + K_springs) T`` with T the
(sparse, orthonormal-column) map from reduced to global dofs.  For restraints
along axes T is a plain column selection and K_r a sub-matrix.

Equilibrium, with r the support forces on the structure (restraints and
springs together) and f0 the loads equivalent to free elongations
(temperature, length errors):

    K u = f + f0 + r,      N = EA/L · (B u − δ0),

so r = K u − f − f0 with K the members' stiffness only (the springs' forces
are part of r).  Combinations are factored sums of the case solutions: the
model is linear.  A model with tension-only or compression-only members is
solved state by state in :mod:`audit.nonlinear`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import scipy.sparse as sp

from audit import linsolve, stiffness
from audit.errors import UnsolvableError
from audit.model import AXES, FloatArray, IntArray, Model
from audit.selfweight import self_weight_loads
from audit.timing import Timings, stage

if TYPE_CHECKING:
    from audit.nonlinear import NonlinearReport

#: a scaled restrained K whose estimated 1-norm condition exceeds this is refused as singular
SINGULAR_CONDITION = 1.0e14


@dataclass(frozen=True)
class System:
    """The assembled, restrained system.  Built once per model."""

    K: sp.csr_matrix  #: (n_dofs, n_dofs) members only
    K_springs: sp.csr_matrix  #: (n_dofs, n_dofs) springs only
    T: sp.csr_matrix  #: (n_dofs, n_free) reduced -> global displacement map
    free: IntArray  #: (n_free,) global dof of each reduced dof when T is a selection, else empty
    selection: bool  #: True when every restraint is along an axis (T selects columns)
    K_r: sp.csr_matrix  #: (n_free, n_free) reduced stiffness, springs included
    U_p: sp.csr_matrix  #: (n_dofs, n_restraints) u_p = U_p @ settlement
    supported_nodes: IntArray  #: (n_supported,) nodes with a restraint or spring, sorted


@dataclass(frozen=True)
class CaseSolution:
    case_id: str
    displacements: FloatArray  #: (n_nodes, dim)
    axial_forces: FloatArray  #: (n_members,)
    reactions: FloatArray  #: (n_nodes, dim), zero away from supports


@dataclass(frozen=True)
class Solution:
    cases: tuple[CaseSolution, ...]  #: load cases then combinations, in file order
    backend: str
    condition_estimate: float  #: 1-norm condition estimate of the diagonally scaled K_r (nan if not estimated)
    #: tension-only / compression-only members: every state's outcome (cases without a solution are left out
    #: of ``cases``); None for a linear model
    nonlinear: NonlinearReport | None = None

    def case(self, case_id: str) -> CaseSolution | None:
        for c in self.cases:
            if c.case_id == case_id:
                return c
        return None


def _node_bases(model: Model) -> tuple[dict[int, tuple[FloatArray, FloatArray]], bool]:
    """Per restrained node: (Z free basis (dim, k), P pseudo-inverse (dim, n_restraints_at_node))."""
    d = model.dim
    out: dict[int, tuple[FloatArray, FloatArray]] = {}
    axis_aligned = True
    order = np.argsort(model.restraint_node, kind="stable")
    nodes, starts = np.unique(model.restraint_node[order], return_index=True)
    bounds = [*starts.tolist(), len(order)]
    for j, node in enumerate(nodes.tolist()):
        idx = order[bounds[j] : bounds[j + 1]]
        C = model.restraint_dir[idx]
        if not np.all(np.isclose(np.abs(C).max(axis=1), 1.0, rtol=0, atol=0)):
            axis_aligned = False
        _, s, vt = np.linalg.svd(C)
        rank = int(np.sum(s > 1e-12 * max(1.0, s[0])))
        Z = vt[rank:].T  # (d, d-rank)
        P = np.linalg.pinv(C)  # (d, k)
        out[int(node)] = (np.asarray(Z.reshape(d, d - rank), dtype=np.float64), np.asarray(P, dtype=np.float64))
    return out, axis_aligned


def build_system(model: Model) -> System:
    """Assemble K and the restrained system for ``model``."""
    d = model.dim
    nd = model.n_dofs
    K = stiffness.assemble(model)
    Ks = stiffness.assemble(_springs_only(model), springs=True) if model.spring_node.size else sp.csr_matrix((nd, nd))
    bases, axis_aligned = _node_bases(model)
    restrained_mask = np.zeros(nd, dtype=bool)
    up_rows: list[int] = []
    up_cols: list[int] = []
    up_vals: list[float] = []
    ridx_by_node: dict[int, list[int]] = {}
    for r, node in enumerate(model.restraint_node.tolist()):
        ridx_by_node.setdefault(int(node), []).append(r)
    for node, (_Z, P) in bases.items():
        ridx = ridx_by_node[node]
        for a in range(d):
            for jj, r in enumerate(ridx):
                if P[a, jj] != 0.0:
                    up_rows.append(node * d + a)
                    up_cols.append(r)
                    up_vals.append(float(P[a, jj]))
    U_p = sp.csr_matrix((up_vals, (up_rows, up_cols)), shape=(nd, model.n_restraints))
    if axis_aligned:
        for r in range(model.n_restraints):
            a = int(np.argmax(np.abs(model.restraint_dir[r])))
            restrained_mask[int(model.restraint_node[r]) * d + a] = True
        free = np.flatnonzero(~restrained_mask).astype(np.int64)
        T = sp.csr_matrix((np.ones(free.size), (free, np.arange(free.size))), shape=(nd, free.size))
        Kt = (K + Ks).tocsr()
        K_r = Kt[free][:, free].tocsr()
    else:
        rows: list[int] = []
        cols: list[int] = []
        vals: list[float] = []
        col = 0
        for node in range(model.n_nodes):
            if node in bases:
                Z = bases[node][0]
                for c in range(Z.shape[1]):
                    for a in range(d):
                        if Z[a, c] != 0.0:
                            rows.append(node * d + a)
                            cols.append(col)
                            vals.append(float(Z[a, c]))
                    col += 1
            else:
                for a in range(d):
                    rows.append(node * d + a)
                    cols.append(col)
                    vals.append(1.0)
                    col += 1
        T = sp.csr_matrix((vals, (rows, cols)), shape=(nd, col))
        free = np.zeros(0, dtype=np.int64)
        K_r = (T.T @ (K + Ks) @ T).tocsr()
    supported = np.unique(np.concatenate([model.restraint_node, model.spring_node])).astype(np.int64)
    return System(
        K=K,
        K_springs=Ks.tocsr(),
        T=T.tocsr(),
        free=free,
        selection=axis_aligned,
        K_r=K_r,
        U_p=U_p,
        supported_nodes=supported,
    )


def _springs_only(model: Model) -> Model:
    """The same model with no members, so that assemble(..., springs=True) yields K_springs."""
    from dataclasses import replace

    return replace(
        model,
        member_ids=(),
        conn=np.zeros((0, 2), dtype=np.int64),
        E=np.zeros(0),
        A=np.zeros(0),
        alpha=np.zeros(0),
    )


def case_vectors(model: Model, case_index: int) -> tuple[FloatArray, FloatArray, FloatArray]:
    """(f, f0, δ0) of one load case: nodal loads (self weight included), equivalent loads, free elongations."""
    lc = model.load_cases[case_index]
    f = (lc.loads + self_weight_loads(model, lc)).reshape(-1) if lc.has_self_weight else lc.loads.reshape(-1)
    if lc.has_initial_strain:
        d0 = stiffness.initial_elongation(model, lc.temperature, lc.length_error)
    else:
        d0 = np.zeros(model.n_members)
    f0 = stiffness.equivalent_loads(model, d0) if lc.has_initial_strain else np.zeros(model.n_dofs)
    return f, f0, d0


def _zero_stiffness_dofs(model: Model, system: System) -> list[str]:
    diag = system.K_r.diagonal()
    bad = np.flatnonzero(diag <= 0.0)
    names: list[str] = []
    if system.selection:
        for j in bad[:10].tolist():
            g = int(system.free[j])
            names.append(f"node {model.node_ids[g // model.dim]} along {AXES[g % model.dim]}")
    else:
        names = [f"reduced dof {j}" for j in bad[:10].tolist()]
    return names


def factorize_system(model: Model, system: System, backend: str = "auto") -> tuple[linsolve.Factor, float]:
    """Factorise K_r and estimate its scaled condition.  Raises UnsolvableError when singular.

    The factor also carries Ritz estimates of K_r's extreme eigenvalues
    (``Factor.ritz_estimates``, for the certificate of :mod:`audit.certify`):
    their solves share the condition estimate's (:func:`estimate_spectrum`).
    """
    if system.K_r.shape[0] == 0:
        raise UnsolvableError("the model has no free degree of freedom to solve for")
    zero = _zero_stiffness_dofs(model, system)
    if zero:
        raise UnsolvableError(
            "the stiffness matrix is singular: some free degrees of freedom have no stiffness at all",
            details=tuple(zero),
        )
    try:
        factor = linsolve.factorize(system.K_r, backend)
    except np.linalg.LinAlgError as exc:
        raise UnsolvableError(f"the restrained stiffness matrix is singular ({exc})") from None
    try:
        cond, ritz = estimate_spectrum(system.K_r, factor)
    except np.linalg.LinAlgError:  # the dense inverse of a tiny exactly singular K_r
        cond, ritz = float("inf"), None
    if not np.isfinite(cond) or cond > SINGULAR_CONDITION:
        raise UnsolvableError(
            "the restrained stiffness matrix is singular or numerically singular "
            f"(estimated condition of the scaled matrix {cond:.3g} > {SINGULAR_CONDITION:.0e}): "
            "the model is a mechanism or nearly so",
        )
    factor.ritz_estimates = ritz
    return factor, cond


#: the Ritz iteration of K_r run beside the condition estimate: the certificate's (audit.certify.restrained)
RITZ_BLOCK, RITZ_STEPS = 2, 3


def estimate_spectrum(K_r: sp.csr_matrix, factor: linsolve.Factor) -> tuple[float, tuple[float, float]]:
    """The scaled condition estimate (:func:`condition_estimate`) and Ritz estimates (λ_min, λ_max) of K_r.

    The two iterations are independent chains of solves with the same factor,
    so they run in lockstep (:func:`audit.linsolve.solve_in_lockstep`): each
    round is one backend call for both.  On a 2D grid of 480,800 members
    (2 cores, Intel Xeon, MKL's reproducibility branch) the 13 PARDISO calls
    of one column became 6, of 1 to 4 columns.
    """
    from audit.certify.eigen_bound import ritz_chain

    n = K_r.shape[0]
    ritz = ritz_chain(lambda x: K_r @ x, n, block=RITZ_BLOCK, steps=RITZ_STEPS)
    if n <= 4:
        cond = condition_estimate(K_r, factor)
        (lo_hi,) = linsolve.solve_in_lockstep(factor, [ritz])
        return cond, lo_hi
    _S, norm_s, dsq = _scaled(K_r)
    inv_norm, lo_hi = linsolve.solve_in_lockstep(factor, [_inverse_one_norm_chain(dsq), ritz])
    return norm_s * inv_norm, lo_hi


def _scaled(K_r: sp.csr_matrix) -> tuple[sp.csr_matrix, float, FloatArray]:
    """S = D^-1/2 K_r D^-1/2 (D = diag K_r), ‖S‖₁ and D^1/2."""
    n = K_r.shape[0]
    dinv = 1.0 / np.sqrt(K_r.diagonal())
    # S = D^-1/2 K_r D^-1/2 entry by entry, (d_i k_ij) d_j: the same numbers as the two sparse
    # products it replaces, 10x faster at 10⁶ members
    S = sp.csr_matrix(K_r, copy=True)
    rows = np.repeat(np.arange(n), np.diff(S.indptr))
    S.data = (dinv[rows] * S.data) * dinv[S.indices]
    return S, float(abs(S).sum(axis=0).max()), 1.0 / dinv


def condition_estimate(K_r: sp.csr_matrix, factor: linsolve.Factor) -> float:
    """1-norm condition estimate of S = D^-1/2 K_r D^-1/2 (D = diag K_r): ‖S‖₁ · est(‖S⁻¹‖₁).

    ‖S⁻¹‖₁ is estimated by Hager's method with Higham's refinements (Higham,
    "FORTRAN codes for estimating the one-norm of a real or complex matrix",
    ACM TOMS 14(4), 1988, Algorithm 4.1; *Accuracy and Stability of Numerical
    Algorithms*, 2nd ed., §15.3), which is deterministic: the same matrix always
    gives the same estimate (scipy's block estimator starts from random vectors).
    S is symmetric, so the transpose solves are solves with the same factor.
    The estimate is a lower bound of the true value, in practice within a small
    factor of it.
    """
    S, norm_s, dsq = _scaled(K_r)
    if K_r.shape[0] <= 4:
        dense = np.linalg.inv(np.asarray(S.todense()))
        return norm_s * float(np.abs(dense).sum(axis=0).max())
    (inv_norm,) = linsolve.solve_in_lockstep(factor, [_inverse_one_norm_chain(dsq)])
    return norm_s * float(inv_norm)


def _inverse_one_norm_chain(dsq: FloatArray, max_iter: int = 5) -> linsolve.SolveChain:
    """Hager–Higham estimate of ‖S⁻¹‖₁ with S⁻¹ x = D^1/2 K_r⁻¹ D^1/2 x (S symmetric), as a chain of solves.

    Yields right-hand sides for K_r and is sent K_r⁻¹ of them.  Higham's extra
    test vector (it guards against the estimator's known blind spots) does
    not depend on the iteration, so it is solved with the first vector.
    """
    n = dsq.size
    x = np.full(n, 1.0 / n)
    b = np.where(np.arange(n) % 2 == 0, 1.0, -1.0) * (1.0 + np.arange(n) / max(n - 1, 1))
    first = yield np.column_stack([dsq * x, dsq * b])
    y = dsq * first[:, 0]
    alt = 2.0 * float(np.abs(dsq * first[:, 1]).sum()) / (3.0 * n)
    est = 0.0
    last_j = -1
    for it in range(max_iter):
        if it:
            y = dsq * (yield dsq * x)
        new_est = float(np.abs(y).sum())
        if new_est <= est:
            break
        est = new_est
        z = dsq * (yield dsq * np.where(y >= 0.0, 1.0, -1.0))
        j = int(np.argmax(np.abs(z)))
        if abs(z[j]) <= float(z @ x) or j == last_j:
            break
        last_j = j
        x = np.zeros(n)
        x[j] = 1.0
    return max(est, alt)


def solve_model(model: Model, backend: str = "auto", timings: Timings | None = None) -> Solution:
    """Solve every load case and combination.  Raises UnsolvableError for a mechanism.

    ``timings`` (optional) receives the stages ``build``, ``factorise`` and ``recompute``.
    """
    with stage(timings, "build"):
        system = build_system(model)
    with stage(timings, "factorise"):
        factor, cond = factorize_system(model, system, backend)
    with stage(timings, "recompute"):
        return solve_with(model, system, factor, cond)


def solve_with(model: Model, system: System, factor: linsolve.Factor, cond: float = float("nan")) -> Solution:
    """Solve all cases with an existing factor."""
    if model.is_nonlinear:  # tension-only / compression-only members: each state on its own (audit.nonlinear)
        from audit.nonlinear import solve_nonlinear

        result: Solution = solve_nonlinear(model, system, factor, cond)
        return result
    nc = len(model.load_cases)
    nd = model.n_dofs
    if nc == 0:
        return Solution(cases=(), backend=factor.backend, condition_estimate=cond)
    F = np.zeros((nd, nc))
    F0 = np.zeros((nd, nc))
    D0 = np.zeros((model.n_members, nc))
    G = np.zeros((model.n_restraints, nc))
    for i in range(nc):
        f, f0, d0 = case_vectors(model, i)
        F[:, i], F0[:, i], D0[:, i] = f, f0, d0
        G[:, i] = model.load_cases[i].settlement
    Up = system.U_p @ G  # (nd, nc)
    Kt = system.K + system.K_springs
    rhs = system.T.T @ (F + F0 - Kt @ Up)
    W = factor.solve(rhs if nc > 1 else rhs[:, 0])
    W = W.reshape(-1, nc)
    U = Up + system.T @ W
    B = stiffness.compatibility_matrix(model)
    k = model.axial_stiffness()
    N = k[:, None] * (B @ U - D0)
    R = system.K @ U - F - F0
    mask = np.zeros(model.n_nodes, dtype=bool)
    mask[system.supported_nodes] = True
    R = R.reshape(model.n_nodes, model.dim, nc)
    R[~mask] = 0.0
    cases: list[CaseSolution] = []
    for i, lc in enumerate(model.load_cases):
        cases.append(_case(lc.id, model, U[:, i], N[:, i], R[:, :, i]))
    for comb in model.combinations:
        fac = np.zeros(nc)
        for ci, value, _text in comb.factors:
            fac[ci] += value
        cases.append(_case(comb.id, model, U @ fac, N @ fac, R @ fac))
    return Solution(cases=tuple(cases), backend=factor.backend, condition_estimate=cond)


def _case(case_id: str, model: Model, u: FloatArray, n: FloatArray, r: FloatArray) -> CaseSolution:
    return CaseSolution(
        case_id=case_id,
        displacements=np.ascontiguousarray(u.reshape(model.n_nodes, model.dim)),
        axial_forces=np.ascontiguousarray(n),
        reactions=np.ascontiguousarray(r.reshape(model.n_nodes, model.dim)),
    )
