"""The state of one load case of a truss with tension-only / compression-only members.

In reduced coordinates ``w`` (``u = u_p + T w``) member i's elastic
elongation is ``e_i = (B_r w)_i − c_i`` with ``c = δ0 − B u_p`` (free
elongation and settlement).  With ``s_i = +1`` for tension-only, ``−1`` for
compression-only and ``0`` for linear members, the total potential energy is

    Π(w) = Σ ½ k_i ψ_i(e_i)² + ½ wᵀ K_s w − b₀ᵀ w,     b₀ = Tᵀ(f − K_s u_p),

with ``ψ_i(e) = e`` for a linear member and ``max(0, s_i e)`` otherwise:
convex and continuously differentiable, piecewise quadratic (the strain
energy of a tension-only bar is ½·k·max(0, e)²).  Its stationary points are
exactly the states of ``FORMAT.md``: equilibrium, compatibility of the
active members, ``s·N ≥ 0`` in every active member and ``s·e ≤ 0`` in every
slack one.  A convex piecewise quadratic bounded below attains its minimum;
for a stable active structure the minimiser is unique.

Method, per state:

1. **Active set** (primal–dual active-set iteration, the semismooth Newton
   method on ∇Π; Hintermüller, Ito & Kunisch, "The primal-dual active set
   strategy as a semismooth Newton method", SIAM J. Optim. 13(3), 2003): from
   the linear solution (or the solved active set of the previous state, whose
   structure is stable and whose factor is usually at hand), solve with the current active set, re-classify every
   non-linear member by the sign of its elongation, repeat until the set does
   not change.  The set then satisfies every condition above.  Each set
   visited is remembered; a set met again (a cycle) or a singular set ends
   this phase.
2. **Guard: damped Newton** on Π with an exact line search (Π along a line is
   a convex piecewise quadratic, minimised exactly by walking its
   breakpoints), from the iterate of lowest energy.  Each step decreases Π
   strictly unless ∇Π = 0, so no set repeats; Π has finitely many quadratic
   pieces and the Newton step of the piece containing the minimiser lands on
   it, so the method ends; an iteration cap (:data:`MAX_NEWTON`) is reported
   as not converged, never as solved.  Where the active structure is
   singular, its mechanism ``d`` is tested: if every member that ``d``
   stretches is a non-linear member that ``d`` moves further to its slack
   side, and the loads do work along ``d``, Π is unbounded below along ``d``
   and the state has **no solution** (proven): the report names those members
   ("stable only if D3 takes compression").  Otherwise the step uses the
   stiffness with slack members at the small weight :data:`REGULARISATION`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from audit.model import FloatArray, IntArray

from .records import MECHANISM, NOT_CONVERGED, SOLVED, BoolArray
from .updates import ActiveSolver, SingularError

MAX_ACTIVE_SET = 60
MAX_NEWTON = 200
REGULARISATION = 1.0e-6
#: relative hysteresis of the re-classification (a member within this of zero elongation keeps its state)
HYSTERESIS = 1.0e-12
#: largest sign violation accepted at the end, relative to the state's force scale
COMPLEMENTARITY = 1.0e-8


@dataclass(frozen=True)
class StateData:
    """One state's data in reduced coordinates."""

    c: FloatArray  #: (m,) elongation offsets δ0 − B u_p
    b0: FloatArray  #: (n,) Tᵀ (f − K_s u_p)


@dataclass(frozen=True)
class StateSolution:
    status: str
    w: FloatArray  #: (n,) reduced displacements (the last iterate when not solved)
    active: BoolArray
    iterations: int
    damped: bool
    needed: tuple[int, ...]  #: MECHANISM: members that would have to act in the sense they cannot
    complementarity: float


class _Problem:
    def __init__(self, solver: ActiveSolver, sign: IntArray, data: StateData) -> None:
        self.solver = solver
        self.s = sign
        self.nl = sign != 0
        self.c = data.c
        self.b0 = data.b0
        self.k = solver.k
        k_c = solver.Br.T @ (self.k * np.abs(self.c))
        self.force_scale = max(float(np.abs(self.b0).max(initial=0.0)), float(np.abs(k_c).max(initial=0.0)))

    def elongation(self, w: FloatArray) -> FloatArray:
        return self.solver.Br @ w - self.c

    def rhs(self, active: BoolArray) -> FloatArray:
        return self.b0 + self.solver.Br.T @ (self.k * active * self.c)

    def classify(self, e: FloatArray, previous: BoolArray | None) -> BoolArray:
        se = self.s * e
        tau = HYSTERESIS * float(np.abs(e).max(initial=0.0))
        on = se > 0.0 if previous is None else np.where(previous, se >= -tau, se > tau)
        return np.asarray(~self.nl | on, dtype=bool)

    def energy(self, w: FloatArray) -> float:
        e = self.elongation(w)
        psi = np.where(self.nl, np.maximum(0.0, self.s * e), e)
        return float(0.5 * np.sum(self.k * psi * psi) + 0.5 * w @ (self.solver.Ks @ w) - self.b0 @ w)

    def gradient(self, w: FloatArray) -> FloatArray:
        e = self.elongation(w)
        n = self.k * np.where(self.nl & (self.s * e <= 0.0), 0.0, e)
        return np.asarray(self.solver.Br.T @ n + self.solver.Ks @ w - self.b0)

    def violation(self, w: FloatArray, active: BoolArray) -> float:
        """Largest sign violation in force units (−s·N of an active member, s·k·e of a slack one), relative."""
        e = self.elongation(w)
        force = self.k * self.s * e
        worst = float(np.max(np.where(self.nl & active, -force, 0.0), initial=0.0))
        worst = max(worst, float(np.max(np.where(self.nl & ~active, force, 0.0), initial=0.0)))
        scale = max(self.force_scale, float(np.abs(self.k * e * active).max(initial=0.0)), 1e-300)
        return worst / scale

    # ------------------------------------------------------------ no solution
    def unbounded_along(self, d: FloatArray | None) -> tuple[int, ...] | None:
        """The members a mechanism d needs in their slack sense, when Π is unbounded below along ±d; else None."""
        if d is None or not np.all(np.isfinite(d)):
            return None
        q = self.solver.Br @ d
        qmax = float(np.abs(q).max(initial=0.0))
        work = float(self.b0 @ d)
        if qmax == 0.0 and work == 0.0:
            return None
        scale = float(np.abs(self.b0).max(initial=0.0)) * float(np.abs(d).max(initial=0.0))
        if abs(work) <= 1e-9 * max(scale, 1e-300):
            return None
        sigma = 1.0 if work > 0 else -1.0
        moving = np.abs(q) > 1e-9 * qmax
        if np.any(moving & ~self.nl):
            return None
        if float(d @ (self.solver.Ks @ d)) > 1e-18 * float(np.abs(self.solver.Ks).sum() + 1.0) * qmax**2:
            return None
        slack_side = self.s * sigma * q < 0.0
        if np.any(moving & ~slack_side):
            return None
        return tuple(np.flatnonzero(moving).tolist())

    # ------------------------------------------------------------ line search
    def line_minimum(self, w: FloatArray, p: FloatArray) -> float:
        """argmin over t ≥ 0 of Π(w + t p) (exact: Π' is piecewise linear); inf when unbounded below."""
        e = self.elongation(w)
        q = self.solver.Br @ p
        lin = ~self.nl
        a0 = float(np.sum((self.k * q * e)[lin]) + p @ (self.solver.Ks @ w) - self.b0 @ p)
        a1 = float(np.sum((self.k * q * q)[lin]) + p @ (self.solver.Ks @ p))
        nl = np.flatnonzero(self.nl & (q != 0.0))
        se, sq = self.s[nl] * e[nl], self.s[nl] * q[nl]
        kq_e, kq_q = self.k[nl] * q[nl] * e[nl], self.k[nl] * q[nl] * q[nl]
        on0 = (se > 0) | ((se == 0) & (sq > 0))
        alpha = a0 + float(kq_e[on0].sum())
        beta = a1 + float(kq_q[on0].sum())
        tb = -se / sq
        crossing = tb > 0
        order = np.argsort(tb[crossing])
        idx = np.flatnonzero(crossing)[order]
        t_sorted = tb[idx]
        enter = np.where(sq[idx] > 0, 1.0, -1.0)  # +1 a member becomes active there, −1 it goes slack
        alphas = alpha + np.concatenate([[0.0], np.cumsum(enter * kq_e[idx])])
        betas = beta + np.concatenate([[0.0], np.cumsum(enter * kq_q[idx])])
        starts = np.concatenate([[0.0], t_sorted])
        ends = np.concatenate([t_sorted, [np.inf]])
        for a, b, t0, t1 in zip(alphas.tolist(), betas.tolist(), starts.tolist(), ends.tolist(), strict=True):
            if a + b * t0 >= 0.0:
                return t0
            if b > 0.0:
                t = -a / b
                if t <= t1:
                    return t
        return float("inf")


def solve_state(solver: ActiveSolver, sign: IntArray, data: StateData, start: BoolArray | None = None) -> StateSolution:
    """The state of one load case or combination (see the module docstring).

    ``start``: the active set to begin with (the solved set of another state, whose structure is known to
    be stable); by default every member active, i.e. the linear solution.
    """
    pb = _Problem(solver, sign, data)
    m = sign.size
    active = np.ones(m, dtype=bool) if start is None else start.copy()
    try:
        w = solver.solve(active.astype(np.float64), pb.rhs(active))
    except SingularError:
        active = np.ones(m, dtype=bool)
        w = solver.solve(active.astype(np.float64), pb.rhs(active))
    best = (pb.energy(w), w)
    visited = {np.packbits(active).tobytes()}
    iterations = 1
    pending: FloatArray | None = None
    for _ in range(MAX_ACTIVE_SET):
        new = pb.classify(pb.elongation(w), active)
        if np.array_equal(new, active):
            return _finish(pb, w, active, iterations, False)
        key = np.packbits(new).tobytes()
        if key in visited:
            break
        visited.add(key)
        active = new
        try:
            w = solver.solve(active.astype(np.float64), pb.rhs(active))
        except SingularError as exc:
            pending = exc.direction
            break
        iterations += 1
        energy = pb.energy(w)
        if energy < best[0]:
            best = (energy, w)
    if pending is not None:
        needed = pb.unbounded_along(pending)
        if needed is not None:
            return StateSolution(MECHANISM, w, active, iterations, False, needed, 0.0)
    return _damped(pb, best[1], iterations)


def _damped(pb: _Problem, w: FloatArray, iterations: int) -> StateSolution:
    """Newton steps on Π with exact line search.  The Newton point of the piece at w is K_a⁻¹ rhs(a), so a
    step costs one solve, and that point is accepted outright when its own active set is a."""
    solver = pb.solver
    active = pb.classify(pb.elongation(w), None)
    for _ in range(MAX_NEWTON):
        active = pb.classify(pb.elongation(w), None)
        iterations += 1
        try:
            target = solver.solve(active.astype(np.float64), pb.rhs(active))
        except SingularError as exc:
            needed = pb.unbounded_along(exc.direction)
            if needed is not None:
                return StateSolution(MECHANISM, w, active, iterations, True, needed, 0.0)
            p = -solver.solve(np.where(active, 1.0, REGULARISATION), pb.gradient(w))
        else:
            if np.array_equal(pb.classify(pb.elongation(target), active), active):
                return _finish(pb, target, active, iterations, True)
            p = target - w
        t = pb.line_minimum(w, p)
        if not np.isfinite(t):
            needed = pb.unbounded_along(p)
            return StateSolution(MECHANISM, w, active, iterations, True, needed or (), 0.0)
        if t == 0.0:
            break
        w = w + t * p
    return StateSolution(NOT_CONVERGED, w, active, iterations, True, (), pb.violation(w, active))


def _finish(pb: _Problem, w: FloatArray, active: BoolArray, iterations: int, damped: bool) -> StateSolution:
    viol = pb.violation(w, active)
    status = SOLVED if viol <= COMPLEMENTARITY else NOT_CONVERGED
    return StateSolution(status, w, active, iterations, damped, (), viol)


def reduced_compatibility(B: sp.csr_matrix, T: sp.csr_matrix) -> sp.csr_matrix:
    return (B @ T).tocsr()
