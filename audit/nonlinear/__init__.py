"""Trusses with tension-only and compression-only members (``FORMAT.md``, additions to version 1).

Superposition does not hold, so every load case and every combination is a
*state* of its own: a combination's factored loads, temperature changes,
length errors and settlements act together, and its answer is never the
factored sum of its cases' answers.  Each state is solved by
:func:`audit.nonlinear.search.solve_state` (an active-set iteration guarded
by a damped Newton method on the convex strain energy, with a termination
argument); the linear solves reuse the engine's factorisation of the
structure as built through low-rank updates (:mod:`audit.nonlinear.updates`)
and factorise afresh only when the active structure differs from every
factored one in many members.

A state whose active structure is a mechanism has no solution: it is left
out of :attr:`Solution.cases` and reported in :attr:`Solution.nonlinear`
(``stable only if D3 takes compression``); the other states are still solved.
"""

from __future__ import annotations

import numpy as np

from audit import linsolve, stiffness
from audit.model import FloatArray, Model

from .records import MECHANISM, NOT_CONVERGED, SOLVED, NonlinearReport, StateOutcome
from .search import StateData, reduced_compatibility, solve_state
from .updates import ActiveSolver

__all__ = [
    "MECHANISM",
    "NOT_CONVERGED",
    "SOLVED",
    "NonlinearReport",
    "StateOutcome",
    "mechanism_message",
    "solve_nonlinear",
    "state_actions",
]


def state_actions(model: Model) -> list[tuple[str, FloatArray, FloatArray, FloatArray]]:
    """(id, f, δ0, settlement) of every state: load cases, then combinations (their factored actions together)."""
    from audit.solve import case_vectors

    per_case = []
    for i, lc in enumerate(model.load_cases):
        f, _f0, d0 = case_vectors(model, i)
        per_case.append((lc.id, f, d0, lc.settlement))
    out = list(per_case)
    for comb in model.combinations:
        f = np.zeros(model.n_dofs)
        d0 = np.zeros(model.n_members)
        g = np.zeros(model.n_restraints)
        for ci, factor, _t in comb.factors:
            f = f + factor * per_case[ci][1]
            d0 = d0 + factor * per_case[ci][2]
            g = g + factor * per_case[ci][3]
        out.append((comb.id, f, d0, g))
    return out


def mechanism_message(model: Model, needed: tuple[int, ...]) -> str:
    """'stable only if D3 takes compression' for the members a mechanism needs in their slack sense."""
    if not needed:
        return "the active structure is a mechanism (the members that would stop it could not be named)"
    codes = model.behaviour_codes()
    parts = [f"{model.member_ids[i]} takes {'compression' if codes[i] > 0 else 'tension'}" for i in needed[:10]]
    more = f" (and {len(needed) - 10} more members)" if len(needed) > 10 else ""
    return "the active structure is a mechanism: stable only if " + ", ".join(parts) + more


def solve_nonlinear(model: Model, system, factor: linsolve.Factor, cond: float = float("nan")):
    """Solve every state of a non-linear model; see the module docstring.  Returns a :class:`Solution`."""
    from audit.solve import CaseSolution, Solution

    B = stiffness.compatibility_matrix(model)
    T = system.T
    Br = reduced_compatibility(B, T)
    Ks_r = (T.T @ system.K_springs @ T).tocsr()
    k = model.axial_stiffness()
    solver = ActiveSolver.build(Br, k, Ks_r, factor, "auto")
    sign = model.behaviour_codes().astype(np.int64)
    supported = np.zeros(model.n_nodes, dtype=bool)
    supported[system.supported_nodes] = True
    cases: list[CaseSolution] = []
    outcomes: list[StateOutcome] = []
    previous = None  # the last solved active set: the next state starts from it (its structure is stable)
    for case_id, f, d0, g in state_actions(model):
        up = system.U_p @ g
        data = StateData(c=d0 - B @ up, b0=np.asarray(T.T @ (f - system.K_springs @ up)))
        st = solve_state(solver, sign, data, previous)
        if st.status == SOLVED:
            previous = st.active
        method = "active set, then damped Newton" if st.damped else "active set"
        message = ""
        if st.status == MECHANISM:
            message = mechanism_message(model, st.needed)
        elif st.status == NOT_CONVERGED:
            message = (
                f"the non-linear solve did not converge in {st.iterations} iterations "
                f"(sign violation {st.complementarity:.2g} of the force scale left)"
            )
        outcomes.append(
            StateOutcome(case_id, st.status, st.active, st.iterations, method, message, st.needed, st.complementarity)
        )
        if st.status != SOLVED:
            continue
        u = up + T @ st.w
        n = k * st.active * (B @ u - d0)
        r = (B.T @ n - f).reshape(model.n_nodes, model.dim)
        r[~supported] = 0.0
        cases.append(
            CaseSolution(
                case_id=case_id,
                displacements=np.ascontiguousarray(u.reshape(model.n_nodes, model.dim)),
                axial_forces=np.ascontiguousarray(n),
                reactions=np.ascontiguousarray(r),
            )
        )
    report = NonlinearReport(tuple(outcomes), solver.factorisations, solver.updates, solver.largest_rank)
    return Solution(cases=tuple(cases), backend=factor.backend, condition_estimate=cond, nonlinear=report)
