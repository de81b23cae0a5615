"""One load at another magnitude: missing (DX105), doubled (DX106), at another node (DX107) or at another
factor on one node or one component (DX112).

:func:`load_candidates` is the single-cause search; :func:`candidates` gives the loads (each loaded node's
load vector, and each of its components) to the multi-cause fit as responses of one block solve.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import shortest_path

from audit.checks import _common as cm
from audit.checks.diagnosis.base import CHECK_ID, RANK_STRUCTURAL, Cause
from audit.checks.diagnosis.block import (
    SOLVE_COLUMNS,
    Candidate,
    Evaluator,
    Needs,
    Prediction,
    Search,
    Superposition,
    colmax,
    reaction_rows,
    unbalanced_joints,
    witness_screen,
)
from audit.checks.diagnosis.fit import Plan, Problem
from audit.context import Context
from audit.findings import Location, Severity
from audit.model import AXES, CaseResults, FloatArray, Model
from audit.rules import Rule

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

    The candidates that a joint proves wrong are dropped first, with no solve: a joint the reported forces
    leave unbalanced beyond their allowances (:func:`unbalanced_joints`) can be explained only by a candidate
    that changes the load there.  Those that a few differing numbers prove wrong go next
    (:func:`witness_screen`); both in :func:`screen_loads`.  The responses of the others are solved in blocks
    of at most ``SOLVE_COLUMNS``, bounded, and only those that may explain the results (or be the closest)
    are evaluated one by one (:class:`Search`).
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
        res = residual if residual is not None else solver.joint_residuals(loads, obs)[0]
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
    nl = loaded.size
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
    worst = np.full(len(combos), np.inf)  # a candidate left out below is proved not to explain the results
    done = np.zeros(len(combos), dtype=bool)
    # a candidate changes the loads of its own node (and of the target of a move) only
    changed = [{of_node[col] for col, _coef in terms} | {at_node[col] for col, _coef in terms} for terms in combos]
    alive = screen_loads(ctx, ev, base, solver, obs, loads, FG, C, changed)
    # the responses of the load columns (0..nl-1) and of the moved loads (the rest) are solved a few groups at
    # a time, a group being one loaded node's load with its moves (every candidate then lies in one group):
    # each group's candidates are bounded and, where the bound allows, evaluated before the next is solved
    group_of = np.array([index[a] for a, _b in pairs], dtype=np.int64)
    groups: list[list[int]] = []
    for c in range(nl):
        js = [2 * c, 2 * c + 1, *(2 * nl + np.flatnonzero(group_of == c)).tolist()]
        js = [j for j in js if alive[j]]
        if js:
            groups.append(js)
    rows_R, at_R = reaction_rows(ev, solver)
    on_mask = solver.mask[rows_R // d]
    rU, rN = ev.rows("U"), ev.rows("N")
    bU, bN, bR = base.U.reshape(-1), base.N, base.R.reshape(-1)
    chunk: list[int] = []
    for g, js in enumerate(groups):
        chunk += js
        if g + 1 < len(groups) and len(_columns(C, chunk)) + len(_columns(C, groups[g + 1])) <= SOLVE_COLUMNS:
            continue
        cols = _columns(C, chunk)
        Fc = FG[:, cols]
        dU = solver.displacements(Fc)
        Cc = C[np.ix_(cols, chunk)]
        nmax, btn = _force_bounds(ev, solver, dU, rows_R)
        respR = np.where(on_mask[:, None], btn - Fc[rows_R].toarray(), 0.0)
        sub = {
            "U": bU[rU, None] + dU[rU] @ Cc,
            "N": bN[rN, None] + (solver.k[rN, None] * (solver.B[rN] @ dU)) @ Cc,
            "R": bR[rows_R[at_R], None] + respR[at_R] @ Cc,
        }
        aC = np.abs(Cc)
        pmax = {"U": ev.base_max["U"] + colmax(dU) @ aC, "R": ev.base_max["R"] + colmax(respR) @ aC}
        if nmax is not None:
            pmax["N"] = ev.base_max["N"] + nmax @ aC
        local = {col: i for i, col in enumerate(cols)}

        def exact(
            i: int, dU: FloatArray = dU, Fc: Any = Fc, local: dict[int, int] = local, js: list[int] = chunk
        ) -> float:
            pred = base
            for col, coef in combos[js[i]]:
                u = dU[:, local[col]]
                f = Fc[:, [local[col]]].toarray().ravel()
                pred = pred.plus(solver.response(u, solver.k * (solver.B @ u), f), coef)
            return ev.worst(pred)

        w, dn = search.settle(ev.lower_bounds(sub, pmax), exact)
        worst[chunk], done[chunk] = w, dn
        chunk = []

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


def screen_loads(
    ctx: Context,
    ev: Evaluator,
    base: Prediction,
    solver: Superposition,
    obs: CaseResults,
    loads: FloatArray,
    F: Any,
    C: FloatArray,
    changed: list[set[int]],
) -> cm.BoolArray:
    """(c,) False for each candidate ``base + response(F) @ C[:, j]`` proved unable to explain the results:
    by a joint (:func:`unbalanced_joints`) outside ``changed[j]``, the nodes whose load it changes, with no
    solve; then by the witnesses (:func:`witness_screen`) for those left."""
    change = 2.0 * float(np.max(np.abs(loads).sum(axis=1), initial=0.0))  # a move: off one node, onto another
    proved = set(unbalanced_joints(ctx, ev, solver, loads, obs, change).tolist())
    alive = np.array([proved <= nodes for nodes in changed], dtype=bool)
    if alive.any():
        live = np.flatnonzero(alive)
        alive[live] = witness_screen(ctx, ev, base, solver, F, C[:, live])
    return alive


def _columns(C: FloatArray, combos: list[int]) -> list[int]:
    """The response columns the candidates ``combos`` combine."""
    return np.flatnonzero(np.any(C[:, combos] != 0.0, axis=1)).tolist()


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


# ----------------------------------------------------------------- for the multi-cause fit
RULES = (
    Rule("DX105", Severity.WARNING, "a load of the model is missing from the source's analysis", CHECK_ID),
    Rule("DX106", Severity.WARNING, "a load was applied twice in the source's analysis", CHECK_ID),
    Rule("DX107", Severity.WARNING, "a load was applied at another node in the source's analysis", CHECK_ID),
    Rule(
        "DX112",
        Severity.WARNING,
        "one load entered at another magnitude in the source: the node, the component and the factor",
        CHECK_ID,
    ),
)

#: load factors a hand-off mistake typically produces (missing, reversed, halved, doubled, 1.5, a unit)
PLAIN_FACTORS = (0.0, -1.0, 0.5, 1.5, 2.0, 3.0, 10.0, 0.1, 1000.0, 0.001)


def _factor_code(f: float, rtol: float) -> str:
    if abs(f) <= rtol:
        return "DX105"
    if abs(f - 2.0) <= 2.0 * rtol:
        return "DX106"
    return "DX112"


def plan(pb: Problem) -> Plan:
    """The load columns of :func:`candidates` (``(specs, F)``: what each column is, and its loads) and the
    unit-force responses on their dofs they combine."""
    model, obs, loads = pb.model, pb.obs, pb.actions.loads
    d = model.dim
    loaded = np.flatnonzero(np.any(loads != 0.0, axis=1))
    if loaded.size == 0:
        return Plan(Needs(), None)
    res = pb.solver.joint_residuals(loads, obs)[0] if obs.has_axial_forces else None
    rank = _load_rank(obs, pb.base, loads, loaded, res)
    loaded = loaded[np.argsort(rank, kind="stable")][: pb.limit]
    # columns: each node's load vector, then each of its components when it has more than one, then moves
    specs: list[tuple[str, int, int | None, int | None]] = []  # (kind, node, axis, target)
    for n in loaded.tolist():
        specs.append(("node", n, None, None))
        nz = np.flatnonzero(loads[n] != 0.0)
        if nz.size > 1:
            specs += [("axis", n, int(a), None) for a in nz.tolist()]
    targets = _move_targets(model, res, loads, loaded)
    specs += [("move", a, None, b) for a in loaded.tolist() for b in targets.get(a, []) if b != a][: pb.limit]
    r_i: list[int] = []
    c_i: list[int] = []
    v_i: list[float] = []
    for c, (kind, n, ax, tgt) in enumerate(specs):
        for a in range(d) if ax is None else (ax,):
            if loads[n, a] == 0.0:
                continue
            if kind == "move":
                assert tgt is not None
                r_i += [tgt * d + a, n * d + a]
                c_i += [c, c]
                v_i += [float(loads[n, a]), -float(loads[n, a])]
            else:
                r_i.append(n * d + a)
                c_i.append(c)
                v_i.append(float(loads[n, a]))
    F = sp.csc_matrix((v_i, (r_i, c_i)), shape=(model.n_dofs, len(specs)))
    return Plan(Needs(dofs=tuple(int(i) for i in np.unique(F.indices))), (specs, F))


def candidates(pb: Problem, planned: Plan | None = None) -> list[Cause]:
    """Each suspect loaded node's load at another factor (the whole load, and each component of it), and the
    load moved to another node: the responses of one block solve."""
    model, loads = pb.model, pb.actions.loads
    d = model.dim
    data = (planned if planned is not None else plan(pb)).data
    if data is None:
        return []
    specs, F = data
    # the responses as combinations of unit-force responses on the loaded dofs: one block solve for the dofs
    # not solved before (shared with the supports added and the inclined supports)
    used = np.unique(F.indices)
    # the responses are linear in the loads: on the rows, the unit-force columns combined; in full (the
    # displacements, and the load column made dense) only when a set with the cause is checked in full
    Z, Fu = pb.solver.dof_columns(used), F[used].toarray()
    cols = pb.resp.columns(Z) @ Fu + pb.resp.load_term(F)
    out: list[Cause] = []
    funit = model.units.force
    for c, (kind, n, ax, tgt) in enumerate(specs):
        if not np.any(cols[:, c]):
            continue
        nid = model.node_ids[n]

        def apply(pred: Prediction, th: FloatArray, c: int = c) -> Prediction:
            return pred.plus(pb.resp.full(Z @ Fu[:, c], f=F[:, [c]].toarray().ravel()), float(th[0]))

        if kind == "move":
            assert tgt is not None
            tid = model.node_ids[tgt]
            out.append(
                Cause(
                    code="DX107",
                    location=Location(node=nid),
                    rank=RANK_STRUCTURAL,
                    key=("load-move", n, tgt),
                    apply=apply,
                    describe=lambda th, nid=nid, tid=tid: (
                        f"the load at node {nid} was applied at node {tid} in the source's analysis",
                        (("node", nid), ("applied_at", tid), ("share_moved", float(th[0]))),
                    ),
                    cols=cols[:, [c]],
                    valid=lambda th: abs(float(th[0]) - 1.0) <= 0.05,
                    plain=lambda th: True,
                )
            )
            continue
        vec = loads[n] if ax is None else np.where(np.arange(d) == ax, loads[n], 0.0)
        what = (
            "(" + ", ".join(cm.fmt(float(v)) for v in vec) + f") {funit}"
            if ax is None
            else f"{AXES[ax]} component {cm.fmt(float(loads[n, ax]))} {funit}"
        )

        def describe(
            th: FloatArray, nid: str = nid, what: str = what, ax: Any = ax, n: int = n
        ) -> tuple[str, tuple[tuple[str, Any], ...]]:
            fac = 1.0 + float(th[0])
            code = _factor_code(fac, pb.tol.ratio_match)
            if code == "DX105":
                msg = f"the load {what} at node {nid} is missing from the source's analysis"
            elif code == "DX106":
                msg = f"the load {what} at node {nid} is applied twice in the source's analysis"
            else:
                msg = f"the load {what} at node {nid} is entered at {cm.fmt(fac)}× its value in the source"
            comp = "all" if ax is None else AXES[ax]
            return msg, (
                ("node", nid),
                ("component", comp),
                ("factor_applied", fac),
                ("load", [float(v) for v in loads[n]]),
            )

        out.append(
            Cause(
                code="DX112",
                location=Location(node=nid, axis=None if ax is None else AXES[ax]),
                rank=RANK_STRUCTURAL,
                key=("load", n, -1 if ax is None else ax),
                apply=apply,
                describe=describe,
                cols=cols[:, [c]],
                code_of=lambda th: _factor_code(1.0 + float(th[0]), pb.tol.ratio_match),
                plain=lambda th: any(abs(1.0 + float(th[0]) - p) <= 0.005 * max(1.0, abs(p)) for p in PLAIN_FACTORS),
            )
        )
    return out
