"""Calladine & Pellegrino's first-order test: do states of self-stress stiffen the internal mechanisms?"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import scipy.linalg as sla

from audit import linsolve
from audit.model import FloatArray, Model
from audit.stability.limits import ORDER_TEST_DOF_LIMIT, ORDER_TEST_LIMIT
from audit.stability.linalg import orth
from audit.stability.numerical import equilibrium_matrix, gram
from audit.stability.prechecks import Constraints
from audit.stability.report import Mechanism
from audit.stability.wording import plural


def with_order(mk: Mechanism, verdict: str) -> Mechanism:
    """The mechanism with the first-order verdict recorded and appended to its description."""
    from dataclasses import replace

    if not verdict:
        return mk
    return replace(mk, order=verdict, description=f"{mk.description} [{verdict}]")


def first_order_test(
    model: Model, cons: Constraints, M: FloatArray | None, D: FloatArray | None, s: int, proof: str
) -> dict[str, Any]:
    """Calladine & Pellegrino's product-force test of the internal mechanisms D (d·j, ℓ).

    For mechanisms d_i, d_j and a state of self-stress t the quadratic form is
    ``H_ij(t) = Σ_e t_e (Δd_i,e · Δd_j,e) / L_e`` (Δd the relative end displacement of member e): the
    work of the product forces.  Only the part of ``g_ij = (Δd_i · Δd_j / L)`` in the self-stress space
    (the null space of A) can be reached, so g_ij is projected onto it,
    ``r_ij = g_ij − Aᵀ (A Aᵀ + V Vᵀ)⁻¹ A g_ij`` (V: virtual supports that stop every mechanism; the
    normal equations then have a unique solution).  The mechanisms are first-order infinitesimal when a
    combination of those states makes H positive definite (Calladine & Pellegrino 1991, "First-order
    infinitesimal mechanisms", Int. J. Solids Structures 27(4), §3-4).  With no state of self-stress the
    columns of A are independent, the configuration is regular and every mechanism is finite (Asimow &
    Roth 1978, "The rigidity of graphs", Trans. AMS 245; recalled from memory).
    """
    if s == 0:
        return {
            "tested": True,
            "result": "finite",
            "reason": "no state of self-stress: the mechanisms are finite (regular configuration)",
            "proof": proof,
        }
    if model.n_dofs > ORDER_TEST_DOF_LIMIT:
        return {
            "tested": False,
            "result": "not proven infinitesimal",
            "reason": f"the product-force test is not run above {ORDER_TEST_DOF_LIMIT} dofs (one more factorisation)",
        }
    if D is None or M is None or M.shape[1] > 50 or D.shape[1] > ORDER_TEST_LIMIT:
        return {
            "tested": False,
            "result": "not proven infinitesimal",
            "reason": "too many mechanisms for the product-force test (or no basis formed)",
        }
    d, nd, m = model.dim, model.n_dofs, model.n_members
    ell = D.shape[1]
    _, _, piv = sla.qr(M.T, pivoting=True, mode="economic")
    dofs = piv[: M.shape[1]]
    vdir = np.eye(d)[dofs % d]
    G = gram(model, cons, (dofs // d).astype(np.int64), vdir)
    try:
        factor = linsolve.factorize(G)
    except (np.linalg.LinAlgError, MemoryError) as exc:
        # the virtual supports should stop every mechanism; a factor that fails says the basis M missed some
        return {
            "tested": False,
            "result": "not proven infinitesimal",
            "reason": f"the geometry-only matrix with virtual supports could not be factorised "
            f"({type(exc).__name__}: {exc})",
        }
    A = equilibrium_matrix(model, cons)
    L = model.lengths()
    Dd = [D[:, i].reshape(-1, d) for i in range(ell)]
    rel = [(Di[model.conn[:, 1]] - Di[model.conn[:, 0]]) for Di in Dd]
    pairs = [(i, k) for i in range(ell) for k in range(i, ell)]
    gs = np.zeros((m + cons.node.size, len(pairs)))
    for c, (i, k) in enumerate(pairs):
        gs[:m, c] = np.einsum("ea,ea->e", rel[i], rel[k]) / L
    rhs = np.asarray(A @ gs)
    Y = factor.solve(rhs)
    if not np.all(np.isfinite(Y)) or np.linalg.norm(G @ Y - rhs) > 1e-6 * max(float(np.linalg.norm(rhs)), 1e-300):
        return {
            "tested": False,
            "result": "not proven infinitesimal",
            "reason": "the solve with the geometry-only matrix and virtual supports was not accurate "
            "(the virtual supports left a mechanism free)",
        }
    R = gs - np.asarray(A.T @ Y.reshape(nd, -1))
    gnorm = float(np.linalg.norm(gs, axis=0).max()) or 1.0
    S = orth(R, 1e-8) if np.linalg.norm(R) > 1e-8 * gnorm else np.zeros((R.shape[0], 0))
    tol = 1e-8 * gnorm
    indiv = []
    for i in range(ell):
        c = pairs.index((i, i))
        indiv.append("first-order infinitesimal" if np.linalg.norm(R[:, c]) > math.sqrt(tol * gnorm) else "")
    if S.shape[1] == 0:
        return {
            "tested": True,
            "result": "not proven infinitesimal",
            "reason": f"{plural(s, 'state')} of self-stress, none of which stiffens the mechanisms to first order",
            "proof": "numerical",
            "tolerance": tol,
        }
    Hs = []
    for k in range(S.shape[1]):
        H = np.zeros((ell, ell))
        for c, (i, q) in enumerate(pairs):
            H[i, q] = H[q, i] = float(S[:m, k] @ gs[:m, c])
        Hs.append(H)
    best, _beta = _max_min_eig(Hs)
    ok = best > tol
    verdicts = ["first-order infinitesimal" if ok or v else "not proven infinitesimal" for v in indiv]
    return {
        "tested": True,
        "result": "first-order infinitesimal" if ok else "not proven infinitesimal",
        "reason": (
            f"a state of self-stress stiffens every internal mechanism: smallest eigenvalue of the product-force "
            f"form {best:.3g} > tolerance {tol:.1e}"
            if ok
            else f"no combination of the {S.shape[1]} relevant states of self-stress was found that makes the "
            f"product-force form positive definite (best smallest eigenvalue {best:.3g}, tolerance {tol:.1e})"
        ),
        "proof": "numerical",
        "tolerance": tol,
        "relevant_self_stress_states": int(S.shape[1]),
        "verdicts": verdicts,
    }


def _max_min_eig(Hs: list[FloatArray]) -> tuple[float, FloatArray]:
    """max over unit β of λ_min(Σ β_k H_k): candidates ±basis, seeded random directions, then ascent."""
    q = len(Hs)
    rng = np.random.default_rng(20260101)
    cands = [np.eye(q)[k] * sgn for k in range(q) for sgn in (1.0, -1.0)]
    cands += [v / np.linalg.norm(v) for v in rng.standard_normal((64, q))]

    def score(b: FloatArray) -> tuple[float, FloatArray]:
        w, v = np.linalg.eigh(sum(bk * H for bk, H in zip(b, Hs, strict=False)))
        return float(w[0]), v[:, 0]

    best_b = max(cands, key=lambda b: score(b)[0])
    best = score(best_b)[0]
    step = 0.5
    for _ in range(200):
        _val, vec = score(best_b)
        grad = np.array([vec @ H @ vec for H in Hs])
        trial = best_b + step * grad
        trial /= np.linalg.norm(trial) or 1.0
        val = score(trial)[0]
        if val > best:
            best, best_b = val, trial
        else:
            step *= 0.5
            if step < 1e-6:
                break
    return best, best_b
