"""Supports: one the source had and the model lacks (DX108), one of the model the source did not have
(DX109), and an inclined support entered along another direction (DX113).

:func:`support_candidates` is the single-cause search; :func:`candidates` gives the same causes and the
inclined support to the multi-cause fit, all by superposition with the existing factor.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks.diagnosis.base import CHECK_ID, RANK_STRUCTURAL, Cause
from audit.checks.diagnosis.block import (
    Candidate,
    Evaluator,
    Needs,
    Prediction,
    Search,
    Superposition,
    colmax,
    reaction_rows,
)
from audit.checks.diagnosis.fit import Plan, Problem
from audit.checks.diagnosis.loads import _force_bounds
from audit.context import Context
from audit.findings import Location, Severity
from audit.model import AXES, CaseResults, FloatArray
from audit.rules import Rule

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
            Zall = solver.dof_columns(dofs)  # one block solve for every restraint added (kept for the fit)
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
    Ssol = solver.settlements(ridx)  # unit settlements: one block solve (kept for the fit)
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


# ----------------------------------------------------------------- for the multi-cause fit
RULES = (
    Rule("DX108", Severity.WARNING, "the source had a support where the model has none", CHECK_ID),
    Rule("DX109", Severity.WARNING, "the model has a support the source did not have", CHECK_ID),
)


def plan(pb: Problem) -> Plan:
    """The nodes of :func:`candidates`: ((node, axes) of each support added, the supported nodes to release,
    their restraints), with the unit-force responses and the unit settlements they need."""
    model, obs, tol, solver = pb.model, pb.obs, pb.tol, pb.solver
    d = model.dim
    added: list[tuple[int, list[int]]] = []
    if obs.has_reactions:
        R = np.nan_to_num(obs.reactions)
        scale = cm.scale_of(R, pb.actions.loads)
        big = np.abs(R) > tol.floor * scale + obs.reaction_quantum
        unsup = np.flatnonzero(~solver.mask & np.any(big, axis=1))[: pb.limit]
        added = [(node, [a for a in range(d) if big[node, a]]) for node in unsup.tolist()]
    nodes = np.zeros(0, dtype=np.int64)
    ridx = np.zeros(0, dtype=np.int64)
    if model.n_restraints:
        nodes = np.unique(model.restraint_node)
        if obs.has_reactions:
            gap = np.array([np.nanmax(np.abs(np.nan_to_num(obs.reactions[n]) - pb.base.R[n])) for n in nodes])
            nodes = nodes[np.argsort(-gap, kind="stable")]
        nodes = nodes[: pb.limit]
        ridx = np.flatnonzero(np.isin(model.restraint_node, nodes))
    needs = Needs(
        dofs=tuple(node * d + a for node, axes in added for a in axes), restraints=tuple(int(r) for r in ridx)
    )
    return Plan(needs, (added, nodes, ridx))


def candidates(pb: Problem, planned: Plan | None = None) -> list[Cause]:
    """A support added where the source reports a reaction the model cannot have (its reactions fitted), and
    each supported node's restraints released (settlements fitted): responses with the existing factor."""
    model, solver = pb.model, pb.solver
    d = model.dim
    out: list[Cause] = []
    added, nodes, ridx = (planned if planned is not None else plan(pb)).data
    for node, axes in added:
        dofs = [node * d + a for a in axes]
        X = solver.dof_columns(dofs)
        mask = solver.mask.copy()
        mask[node] = True
        cols = pb.resp.columns(X, mask=mask)
        nid = model.node_ids[node]
        names = tuple(AXES[a] for a in axes)

        def apply(pred: Prediction, th: FloatArray, X: FloatArray = X, mask: Any = mask) -> Prediction:
            return pred.plus(pb.resp.full(X @ th, mask=mask)) if mask is not None else pred

        out.append(
            Cause(
                code="DX108",
                location=Location(node=nid),
                rank=RANK_STRUCTURAL,
                key=("support-added", node),
                apply=apply,
                describe=lambda th, nid=nid, names=names: (
                    f"node {nid} carries a reported reaction along {', '.join(names)} but has no support in the "
                    "model: the source supported it",
                    (("node", nid), ("axes", names), ("reaction_added", [float(x) for x in th])),
                ),
                cols=cols,
                plain=lambda th: True,
            )
        )
    if ridx.size:
        Ssol = solver.settlements(ridx)
        col_of = {int(r): c for c, r in enumerate(ridx.tolist())}
        for node in nodes.tolist():
            idx = np.flatnonzero(model.restraint_node == node)
            subsets = [idx[i : i + 1] for i in range(idx.size)] + ([idx] if idx.size > 1 else [])
            for sub in subsets:
                cs = [col_of[int(r)] for r in sub]
                mask = solver.mask.copy()
                if np.count_nonzero(model.restraint_node == node) == len(sub) and not np.any(model.spring_node == node):
                    mask[node] = False
                X = Ssol[:, cs]
                cols = pb.resp.columns(X, mask=mask)
                fixed = None
                if not mask[node]:  # fully released: its reactions vanish
                    fixed = np.zeros(len(pb.rows))
                    at = pb.resp.pos["R"][pb.resp.flat["R"] // d == node]
                    fixed[at] = -pb.rows.b[at]
                nid = model.node_ids[node]
                labels = tuple(model.restraint_label[i] for i in sub)

                def apply_r(pred: Prediction, th: FloatArray, X: FloatArray = X, mask: Any = mask) -> Prediction:
                    inc = pb.resp.full(X @ th, mask=mask)
                    R = np.where(mask[:, None], pred.R + inc.R, 0.0)
                    return Prediction(pred.U + inc.U, pred.N + inc.N, R)

                out.append(
                    Cause(
                        code="DX109",
                        location=Location(node=nid, axis=labels[0] if len(labels) == 1 and labels[0] in AXES else None),
                        rank=RANK_STRUCTURAL,
                        key=("support-released", node, tuple(int(i) for i in sub)),
                        apply=apply_r,
                        describe=lambda th, nid=nid, labels=labels: (
                            f"the source's results fit the model without the restraint(s) {', '.join(labels)} at "
                            f"node {nid}",
                            (
                                ("node", nid),
                                ("restraints_released", labels),
                                ("settlement_equivalent", [float(x) for x in th]),
                            ),
                        ),
                        cols=cols,
                        fixed=fixed,
                        plain=lambda th: True,
                    )
                )
    return out
