"""The structural causes the diagnosis tests: one member's EA, one load, one support.

Each candidate is a prediction of what the source would have reported had it made that one mistake,
computed by superposition with the existing factor of the restrained stiffness (never a new
factorisation), and judged against the reported values with the audit's tolerances.  See
:mod:`audit.checks.diagnosis` for the method and its sources.

A family's candidates are predictions ``base + Σ coef · response column``; the response columns come from one
block solve, and the candidates are judged first by :meth:`Evaluator.lower_bounds` on a sample of the
reported quantities, then, where :class:`Search` needs it, exactly by :meth:`Evaluator.worst`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import shortest_path

from audit.checks import _common as cm
from audit.checks._diagnosis_block import (
    Candidate,
    Evaluator,
    Prediction,
    Search,
    Superposition,
    colmax,
    reaction_rows,
)
from audit.checks.compatibility import compatible_forces, implied_ea
from audit.checks.equilibrium import joint_residuals
from audit.context import Context
from audit.findings import Location
from audit.model import AXES, CaseResults, FloatArray, Model


# ----------------------------------------------------------------- 2. one member's EA
def member_candidates(
    ctx: Context,
    ev: Evaluator,
    obs: CaseResults,
    base: Prediction,
    solver: Superposition,
    d0: FloatArray,
    search: Search | None = None,
) -> list[Candidate]:
    """One candidate per suspect member (at most ``max_candidates``), with the EA that fits the results best.

    The suspects are the members whose reported force disagrees with the compatibility of the reported
    displacements (worst first), else those whose force or elongation differs most from the recomputation.
    All their responses come from one block solve; the fit of t and the bounds are reduced over all
    quantities as matrix products, and only the candidates that may explain the results (or be the closest)
    are evaluated one by one (:class:`Search`).
    """
    search = search if search is not None else Search()
    model, tol = ctx.model, ctx.tolerances
    compat_ea = np.full(model.n_members, np.nan)
    if obs.has_displacements and obs.has_axial_forces:
        Nc, qc, mech = compatible_forces(model, obs, d0)
        j = cm.judge(
            obs.axial_forces,
            Nc,
            cm.quantum_or_zero(obs.axial_force_quantum, obs.axial_forces) + qc,
            cm.scale_of(obs.axial_forces),
            tol,
        )
        compat_ea = implied_ea(model, obs.axial_forces, mech)
        ranked = np.flatnonzero(j.failed)
        ranked = ranked[np.argsort(-np.abs(j.difference[ranked]), kind="stable")]
    else:
        if obs.has_axial_forces:
            miss = np.abs(np.nan_to_num(obs.axial_forces - base.N))
        else:
            dU = np.nan_to_num(obs.displacements - base.U).reshape(-1)
            miss = np.abs(solver.B @ dU)
        ranked = np.argsort(-miss, kind="stable")
        ranked = ranked[miss[ranked] > 0]
    cands = ranked[: tol.max_candidates]
    if cands.size == 0:
        return []
    c = cands.size
    cols = np.arange(c)
    B, k = solver.B, solver.k
    Z = solver.displacements(B[cands].T.toarray())  # z = K⁻¹ b per candidate: one block solve
    # the unit responses (one unit of extra force t in member m): U −z, N −k∘(B z) + e_m, R masked Bᵀ N
    rows_R, at_R = reaction_rows(ev, solver)
    on_mask = solver.mask[rows_R // model.dim]
    weights = _fit_weights(obs, base, ev.actions)
    nmax, btn, num_n, den_n = solver.force_stats(Z, rows_R, -1.0, (cands, cols), weights.get("N"))
    uR = np.where(on_mask[:, None], btn, 0.0)
    num, den = _fit_sums(weights, Z, uR, rows_R, num_n, den_n)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(den > 0.0, num / den, np.nan)
    beta = (B[cands] @ Z)[cols, cols]
    e0 = B @ base.U.reshape(-1)
    strain = e0[cands] - d0[cands]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        denom = strain - t * beta
        dk = t / denom
        ea_new = (k[cands] + dk) * solver.L[cands]
        tsm = dk * strain / (1.0 + dk * beta)
    ok = np.isfinite(t) & (denom != 0.0) & np.isfinite(ea_new) & (ea_new > 0)
    keep = np.flatnonzero(ok)
    if keep.size == 0:
        return []
    tk = tsm[keep]
    rU, rN = ev.rows("U"), ev.rows("N")
    dN_S = -k[rN, None] * (B[rN] @ Z[:, keep])
    dN_S[rN[:, None] == cands[keep][None, :]] += 1.0
    sub = {
        "U": base.U.reshape(-1)[rU, None] - Z[rU][:, keep] * tk,
        "N": base.N[rN, None] + dN_S * tk,
        "R": base.R.reshape(-1)[rows_R[at_R], None] + uR[at_R][:, keep] * tk,
    }
    at = np.abs(tk)
    pmax = {
        "U": ev.base_max["U"] + at * colmax(Z)[keep],
        "N": ev.base_max["N"] + at * nmax[keep],
        "R": ev.base_max["R"] + at * colmax(uR)[keep],
    }
    lbs = ev.lower_bounds(sub, pmax)

    def exact(j: int) -> float:
        col, m = int(keep[j]), int(cands[keep[j]])
        z = Z[:, col]
        dN = -k * (B @ z)
        dN[m] += 1.0
        unit = solver.response(-z, dN, np.zeros_like(z))
        return ev.worst(sherman_morrison_member(base, unit, float(strain[col]), float(beta[col]), float(dk[col])))

    worst, done = search.settle(lbs, exact)
    out = []
    for jj, col in enumerate(keep.tolist()):
        m = int(cands[col])
        ea = float(model.E[m] * model.A[m])
        en = float(ea_new[col])
        data: list[tuple[str, Any]] = [
            ("member", model.member_ids[m]),
            ("model_EA", ea),
            ("implied_EA", en),
            ("EA_ratio", en / ea),
            ("extra_force", float(t[col])),
        ]
        if np.isfinite(compat_ea[m]):
            data.append(("compatibility_EA", float(compat_ea[m])))
        out.append(
            Candidate(
                code="DX104",
                message=f"member {model.member_ids[m]}: the reported results fit EA = {cm.fmt(en)} "
                f"({cm.fmt(en / ea)} × the model's {cm.fmt(ea)}): wrong section or material in the source",
                location=Location(member=model.member_ids[m]),
                worst=float(worst[jj]),
                data=tuple(data),
                exact=bool(done[jj]),
            )
        )
    return out


def _fit_weights(
    obs: CaseResults, base: Prediction, actions: cm.CaseActions
) -> dict[str, tuple[FloatArray, FloatArray]]:
    """Per kind, the weights ``((r − b)/s², ok/s²)`` of the least-squares amplitude t of ``base + t·unit``
    against the reported values r, ``t = Σ_kinds Σ_ok (r − b)·u / s² / Σ_kinds Σ_ok u² / s²``.

    Each kind's scale s is the largest |b| but at least the case's own scale from its actions (loads, free
    elongations), as in the Evaluator: a kind whose values are all rounding noise (the reactions of a
    self-equilibrated temperature case) must not dominate the fit through a tiny scale.
    """
    weights: dict[str, tuple[FloatArray, FloatArray]] = {}
    for key, rep, has, b, floor in (
        ("U", obs.displacements, obs.has_displacements, base.U, actions.length_scale),
        ("N", obs.axial_forces, obs.has_axial_forces, base.N, actions.force_scale),
        ("R", obs.reactions, obs.has_reactions, base.R, actions.force_scale),
    ):
        if not has:
            continue
        r, bb = np.ravel(rep), np.ravel(b)
        ok = np.isfinite(r)
        s = max(cm.scale_of(bb), floor)
        if s == 0 or not ok.any():
            continue
        weights[key] = (np.where(ok, r - bb, 0.0) / s**2, ok.astype(np.float64) / s**2)
    return weights


def _fit_sums(
    weights: dict[str, tuple[FloatArray, FloatArray]],
    Z: FloatArray,
    uR: FloatArray,
    rows_R: Any,
    num_n: FloatArray,
    den_n: FloatArray,
) -> tuple[FloatArray, FloatArray]:
    """Numerators and denominators of the fitted t of every member candidate (unit U = −z, R on rows_R)."""
    num = np.zeros(Z.shape[1])
    den = np.zeros(Z.shape[1])
    if "U" in weights:
        w, o = weights["U"]
        num -= w @ Z
        den += np.einsum("i,ij,ij->j", o, Z, Z)
    if "N" in weights:
        num += num_n
        den += den_n
    if "R" in weights:
        w, o = weights["R"]
        num += w[rows_R] @ uR
        den += np.einsum("i,ij,ij->j", o[rows_R], uR, uR)
    return num, den


def sherman_morrison_member(base: Prediction, unit: Prediction, strain: float, beta: float, dk: float) -> Prediction:
    """The solution with one member's stiffness k changed to k + Δk, from the rank-one update of K.

    ``(K + Δk b bᵀ)⁻¹ = K⁻¹ − Δk z zᵀ / (1 + Δk bᵀz)`` (Sherman–Morrison), applied to the loads with the
    member's initial-strain term; the result is ``base + t · unit`` with
    ``t = Δk (bᵀu − δ0) / (1 + Δk bᵀz)`` (``strain`` = bᵀu − δ0, ``beta`` = bᵀz).
    """
    t = dk * strain / (1.0 + dk * beta)
    return base.plus(unit, t)


# ----------------------------------------------------------------- 3. loads
#: suspicions of two loaded nodes closer than this share of the largest count as equal
RANK_RESOLUTION = 1e-3


def load_candidates(
    ctx: Context,
    ev: Evaluator,
    obs: CaseResults,
    base: Prediction,
    solver: Superposition,
    loads: FloatArray,
    only_supported: bool = False,
    search: Search | None = None,
    near: Callable[[], FloatArray | None] | None = None,
    residual: FloatArray | None = None,
) -> list[Candidate]:
    """A load missing (DX105), doubled (DX106) or moved to another node (DX107), for the most suspect loaded
    nodes (at most ``max_candidates``; ties in suspicion go to the nodes nearest the failing quantities,
    ``near()`` the member hops from each node to them).  ``residual``: the joint residuals of the reported
    forces when already computed.

    One block solve for the loads and one for the moved loads; the candidates are bounded together and only
    those that may explain the results (or be the closest) are evaluated one by one (:class:`Search`).
    """
    search = search if search is not None else Search()
    model, tol = ctx.model, ctx.tolerances
    loaded = np.flatnonzero(np.any(loads != 0.0, axis=1) & (solver.mask if only_supported else True))
    if loaded.size == 0:
        return []
    # evidence: the joint residual of the reported forces at each node (NaN when not reported)
    if not obs.has_axial_forces:
        res = np.full(loads.shape, np.nan)
    else:
        res = residual if residual is not None else joint_residuals(model, loads, obs)[0]
    rank = _load_rank(obs, base, loads, loaded, res if obs.has_axial_forces else None)
    hops = near() if near is not None and loaded.size > tol.max_candidates else None
    if hops is not None:
        # suspicions within RANK_RESOLUTION of the largest are a tie (rounding noise), broken by nearness
        top = float(np.max(np.abs(rank[np.isfinite(rank)]), initial=0.0))
        if top > 0:
            rank = np.round(rank / (RANK_RESOLUTION * top))
        loaded = loaded[np.lexsort((hops[loaded], rank))][: tol.max_candidates]
    else:
        loaded = loaded[np.argsort(rank, kind="stable")][: tol.max_candidates]
    d = model.dim
    targets = _move_targets(model, res if obs.has_axial_forces else None, loads, loaded)
    pairs = [(a, b) for a in loaded.tolist() for b in targets.get(a, []) if b != a][: tol.max_candidates]
    # load columns: each loaded node's load (0..nl-1), then each moved load at its target node
    at_node = [*loaded.tolist(), *(b for _a, b in pairs)]
    of_node = [*loaded.tolist(), *(a for a, _b in pairs)]
    r_i = [n * d + a for n in at_node for a in range(d)]
    c_i = [c for c in range(len(at_node)) for _a in range(d)]
    v_i = [float(loads[n, a]) for n in of_node for a in range(d)]
    FG = sp.csc_matrix((v_i, (r_i, c_i)), shape=(model.n_dofs, len(at_node)))
    # responses of the loads (columns 0..nl-1) and of the moved loads (the rest): one block solve
    dU = solver.displacements(FG)
    nl = loaded.size
    rows_R, at_R = reaction_rows(ev, solver)
    on_mask = solver.mask[rows_R // d]
    nmax, btn = _force_bounds(ev, solver, dU, rows_R)
    respR = np.where(on_mask[:, None], btn - FG[rows_R].toarray(), 0.0)
    rU, rN = ev.rows("U"), ev.rows("N")
    sU = dU[rU]
    sN = solver.k[rN, None] * (solver.B[rN] @ dU)
    sR = respR[at_R]
    umax, rmax = colmax(dU), colmax(respR)
    index = {node: c for c, node in enumerate(loaded.tolist())}
    # candidate j: base + Σ coef · response column; (column, coef) lists in the order of the findings list
    combos: list[list[tuple[int, float]]] = []
    for c in range(nl):
        combos += [[(c, -1.0)], [(c, 1.0)]]
    combos += [[(index[a], -1.0), (nl + c, 1.0)] for c, (a, _b) in enumerate(pairs)]
    C = np.zeros((FG.shape[1], len(combos)))
    for j, terms in enumerate(combos):
        for col, coef in terms:
            C[col, j] += coef
    bU, bN, bR = base.U.reshape(-1), base.N, base.R.reshape(-1)
    sub = {"U": bU[rU, None] + sU @ C, "N": bN[rN, None] + sN @ C, "R": bR[rows_R[at_R], None] + sR @ C}
    aC = np.abs(C)
    pmax = {"U": ev.base_max["U"] + umax @ aC, "R": ev.base_max["R"] + rmax @ aC}
    if nmax is not None:
        pmax["N"] = ev.base_max["N"] + nmax @ aC
    lbs = ev.lower_bounds(sub, pmax)

    def resp(col: int) -> Prediction:
        u = dU[:, col]
        return solver.response(u, solver.k * (solver.B @ u), FG[:, [col]].toarray().ravel())

    def exact(j: int) -> float:
        pred = base
        for col, coef in combos[j]:
            pred = pred.plus(resp(col), coef)
        return ev.worst(pred)

    worst, done = search.settle(lbs, exact)

    def residual_at(node: int) -> tuple[str, list[float]]:
        return ("joint_residual", [float(v) for v in res[node]])

    out: list[Candidate] = []
    funit = model.units.force
    j = 0
    for node in loaded.tolist():
        nid = model.node_ids[node]
        text = "(" + ", ".join(cm.fmt(float(v)) for v in loads[node]) + f") {funit}"
        for code, t, what in (("DX105", -1.0, "missing from"), ("DX106", 1.0, "applied twice in")):
            out.append(
                Candidate(
                    code=code,
                    message=f"the load {text} at node {nid} is {what} the source's analysis",
                    location=Location(node=nid),
                    worst=float(worst[j]),
                    data=(
                        ("node", nid),
                        ("load", [float(v) for v in loads[node]]),
                        ("factor_applied", 1.0 + t),
                        residual_at(node),
                    ),
                    exact=bool(done[j]),
                )
            )
            j += 1
    for a, b in pairs:
        na, nb = model.node_ids[a], model.node_ids[b]
        out.append(
            Candidate(
                code="DX107",
                message=f"the load at node {na} was applied at node {nb} in the source's analysis",
                location=Location(node=na),
                worst=float(worst[j]),
                data=(
                    ("node", na),
                    ("applied_at", nb),
                    ("load", [float(v) for v in loads[a]]),
                    residual_at(a),
                    ("joint_residual_at_target", [float(v) for v in res[b]]),
                ),
                exact=bool(done[j]),
            )
        )
        j += 1
    return out


def _force_bounds(ev: Evaluator, solver: Superposition, X: FloatArray, rows_R: Any) -> tuple[Any, FloatArray]:
    """(column max |k∘(B X)| or None, ``Bᵀ k∘(B X)`` on ``rows_R``) for displacement columns X.

    With displacements reported they bound the candidates well on their own, and the member forces are
    left out of the bounds (:meth:`Evaluator.lower_bounds`): no reduction over all members is needed.
    """
    if ev.reports("U"):
        return None, solver.forces_on_rows(X, rows_R)
    nmax, btn, _n, _d = solver.force_stats(X, rows_R)
    return nmax, btn


def _load_rank(obs: CaseResults, base: Prediction, loads: FloatArray, loaded: Any, res: Any) -> FloatArray:
    """Order of the loaded nodes to try, most suspect first (smaller is tried earlier).

    With reported forces (their joint residuals ``res``): how far the joint residual is from ±the node's
    load (missing, doubled or moved loads leave exactly that); else how much the node's reported
    displacement differs; else the load size.
    """
    f = loads[loaded]
    size = np.linalg.norm(f, axis=1)
    if res is not None:
        r = np.nan_to_num(res[loaded], nan=np.inf)
        return np.minimum(np.linalg.norm(r - f, axis=1), np.linalg.norm(r + f, axis=1)) / size
    if obs.has_displacements:
        return -np.linalg.norm(np.nan_to_num(obs.displacements[loaded] - base.U[loaded]), axis=1)
    return -size


def _move_targets(model: Model, res: Any, loads: FloatArray, loaded: Any) -> dict[int, list[int]]:
    """Where each loaded node's load may have gone: joints whose residual is −load, else neighbours."""
    targets: dict[int, list[int]] = {}
    if res is not None and loaded.size:
        # ‖r + f‖ ≤ 0.05‖f‖ needs ‖r‖ ≥ 0.95‖f‖: only those joints are compared with each load
        rnorm = np.linalg.norm(np.nan_to_num(res, nan=0.0), axis=1)
        fmin = float(np.min(np.linalg.norm(loads[loaded], axis=1)))
        pool = np.flatnonzero((rnorm >= 0.95 * fmin * (1.0 - 1e-12)) & np.all(np.isfinite(res), axis=1))
    ends = np.isin(model.conn, loaded)
    first = model.conn[ends[:, 0]]
    second = model.conn[ends[:, 1]]
    for a in loaded.tolist():
        f = loads[a]
        picks: list[int] = []
        if res is not None:
            diff = np.linalg.norm(res[pool] + f, axis=1)
            near = pool[diff <= 0.05 * np.linalg.norm(f)]
            picks = [int(b) for b in near if b != a]
        if not picks:
            nb = np.concatenate([first[first[:, 0] == a, 1], second[second[:, 1] == a, 0]])
            picks = sorted(set(int(b) for b in nb))
        targets[a] = picks
    return targets


def locality(model: Model, failing_nodes: Any) -> FloatArray:
    """(n_nodes,) number of member hops from each node to the nearest of ``failing_nodes`` (inf where no
    path leads; all zero when there are none): one breadth-first search from an extra joint tied to all of
    them (scipy's unweighted shortest paths), minus the tie."""
    sources = np.unique(np.asarray(failing_nodes, dtype=np.int64))
    n = model.n_nodes
    if sources.size == 0:
        return np.zeros(n)
    a = np.concatenate([model.conn[:, 0], np.full(sources.size, n)])
    b = np.concatenate([model.conn[:, 1], sources])
    g = sp.csr_matrix((np.ones(a.size), (a, b)), shape=(n + 1, n + 1))
    dist = shortest_path(g, directed=False, unweighted=True, indices=n)
    return np.asarray(dist[:n], dtype=np.float64) - 1.0


# ----------------------------------------------------------------- 4. supports
#: restraints released per block solve (each is a dense column of n_dofs)
RELEASE_BATCH = 48


@dataclass
class _Pending:
    """A support candidate before its figure is known: its finding and how to evaluate it exactly."""

    code: str
    message: str
    location: Location
    data: tuple[tuple[str, Any], ...]
    exact: Callable[[], float]


def support_candidates(
    ctx: Context,
    ev: Evaluator,
    obs: CaseResults,
    base: Prediction,
    solver: Superposition,
    loads: FloatArray,
    search: Search | None = None,
) -> list[Candidate]:
    """A support the source had and the model lacks (DX108), or the reverse (DX109), by superposition:
    one block solve for the restraints added and one per ``RELEASE_BATCH`` restraints released."""
    search = search if search is not None else Search()
    model, tol = ctx.model, ctx.tolerances
    d = model.dim
    pending: list[_Pending] = []
    subs: list[dict[str, FloatArray]] = []
    pmaxs: list[dict[str, FloatArray]] = []
    bU, bN, bR = base.U.reshape(-1), base.N, base.R.reshape(-1)
    rU, rN = ev.rows("U"), ev.rows("N")
    # (a) a reaction at a node the model does not support: add the restraint the reaction shows
    if obs.has_reactions:
        R = np.nan_to_num(obs.reactions)
        scale = cm.scale_of(R, loads)
        unsup = np.flatnonzero(
            ~solver.mask & np.any(np.abs(R) > ctx.tolerances.floor * scale + obs.reaction_quantum, axis=1)
        )[: tol.max_candidates]
        axes_of = {
            int(node): [a for a in range(d) if abs(R[node, a]) > tol.floor * scale + obs.reaction_quantum[node, a]]
            for node in unsup.tolist()
        }
        dofs = [node * d + a for node in unsup.tolist() for a in axes_of[int(node)]]
        if dofs:
            E = sp.csc_matrix(
                (np.ones(len(dofs)), (np.asarray(dofs), np.arange(len(dofs)))), shape=(model.n_dofs, len(dofs))
            )
            Zall = solver.displacements(E)  # one block solve for every restraint added
            rows_R, at_R = reaction_rows(ev, solver, unsup)
            nmax, btn = _force_bounds(ev, solver, Zall, rows_R)
            zmax = colmax(Zall)
            sN_all = solver.k[rN, None] * (solver.B[rN] @ Zall)
            start = 0
            for node in unsup.tolist():
                axes = axes_of[int(node)]
                cols = np.arange(start, start + len(axes))
                start += len(axes)
                Z = Zall[:, cols]
                flex = Z[[node * d + a for a in axes]]
                if np.linalg.matrix_rank(flex) < len(axes):
                    continue
                X = np.linalg.solve(flex, -np.array([bU[node * d + a] for a in axes]))
                mask = solver.mask.copy()
                mask[node] = True
                incR = np.where(mask[rows_R // d][:, None], btn[:, cols], 0.0) @ X
                subs.append(
                    {"U": bU[rU] + Z[rU] @ X, "N": bN[rN] + sN_all[:, cols] @ X, "R": bR[rows_R[at_R]] + incR[at_R]}
                )
                aX = np.abs(X)
                pmaxs.append(
                    {
                        "U": np.array([ev.base_max["U"] + zmax[cols] @ aX]),
                        "R": np.array([ev.base_max["R"] + float(np.max(np.abs(incR), initial=0.0))]),
                    }
                    | ({} if nmax is None else {"N": np.array([ev.base_max["N"] + nmax[cols] @ aX])})
                )

                def exact_added(Z: FloatArray = Z, X: FloatArray = X, mask: cm.BoolArray = mask) -> float:
                    dU = Z @ X
                    inc = solver.response(dU, solver.k * (solver.B @ dU), np.zeros(model.n_dofs), mask)
                    return ev.worst(Prediction(base.U + inc.U, base.N + inc.N, base.R + inc.R))

                nid = model.node_ids[node]
                names = ", ".join(AXES[a] for a in axes)
                pending.append(
                    _Pending(
                        "DX108",
                        f"node {nid} carries a reported reaction along {names} but has no support in the model: "
                        "the source supported it",
                        Location(node=nid),
                        (
                            ("node", nid),
                            ("axes", tuple(AXES[a] for a in axes)),
                            ("reaction_added", [float(x) for x in X]),
                        ),
                        exact_added,
                    )
                )
    # (b) a support of the model the source did not have: release it
    if model.n_restraints:
        nodes = np.unique(model.restraint_node)
        if obs.has_reactions:
            gap = np.array([np.nanmax(np.abs(np.nan_to_num(obs.reactions[n]) - base.R[n])) for n in nodes])
            nodes = nodes[np.argsort(-gap, kind="stable")]
        chunk: list[int] = []
        for node in nodes[: tol.max_candidates].tolist():
            chunk.append(int(node))
            if np.isin(model.restraint_node, chunk).sum() >= RELEASE_BATCH:
                _release_nodes(ctx, ev, base, solver, chunk, pending, subs, pmaxs)
                chunk = []
        if chunk:
            _release_nodes(ctx, ev, base, solver, chunk, pending, subs, pmaxs)
    if not pending:
        return []
    sub = {key: np.hstack([s[key].reshape(-1, 1) for s in subs]) for key in ("U", "N", "R")}
    pmax = {key: np.concatenate([p[key] for p in pmaxs]) for key in ("U", "N", "R") if all(key in p for p in pmaxs)}
    worst, done = search.settle(ev.lower_bounds(sub, pmax), lambda j: pending[j].exact())
    return [
        Candidate(p.code, p.message, p.location, float(worst[j]), p.data, bool(done[j])) for j, p in enumerate(pending)
    ]


def _release_nodes(
    ctx: Context,
    ev: Evaluator,
    base: Prediction,
    solver: Superposition,
    nodes: list[int],
    pending: list[_Pending],
    subs: list[dict[str, FloatArray]],
    pmaxs: list[dict[str, FloatArray]],
) -> None:
    """Release each restraint of ``nodes`` alone, and all of a node's restraints together, by superposition of
    settlements (one block solve with the existing factor for all of them).

    A settlement g along the released restraints is chosen so that their reactions vanish:
    ``R_m g = −(n_i · r)``, R_m the reactions along the restraints per unit settlement.
    """
    model = ctx.model
    d = model.dim
    ridx = np.flatnonzero(np.isin(model.restraint_node, nodes))
    S = sp.csc_matrix(ctx.system.U_p[:, ridx])  # unit settlements, restrained part
    K = ctx.system
    Ssol = solver.displacements(-(K.K @ S + K.K_springs @ S)) + S.toarray()
    rows_R, at_R = reaction_rows(ev, solver)
    nmax, btn = _force_bounds(ev, solver, Ssol, rows_R)
    smax = colmax(Ssol)
    rU, rN = ev.rows("U"), ev.rows("N")
    sN = solver.k[rN, None] * (solver.B[rN] @ Ssol)
    bR = base.R.reshape(-1)
    col = {int(r): c for c, r in enumerate(ridx.tolist())}
    for node in nodes:
        idx = np.flatnonzero(model.restraint_node == node)
        for sub in [idx[i : i + 1] for i in range(idx.size)] + ([idx] if idx.size > 1 else []):
            cols = [col[int(r)] for r in sub]
            dR_node = btn[np.searchsorted(rows_R, node * d + np.arange(d))][:, cols]  # (dim, len(sub))
            Rm = model.restraint_dir[sub] @ dR_node
            if np.linalg.matrix_rank(Rm) < len(sub) or np.linalg.cond(Rm) > 1e12:
                continue  # released, the structure would be a mechanism
            g = np.linalg.solve(Rm, -(model.restraint_dir[sub] @ base.R[node]))
            mask = solver.mask.copy()
            remaining = np.count_nonzero(model.restraint_node == node) - len(sub)
            if remaining == 0 and not np.any(model.spring_node == node):
                mask[node] = False
            R_rows = np.where(mask[rows_R // d], bR[rows_R] + btn[:, cols] @ g, 0.0)
            subs.append(
                {
                    "U": base.U.reshape(-1)[rU] + Ssol[rU][:, cols] @ g,
                    "N": base.N[rN] + sN[:, cols] @ g,
                    "R": R_rows[at_R],
                }
            )
            ag = np.abs(g)
            pmaxs.append(
                {
                    "U": np.array([ev.base_max["U"] + smax[cols] @ ag]),
                    "R": np.array([float(np.max(np.abs(R_rows), initial=0.0))]),
                }
                | ({} if nmax is None else {"N": np.array([ev.base_max["N"] + nmax[cols] @ ag])})
            )

            def exact_released(cols: list[int] = cols, g: FloatArray = g, mask: cm.BoolArray = mask) -> float:
                dU = Ssol[:, cols] @ g
                dN = solver.k * (solver.B @ dU)
                R_new = base.R + (solver.B.T @ dN).reshape(-1, d)
                R_new[~mask] = 0.0
                return ev.worst(Prediction(base.U + dU.reshape(-1, d), base.N + dN, R_new))

            nid = model.node_ids[node]
            labels = tuple(model.restraint_label[i] for i in sub)
            pending.append(
                _Pending(
                    "DX109",
                    f"the source's results fit the model without the restraint(s) {', '.join(labels)} at node {nid}",
                    Location(node=nid, axis=labels[0] if len(labels) == 1 and labels[0] in AXES else None),
                    (("node", nid), ("restraints_released", labels), ("settlement_equivalent", [float(x) for x in g])),
                    exact_released,
                )
            )
