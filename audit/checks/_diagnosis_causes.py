"""The structural causes the diagnosis tests: one member's EA, one load, one support.

Each candidate is a prediction of what the source would have reported had it made that one mistake,
computed by superposition with the existing factor of the restrained stiffness (never a new
factorisation), and judged against the reported values with the audit's tolerances.  See
:mod:`audit.checks.diagnosis` for the method and its sources.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from audit import stiffness
from audit.checks import _common as cm
from audit.checks.compatibility import compatible_forces, implied_ea
from audit.checks.equilibrium import joint_residuals
from audit.context import Context
from audit.findings import Location
from audit.model import AXES, CaseResults, FloatArray, Model


@dataclass(frozen=True)
class Prediction:
    """What the reported values should be if a candidate cause is the right one."""

    U: FloatArray  #: (n_nodes, dim)
    N: FloatArray  #: (n_members,)
    R: FloatArray  #: (n_nodes, dim)

    def plus(self, other: Prediction, t: float = 1.0) -> Prediction:
        return Prediction(self.U + t * other.U, self.N + t * other.N, self.R + t * other.R)


@dataclass(frozen=True)
class Candidate:
    code: str
    message: str
    location: Location
    worst: float  #: largest |difference|/allowed over every reported quantity after the correction
    data: tuple[tuple[str, Any], ...]


class Superposition:
    """Responses of the model by superposition with the existing factor of the restrained K."""

    def __init__(self, ctx: Context) -> None:
        assert ctx.factor is not None
        self.model = ctx.model
        self.T = ctx.system.T
        self.Kt = ctx.system.K + ctx.system.K_springs
        self.U_p = ctx.system.U_p
        self.factor = ctx.factor
        self.B = stiffness.compatibility_matrix(ctx.model)
        self.k = ctx.model.axial_stiffness()
        self.mask = np.zeros(ctx.model.n_nodes, dtype=bool)
        self.mask[ctx.system.supported_nodes] = True

    def displacements(self, F: FloatArray) -> FloatArray:
        """(n_dofs, c) displacements under global load columns F (restraints held)."""
        rhs = self.T.T @ F
        W = self.factor.solve(rhs).reshape(rhs.shape)
        return np.asarray(self.T @ W)

    def response(self, dU: FloatArray, dN: FloatArray, dF: FloatArray, mask: cm.BoolArray | None = None) -> Prediction:
        """Prediction increment from a displacement increment, member force increment and load increment."""
        m = self.mask if mask is None else mask
        d = self.model.dim
        dR = (self.B.T @ dN - dF).reshape(-1, d)
        dR[~m] = 0.0
        return Prediction(dU.reshape(-1, d), dN, dR)


class Evaluator:
    """Largest |reported − predicted| / allowed over every reported quantity, for many candidate predictions.

    The same rule as :func:`audit.checks.recompute.compare_case` (scales per kind from the prediction and the
    case's actions), with the reported values, quanta and masks prepared once.
    """

    def __init__(self, model: Model, actions: cm.CaseActions, obs: CaseResults, tol: Any) -> None:
        self.tol = tol
        self.actions = actions
        self.parts = []
        for key, vals, q, has in (
            ("U", obs.displacements, obs.displacement_quantum, obs.has_displacements),
            ("N", obs.axial_forces, obs.axial_force_quantum, obs.has_axial_forces),
            ("R", obs.reactions, obs.reaction_quantum, obs.has_reactions),
        ):
            flat = np.ravel(vals)
            idx = np.flatnonzero(np.isfinite(flat)) if has else np.zeros(0, dtype=np.int64)
            quantum = np.nan_to_num(np.ravel(q)[idx], nan=0.0) if tol.use_quanta else np.zeros(idx.size)
            self.parts.append((key, idx, flat[idx], quantum, cm.scale_of(flat[idx])))

    def worst(self, pred: Prediction) -> float:
        a, tol = self.actions, self.tol
        out = 0.0
        for key, idx, rep, q, rep_scale in self.parts:
            if idx.size == 0:
                continue
            p = np.ravel(getattr(pred, key))
            if key == "U":
                scale = cm.first_nonzero(max(cm.scale_of(p), a.length_scale), rep_scale)
            elif key == "R":
                scale = cm.first_nonzero(max(cm.scale_of(p, a.loads), a.force_scale), rep_scale)
            else:
                scale = cm.first_nonzero(max(cm.scale_of(p), a.force_scale), rep_scale)
            sub = p[idx]
            allowed = q + np.maximum(tol.relative * np.abs(sub), tol.floor * scale)
            out = max(out, float(np.max(np.abs(rep - sub) / np.maximum(allowed, 1e-300))))
        return out


# ----------------------------------------------------------------- 2. one member's EA
def member_candidates(
    ctx: Context, ev: Evaluator, obs: CaseResults, base: Prediction, solver: Superposition, d0: FloatArray
) -> list[Candidate]:
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
    bcols = solver.B[cands].T.toarray()  # (n_dofs, c): compatibility rows of the candidates
    Z = solver.displacements(bcols)  # z = K⁻¹ b per candidate
    out = []
    e0 = solver.B @ base.U.reshape(-1)
    for col, m in enumerate(cands.tolist()):
        z = Z[:, col]
        dN = -solver.k * (solver.B @ z)
        dN[m] += 1.0
        unit = solver.response(-z, dN, np.zeros_like(z))  # response to one unit of extra force t in member m
        t = _fit_t(obs, base, unit, ev.actions)
        if t is None:
            continue
        beta = float((solver.B[m] @ z)[0])
        denom = float(e0[m] - d0[m]) - t * beta
        if denom == 0.0:
            continue
        dk = t / denom
        ea_new = (solver.k[m] + dk) * float(model.lengths()[m])
        if not np.isfinite(ea_new) or ea_new <= 0:
            continue
        pred = sherman_morrison_member(base, unit, float(e0[m] - d0[m]), beta, dk)
        worst = ev.worst(pred)
        ea = float(model.E[m] * model.A[m])
        data: list[tuple[str, Any]] = [
            ("member", model.member_ids[m]),
            ("model_EA", ea),
            ("implied_EA", ea_new),
            ("EA_ratio", ea_new / ea),
            ("extra_force", t),
        ]
        if np.isfinite(compat_ea[m]):
            data.append(("compatibility_EA", float(compat_ea[m])))
        out.append(
            Candidate(
                code="DX104",
                message=f"member {model.member_ids[m]}: the reported results fit EA = {cm.fmt(ea_new)} "
                f"({cm.fmt(ea_new / ea)} × the model's {cm.fmt(ea)}): wrong section or material in the source",
                location=Location(member=model.member_ids[m]),
                worst=worst,
                data=tuple(data),
            )
        )
    return out


def sherman_morrison_member(base: Prediction, unit: Prediction, strain: float, beta: float, dk: float) -> Prediction:
    """The solution with one member's stiffness k changed to k + Δk, from the rank-one update of K.

    ``(K + Δk b bᵀ)⁻¹ = K⁻¹ − Δk z zᵀ / (1 + Δk bᵀz)`` (Sherman–Morrison), applied to the loads with the
    member's initial-strain term; the result is ``base + t · unit`` with
    ``t = Δk (bᵀu − δ0) / (1 + Δk bᵀz)`` (``strain`` = bᵀu − δ0, ``beta`` = bᵀz).
    """
    t = dk * strain / (1.0 + dk * beta)
    return base.plus(unit, t)


def _fit_t(obs: CaseResults, base: Prediction, unit: Prediction, actions: cm.CaseActions) -> float | None:
    """Least-squares amplitude t of ``base + t·unit`` against the reported values (each kind over its scale).

    Each kind's scale is at least the case's own scale from its actions (loads, free elongations), as in
    the Evaluator: a kind whose values are all rounding noise (the reactions of a self-equilibrated
    temperature case) must not dominate the fit through a tiny scale.
    """
    num = den = 0.0
    pairs = (
        (obs.displacements, obs.has_displacements, base.U, unit.U, actions.length_scale),
        (obs.axial_forces, obs.has_axial_forces, base.N, unit.N, actions.force_scale),
        (obs.reactions, obs.has_reactions, base.R, unit.R, actions.force_scale),
    )
    for rep, has, b, u, floor in pairs:
        if not has:
            continue
        ok = np.isfinite(rep)
        s = max(cm.scale_of(b), floor)
        if s == 0 or not ok.any():
            continue
        num += float((rep[ok] - b[ok]) @ u[ok]) / s**2
        den += float(u[ok] @ u[ok]) / s**2
    if den <= 0.0 or not np.isfinite(num / den):
        return None
    return num / den


# ----------------------------------------------------------------- 3. loads
def load_candidates(
    ctx: Context,
    ev: Evaluator,
    obs: CaseResults,
    base: Prediction,
    solver: Superposition,
    loads: FloatArray,
    only_supported: bool = False,
) -> list[Candidate]:
    model, tol = ctx.model, ctx.tolerances
    loaded = np.flatnonzero(np.any(loads != 0.0, axis=1) & (solver.mask if only_supported else True))
    if loaded.size == 0:
        return []
    loaded = loaded[np.argsort(_load_rank(ctx.model, obs, base, loads, loaded), kind="stable")][: tol.max_candidates]
    d = model.dim
    F = np.zeros((model.n_dofs, loaded.size))
    for c, node in enumerate(loaded.tolist()):
        F[node * d : node * d + d, c] = loads[node]
    dU = solver.displacements(F)
    resp = [solver.response(dU[:, c], solver.k * (solver.B @ dU[:, c]), F[:, c]) for c in range(loaded.size)]
    # evidence: the joint residual of the reported forces at each candidate node (NaN when not reported)
    res = joint_residuals(model, loads, obs)[0] if obs.has_axial_forces else np.full(loads.shape, np.nan)

    def residual_at(node: int) -> tuple[str, list[float]]:
        return ("joint_residual", [float(v) for v in res[node]])

    out: list[Candidate] = []
    funit = model.units.force
    for c, node in enumerate(loaded.tolist()):
        nid = model.node_ids[node]
        text = "(" + ", ".join(cm.fmt(float(v)) for v in loads[node]) + f") {funit}"
        for code, t, what in (("DX105", -1.0, "missing from"), ("DX106", 1.0, "applied twice in")):
            worst = ev.worst(base.plus(resp[c], t))
            out.append(
                Candidate(
                    code=code,
                    message=f"the load {text} at node {nid} is {what} the source's analysis",
                    location=Location(node=nid),
                    worst=worst,
                    data=(
                        ("node", nid),
                        ("load", [float(v) for v in loads[node]]),
                        ("factor_applied", 1.0 + t),
                        residual_at(node),
                    ),
                )
            )
    # moved: to the nodes the joint residuals point at, else to the loaded node's neighbours
    targets = _move_targets(ctx, obs, loads, loaded)
    pairs = [(a, b) for a in loaded.tolist() for b in targets.get(a, []) if b != a][: tol.max_candidates]
    if pairs:
        G = np.zeros((model.n_dofs, len(pairs)))
        for c, (a, b) in enumerate(pairs):
            G[b * d : b * d + d, c] = loads[a]
        dV = solver.displacements(G)
        index = {node: c for c, node in enumerate(loaded.tolist())}
        for c, (a, b) in enumerate(pairs):
            there = solver.response(dV[:, c], solver.k * (solver.B @ dV[:, c]), G[:, c])
            pred = base.plus(resp[index[a]], -1.0).plus(there)
            worst = ev.worst(pred)
            na, nb = model.node_ids[a], model.node_ids[b]
            out.append(
                Candidate(
                    code="DX107",
                    message=f"the load at node {na} was applied at node {nb} in the source's analysis",
                    location=Location(node=na),
                    worst=worst,
                    data=(
                        ("node", na),
                        ("applied_at", nb),
                        ("load", [float(v) for v in loads[a]]),
                        residual_at(a),
                        ("joint_residual_at_target", [float(v) for v in res[b]]),
                    ),
                )
            )
    return out


def _load_rank(model: Model, obs: CaseResults, base: Prediction, loads: FloatArray, loaded: Any) -> FloatArray:
    """Order of the loaded nodes to try, most suspect first (smaller is tried earlier).

    With reported forces: how far the joint residual is from ±the node's load (missing, doubled or moved
    loads leave exactly that); else how much the node's reported displacement differs; else the load size.
    """
    f = loads[loaded]
    size = np.linalg.norm(f, axis=1)
    if obs.has_axial_forces:
        res, _q, _m = joint_residuals(model, loads, obs)
        r = np.nan_to_num(res[loaded], nan=np.inf)
        return np.minimum(np.linalg.norm(r - f, axis=1), np.linalg.norm(r + f, axis=1)) / size
    if obs.has_displacements:
        return -np.linalg.norm(np.nan_to_num(obs.displacements[loaded] - base.U[loaded]), axis=1)
    return -size


def _move_targets(ctx: Context, obs: CaseResults, loads: FloatArray, loaded: Any) -> dict[int, list[int]]:
    """Where each loaded node's load may have gone: joints whose residual is −load, else neighbours."""
    model = ctx.model
    targets: dict[int, list[int]] = {}
    res = None
    if obs.has_axial_forces:
        res, _q, _mag = joint_residuals(model, loads, obs)
    for a in loaded.tolist():
        f = loads[a]
        picks: list[int] = []
        if res is not None:
            diff = np.linalg.norm(np.nan_to_num(res + f, nan=np.inf), axis=1)
            near = np.flatnonzero(diff <= 0.05 * np.linalg.norm(f))
            picks = [int(b) for b in near if b != a]
        if not picks:
            nb = np.concatenate([model.conn[model.conn[:, 0] == a, 1], model.conn[model.conn[:, 1] == a, 0]])
            picks = sorted(set(int(b) for b in nb))
        targets[a] = picks
    return targets


# ----------------------------------------------------------------- 4. supports
def support_candidates(
    ctx: Context, ev: Evaluator, obs: CaseResults, base: Prediction, solver: Superposition, loads: FloatArray
) -> list[Candidate]:
    model, tol = ctx.model, ctx.tolerances
    d = model.dim
    out: list[Candidate] = []
    # (a) a reaction at a node the model does not support: add the restraint the reaction shows
    if obs.has_reactions:
        R = np.nan_to_num(obs.reactions)
        scale = cm.scale_of(R, loads)
        unsup = np.flatnonzero(
            ~solver.mask & np.any(np.abs(R) > ctx.tolerances.floor * scale + obs.reaction_quantum, axis=1)
        )
        for node in unsup[: tol.max_candidates].tolist():
            axes = [a for a in range(d) if abs(R[node, a]) > tol.floor * scale + obs.reaction_quantum[node, a]]
            E = np.zeros((model.n_dofs, len(axes)))
            for c, a in enumerate(axes):
                E[node * d + a, c] = 1.0
            Z = solver.displacements(E)
            flex = E.T @ Z
            if np.linalg.matrix_rank(flex) < len(axes):
                continue
            X = np.linalg.solve(flex, -E.T @ base.U.reshape(-1))
            dU = Z @ X
            mask = solver.mask.copy()
            mask[node] = True
            inc = solver.response(dU, solver.k * (solver.B @ dU), np.zeros(model.n_dofs), mask)
            # the reactions of the base solution plus the new support's own
            pred = Prediction(base.U + inc.U, base.N + inc.N, base.R + inc.R)
            worst = ev.worst(pred)
            nid = model.node_ids[node]
            names = ", ".join(AXES[a] for a in axes)
            out.append(
                Candidate(
                    code="DX108",
                    message=f"node {nid} carries a reported reaction along {names} but has no support in the model: "
                    f"the source supported it",
                    location=Location(node=nid),
                    worst=worst,
                    data=(
                        ("node", nid),
                        ("axes", tuple(AXES[a] for a in axes)),
                        ("reaction_added", [float(x) for x in X]),
                    ),
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
                out += _release_nodes(ctx, ev, obs, base, solver, chunk)
                chunk = []
        if chunk:
            out += _release_nodes(ctx, ev, obs, base, solver, chunk)
    return out


#: restraints released per batched solve (each costs a dense column of n_dofs per solve)
RELEASE_BATCH = 16


def _release_nodes(
    ctx: Context, ev: Evaluator, obs: CaseResults, base: Prediction, solver: Superposition, nodes: list[int]
) -> list[Candidate]:
    """Release each restraint of ``nodes`` alone, and all of a node's restraints together, by superposition of
    settlements (one batched solve with the existing factor for all of them).

    A settlement g along the released restraints is chosen so that their reactions vanish:
    ``R_m g = −(n_i · r)``, R_m the reactions along the restraints per unit settlement.
    """
    model = ctx.model
    d = model.dim
    ridx = np.flatnonzero(np.isin(model.restraint_node, nodes))
    S = np.asarray(ctx.system.U_p[:, ridx].todense())  # unit settlements, restrained part
    Ssol = S + solver.displacements(-(solver.Kt @ S))
    dN_all = solver.k[:, None] * (solver.B @ Ssol)
    dR_all = (solver.B.T @ dN_all).reshape(model.n_nodes, d, ridx.size)
    col = {int(r): c for c, r in enumerate(ridx.tolist())}
    out = []
    for node in nodes:
        idx = np.flatnonzero(model.restraint_node == node)
        for sub in [idx[i : i + 1] for i in range(idx.size)] + ([idx] if idx.size > 1 else []):
            cols = [col[int(r)] for r in sub]
            cand = _release(ctx, ev, obs, base, solver, sub, Ssol[:, cols], dN_all[:, cols], dR_all[:, :, cols])
            if cand is not None:
                out.append(cand)
    return out


def _release(
    ctx: Context,
    ev: Evaluator,
    obs: CaseResults,
    base: Prediction,
    solver: Superposition,
    idx: Any,
    Ssol: FloatArray,
    dN: FloatArray,
    dR: FloatArray,
) -> Candidate | None:
    """The candidate "the source had no restraints ``idx``" from their unit-settlement responses."""
    model = ctx.model
    d = model.dim
    node = int(model.restraint_node[idx[0]])
    Rm = np.einsum("ia,aj->ij", model.restraint_dir[idx], dR[node])
    if np.linalg.matrix_rank(Rm) < len(idx) or np.linalg.cond(Rm) > 1e12:
        return None  # released, the structure would be a mechanism
    g = np.linalg.solve(Rm, -(model.restraint_dir[idx] @ base.R[node]))
    mask = solver.mask.copy()
    remaining = np.count_nonzero(model.restraint_node == node) - len(idx)
    if remaining == 0 and not np.any(model.spring_node == node):
        mask[node] = False
    R_new = base.R + dR @ g
    R_new[~mask] = 0.0
    pred = Prediction(base.U + (Ssol @ g).reshape(-1, d), base.N + dN @ g, R_new)
    worst = ev.worst(pred)
    nid = model.node_ids[node]
    labels = tuple(model.restraint_label[i] for i in idx)
    return Candidate(
        code="DX109",
        message=f"the source's results fit the model without the restraint(s) {', '.join(labels)} at node {nid}",
        location=Location(node=nid, axis=labels[0] if len(labels) == 1 and labels[0] in AXES else None),
        worst=worst,
        data=(("node", nid), ("restraints_released", labels), ("settlement_equivalent", [float(x) for x in g])),
    )
