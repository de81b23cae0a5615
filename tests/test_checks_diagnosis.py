"""Diagnosis: unit ratios, the least-squares scale fit, the Sherman–Morrison re-solve (against an exact
sympy solve of the changed model) and the causes named for a few deliberate source errors."""

from __future__ import annotations

import copy
import json
from fractions import Fraction
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_checks_common import ExactCase, context, exact_solve, model_of, parse, results_text
from test_mutation import PRATT

from audit import stiffness
from audit.checks import diagnosis
from audit.checks.diagnosis import block as db
from audit.checks.diagnosis import loads as dcl
from audit.checks.diagnosis import members as dcm
from audit.findings import Status
from audit.model import FORCE_UNITS, LENGTH_UNITS

PUBLISHED = Path(__file__).resolve().parent.parent / "reference_cases" / "published"


def three_bar() -> dict[str, Any]:
    doc = json.loads((PUBLISHED / "timoshenko_three_bar.json").read_text())
    doc.pop("results")
    doc["load_cases"] = [{"id": "load", "loads": [{"node": "D", "fx": 30, "fy": -100}]}]
    doc.pop("combinations")
    return doc


@pytest.mark.parametrize(
    ("ratio", "declared", "table", "pair"),
    [
        (1000.0, "kN", FORCE_UNITS, ("N", "kN")),
        (1 / 4.4482216152605, "kN", FORCE_UNITS, ("kip", "kN")),  # 1 kip = 4.4482216152605 kN (exact)
        (1 / 4.4482216152605, "N", FORCE_UNITS, ("lbf", "N")),
        (12.0, "ft", LENGTH_UNITS, ("in", "ft")),
        (1 / 0.0254, "m", LENGTH_UNITS, ("in", "m")),
        (0.001, "mm", LENGTH_UNITS, ("m", "mm")),
    ],
    ids=["N-as-kN", "kip-as-kN", "lbf-as-N", "in-as-ft", "in-as-m", "m-as-mm"],
)
def test_unit_ratio_table(ratio: float, declared: str, table: dict[str, Fraction], pair: tuple[str, str]) -> None:
    assert diagnosis.match_unit(ratio * 1.001, table, declared, 5e-3) == pair


def test_no_unit_matches_one_and_a_half() -> None:
    assert diagnosis.match_unit(1.5, FORCE_UNITS, "kN", 5e-3) is None


def test_fit_ratio_is_least_squares_over_reported_values() -> None:
    p = np.array([1.0, 2.0, np.nan, 4.0])
    assert diagnosis.fit_ratio(-2.0 * p, p) == pytest.approx(-2.0)
    assert diagnosis.fit_ratio(np.zeros(3), np.zeros(3)) is None


def test_sherman_morrison_update_matches_an_exact_solve_with_the_changed_member() -> None:
    """Three-bar truss, BD's EA doubled: the rank-one update of the existing factor equals the exact
    solution of the changed model (sympy)."""
    doc = three_bar()
    model = model_of(doc)
    ctx = context(model, None)
    assert ctx.solution is not None
    sol = ctx.solution.case("load")
    assert sol is not None
    solver = db.Superposition(ctx)
    m = 1
    B = stiffness.compatibility_matrix(model)
    z = solver.displacements(B[[m]].T.toarray())[:, 0]
    dN = -solver.k * (B @ z)
    dN[m] += 1.0
    unit = solver.response(-z, dN, np.zeros_like(z))
    base = db.Prediction(sol.displacements, sol.axial_forces, sol.reactions)
    strain = float((B @ sol.displacements.reshape(-1))[m])
    beta = float((B[[m]] @ z)[0])
    pred = dcm.sherman_morrison_member(base, unit, strain, beta, dk=float(model.axial_stiffness()[m]))
    changed = copy.deepcopy(doc)
    changed["members"][m]["E"] = 4.0e8
    ex = exact_solve(changed)["load"]
    np.testing.assert_allclose(pred.U, ex.displacements, rtol=1e-10, atol=1e-15)
    np.testing.assert_allclose(pred.N, ex.axial_forces, rtol=1e-10)
    np.testing.assert_allclose(pred.R, ex.reactions, rtol=1e-10, atol=1e-9)


def _diagnose(doc: dict[str, Any], cases: dict[str, ExactCase], **kw: Any) -> Any:
    model = model_of(doc)
    [out] = diagnosis.run(context(model, parse(model, results_text(model, cases, **kw))))
    return out


def test_nothing_to_explain() -> None:
    out = _diagnose(PRATT, exact_solve(PRATT), digits=4)
    assert out.status is Status.PASS
    assert not out.findings


def test_forces_written_in_kip_declared_kn() -> None:
    ex = exact_solve(PRATT)["P"]
    k = 1 / 4.4482216152605
    cases = {"P": ExactCase("P", ex.displacements, k * ex.axial_forces, k * ex.reactions)}
    [f] = _diagnose(PRATT, cases, digits=5).findings
    assert f.code == "DX102"
    assert (f.data_dict()["written_unit"], f.data_dict()["declared_unit"]) == ("kip", "kN")
    assert f.data_dict()["fit_ratio"] == pytest.approx(k, rel=1e-4)


def test_declared_compression_positive_but_written_tension_positive() -> None:
    ex = exact_solve(PRATT)
    out = _diagnose(PRATT, ex, digits=5, sign_convention="compression_positive")
    [f] = out.findings
    assert f.code == "DX101"
    assert f.data_dict()["likely_convention"] == "tension_positive"


def test_member_ea_without_displacements_in_an_indeterminate_truss() -> None:
    """With only forces reported, the one redundant of the three-bar truss makes any bar's EA explain the
    forces: the diagnosis must say the data cannot tell them apart, and name the implied EA of each."""
    doc = three_bar()
    src = copy.deepcopy(doc)
    src["members"][0]["E"] = 1.0e8
    out = _diagnose(doc, exact_solve(src), digits=6, parts=("axial_forces", "reactions"))
    [f] = out.findings
    assert f.code == "DX104"
    labels = {label for _c, label, _w in f.data_dict()["alternatives"]}
    assert "member AD" in labels
    assert f.location.member is None


def test_member_ea_from_displacements_gives_the_exact_value() -> None:
    src = copy.deepcopy(PRATT)
    src["members"][8]["E"] = 0.7e8  # member 9, a third of its E
    out = _diagnose(PRATT, exact_solve(src), digits=8)
    [f] = out.findings
    assert (f.code, f.location.member) == ("DX104", "9")
    assert f.data_dict()["implied_EA"] == pytest.approx(0.7e8 * 0.0015, rel=1e-5)
    assert f.data_dict()["compatibility_EA"] == pytest.approx(0.7e8 * 0.0015, rel=1e-5)


def test_two_independent_slips_are_two_causes() -> None:
    ex = exact_solve(PRATT)["P"]
    n = ex.axial_forces.copy()
    n[[0, 3]] *= (1.05, 0.9)  # two independent mistakes
    out = _diagnose(PRATT, {"P": ExactCase("P", ex.displacements, n, ex.reactions)}, digits=6)
    assert sorted((f.code, f.location.member) for f in out.findings) == [("DX115", "1"), ("DX115", "4")]
    for f in out.findings:
        assert f.data_dict()["causes_in_set"] == 2


def test_no_explanation_names_the_closest_set() -> None:
    """Every member force off by its own factor: no set of three causes explains nine wrong numbers."""
    ex = exact_solve(PRATT)["P"]
    n = ex.axial_forces * (1.0 + 0.03 * np.arange(1, 10))
    out = _diagnose(PRATT, {"P": ExactCase("P", ex.displacements, n, ex.reactions)}, digits=6)
    [f] = out.findings
    assert f.code == "DX001"
    assert len(f.data_dict()["closest_codes"]) >= 1
    assert f.data_dict()["unexplained"]
    assert out.findings[0].data_dict()["candidates_tried"] > 0


# ------------------------------------------------------------------ the block evaluation of the candidates
def grid_doc(m: int) -> dict[str, Any]:
    """An m x m plane grid of 1 m square cells with one diagonal each, pinned at both bottom corners, every
    top node loaded (invented data, for these tests)."""
    n1 = m + 1
    nodes = [{"id": f"n{i}_{j}", "x": i, "y": j} for j in range(n1) for i in range(n1)]
    members = []
    for j in range(n1):
        for i in range(n1):
            for di, dj in ((1, 0), (0, 1), (1, 1)):
                if i + di <= m and j + dj <= m:
                    members.append(
                        {"id": f"m{len(members)}", "start": f"n{i}_{j}", "end": f"n{i + di}_{j + dj}", "E": 2.1e8}
                        | {"A": 0.002 if dj == 0 else 0.001}
                    )
    return {
        "format": "truss-audit-model",
        "version": 1,
        "title": "grid",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "members": members,
        "supports": [{"node": "n0_0", "restrain": ["x", "y"]}, {"node": f"n{m}_0", "restrain": ["x", "y"]}],
        "load_cases": [{"id": "P", "loads": [{"node": f"n{i}_{m}", "fy": -10} for i in range(n1)]}],
    }


def direct_stiffness(doc: dict[str, Any], drop_load: str | None = None, ea_factor: tuple[int, float] = (0, 1.0)) -> Any:
    """The plane truss solved by the direct stiffness method written out here with scipy (Kassimali,
    *Matrix Analysis of Structures*, 2nd ed., ch. 3: member stiffness k·[c² cs; cs s²] blocks assembled
    into K, restrained rows and columns removed; chapter recalled from memory), for the source's results."""
    import scipy.sparse as sps
    import scipy.sparse.linalg as spla

    ids = {n["id"]: i for i, n in enumerate(doc["nodes"])}
    xy = np.array([[n["x"], n["y"]] for n in doc["nodes"]], dtype=float)
    conn = np.array([[ids[e["start"]], ids[e["end"]]] for e in doc["members"]])
    ea = np.array([e["E"] * e["A"] for e in doc["members"]])
    ea[ea_factor[0]] *= ea_factor[1]
    v = xy[conn[:, 1]] - xy[conn[:, 0]]
    length = np.linalg.norm(v, axis=1)
    c = v / length[:, None]
    k = ea / length
    dofs = np.hstack([2 * conn[:, :1] + [0, 1], 2 * conn[:, 1:] + [0, 1]])
    b = np.hstack([-c, c])  # elongation = b · u_member
    rows = np.repeat(dofs, 4, axis=1).ravel()
    cols = np.tile(dofs, (1, 4)).ravel()
    vals = (k[:, None, None] * b[:, :, None] * b[:, None, :]).reshape(len(k), -1).ravel()
    n = 2 * len(xy)
    K = sps.csr_matrix((vals, (rows, cols)), shape=(n, n))
    f = np.zeros(n)
    for load in doc["load_cases"][0]["loads"]:
        if load["node"] != drop_load:
            f[2 * ids[load["node"]] + 1] += load["fy"]
    fixed = [2 * ids[s["node"]] + a for s in doc["supports"] for a in (0, 1)]
    free = np.setdiff1d(np.arange(n), fixed)
    u = np.zeros(n)
    u[free] = spla.spsolve(sps.csc_matrix(K[free][:, free]), f[free])
    N = k * np.einsum("ij,ij->i", b, np.hstack([u[2 * conn[:, :1] + [0, 1]], u[2 * conn[:, 1:] + [0, 1]]]))
    R = (K @ u - f).reshape(-1, 2)
    mask = np.zeros(len(xy), dtype=bool)
    mask[[ids[s["node"]] for s in doc["supports"]]] = True
    R[~mask] = 0.0
    return ExactCase("P", u.reshape(-1, 2), N, R)


GRID = grid_doc(44)  # 45 top loads: more than max_candidates = 40


def test_missing_load_among_many_is_named_with_few_full_evaluations() -> None:
    """The source left out one of 45 top loads: the diagnosis names it, and the bounds spare the full
    evaluation of (nearly) every other candidate."""
    out = _diagnose(GRID, {"P": direct_stiffness(GRID, drop_load="n30_44")}, digits=9)
    [f] = out.findings
    assert (f.code, f.location.node) == ("DX105", "n30_44")
    summary = dict(out.summary)
    assert summary["candidates_tried"] > 40
    assert summary["candidates_evaluated_in_full"] <= 3


def test_member_ea_in_a_grid_is_named_from_one_block_solve() -> None:
    members = GRID["members"]
    m = next(i for i, e in enumerate(members) if (e["start"], e["end"]) == ("n20_20", "n21_21"))
    out = _diagnose(GRID, {"P": direct_stiffness(GRID, ea_factor=(m, 0.5))}, digits=9)
    [f] = out.findings
    assert (f.code, f.location.member) == ("DX104", members[m]["id"])
    assert f.data_dict()["EA_ratio"] == pytest.approx(0.5, rel=1e-5)
    assert dict(out.summary)["candidates_evaluated_in_full"] <= 3


def hops_oracle(model: Any, sources: list[int]) -> np.ndarray:
    """Member hops: the smallest over the sources of scipy's unweighted shortest path from each."""
    import scipy.sparse as sps
    from scipy.sparse.csgraph import shortest_path

    a, b = model.conn[:, 0], model.conn[:, 1]
    g = sps.coo_matrix((np.ones(a.size), (a, b)), shape=(model.n_nodes, model.n_nodes))
    return np.min(shortest_path(g, directed=False, unweighted=True, indices=sources), axis=0)


@pytest.mark.parametrize("sources", [[0], [5, 17], [40, 41, 42]], ids=["one", "two", "three"])
def test_locality_counts_member_hops(sources: list[int]) -> None:
    model = model_of(grid_doc(8))
    np.testing.assert_array_equal(dcl.locality(model, sources), hops_oracle(model, sources))


def test_ties_in_load_suspicion_go_to_the_loads_nearest_the_failing_member() -> None:
    """One reported member force wrong (every other quantity right): no load explains it, every loaded joint
    is equally (un)suspect by its residual, and the 40 tried are the nearest to the member's joints."""
    model = model_of(GRID)
    ex = direct_stiffness(GRID)
    n = ex.axial_forces.copy()
    m = next(i for i, e in enumerate(GRID["members"]) if (e["start"], e["end"]) == ("n40_43", "n40_44"))
    n[m] *= 1.05
    ctx = context(model, parse(model, results_text(model, {"P": ExactCase("P", ex.displacements, n, ex.reactions)})))
    cr = ctx.results.case("P")  # type: ignore[union-attr]
    sol = ctx.solution.case("P")  # type: ignore[union-attr]
    base = db.Prediction(sol.displacements, sol.axial_forces, sol.reactions)
    actions = diagnosis.cm.case_actions(model, "P")
    ev = db.Evaluator(model, actions, cr, ctx.tolerances, base)
    hops = dcl.locality(model, model.conn[m])
    cands = dcl.load_candidates(ctx, ev, cr, base, db.Superposition(ctx), actions.loads, near=lambda: hops)
    tried = {c.location.node for c in cands if c.code == "DX105"}
    loaded = np.flatnonzero(np.any(actions.loads != 0, axis=1))
    order = loaded[np.lexsort((loaded, hops_oracle(model, list(model.conn[m]))[loaded]))]
    assert len(tried) == 40
    assert tried == {model.node_ids[i] for i in order[:40]}


@settings(max_examples=60, deadline=None)
@given(
    st.lists(
        st.lists(st.tuples(st.floats(0.0, 3.0), st.floats(0.0, 1.0)), min_size=0, max_size=6), min_size=1, max_size=4
    )
)
def test_search_selects_as_if_every_figure_were_exact(families: list[list[tuple[float, float]]]) -> None:
    """Exact figures e and lower bounds e·s (0 ≤ s ≤ 1) per family: the figures kept select the same
    candidates as exhaustive evaluation (all with e ≤ 1; else the first smallest e), by brute force."""
    search = db.Search()
    kept: list[float] = []
    exact: list[float] = []
    for fam in families:
        e = np.array([x for x, _ in fam])
        lbs = e * np.array([s for _, s in fam])
        worst, done = search.settle(lbs, lambda j, e=e: float(e[j]))
        assert np.all(worst[done] == e[done])
        assert np.all(worst <= e)
        kept += worst.tolist()
        exact += e.tolist()
    if not exact:
        return
    good = [i for i, x in enumerate(exact) if x <= 1.0]
    assert [i for i, x in enumerate(kept) if x <= 1.0] == good
    if not good:
        assert int(np.argmin(kept)) == int(np.argmin(exact))
        assert min(kept) == min(exact)


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**31 - 1), st.floats(1.0, 3.0))
def test_lower_bounds_never_exceed_the_figure(seed: int, inflate: float) -> None:
    """The bound from a 3-quantity sample and an over-estimated largest value is at most the figure
    max |r − p| / (q + max(rel·|p|, floor·scale)) written out here (the rule of compare_case)."""
    rng = np.random.default_rng(seed)
    model = model_of(PRATT)
    ex = exact_solve(PRATT)["P"]
    ctx = context(model, parse(model, results_text(model, {"P": ex}, digits=4)))
    cr = ctx.results.case("P")  # type: ignore[union-attr]
    actions = diagnosis.cm.case_actions(model, "P")
    base = db.Prediction(ex.displacements * 1.01, ex.axial_forces * 0.99, ex.reactions)
    tol = ctx.tolerances
    old = db.SAMPLE
    db.SAMPLE = 3
    try:
        ev = db.Evaluator(model, actions, cr, tol, base)
    finally:
        db.SAMPLE = old
    preds = [
        db.Prediction(
            base.U * (1 + 0.02 * rng.standard_normal(base.U.shape)),
            base.N * (1 + 0.02 * rng.standard_normal(base.N.shape)),
            base.R * (1 + 0.02 * rng.standard_normal(base.R.shape)),
        )
        for _ in range(4)
    ]
    sub = {k: np.column_stack([np.ravel(getattr(p, k))[ev.rows(k)] for p in preds]) for k in ("U", "N", "R")}
    pmax = {k: np.array([inflate * np.max(np.abs(getattr(p, k))) for p in preds]) for k in ("U", "N", "R")}
    lbs = ev.lower_bounds(sub, pmax)
    for j, p in enumerate(preds):
        figure = 0.0
        for rep, q, pk, floor_scale in (
            (cr.displacements, cr.displacement_quantum, p.U, actions.length_scale),
            (cr.axial_forces, cr.axial_force_quantum, p.N, actions.force_scale),
            (cr.reactions, cr.reaction_quantum, p.R, max(actions.force_scale, np.max(np.abs(actions.loads)))),
        ):
            ok = np.isfinite(rep)
            scale = max(np.max(np.abs(pk)), floor_scale)
            allowed = np.nan_to_num(q[ok]) + np.maximum(tol.relative * np.abs(pk[ok]), tol.floor * scale)
            figure = max(figure, float(np.max(np.abs(rep[ok] - pk[ok]) / allowed)))
        assert lbs[j] <= figure * (1 + 1e-12)
        assert ev.worst(p) == pytest.approx(figure, rel=1e-12)


@pytest.mark.parametrize(
    "source",
    ["pratt", "clean_inclined_roller_4sf"],
    ids=["supports-along-axes", "inclined-roller"],
)
def test_block_solve_equals_a_direct_sparse_solve(source: str) -> None:
    """The superposition's block solve (a selection of the free dofs, or T for an inclined support) against
    scipy's spsolve of Tᵀ K T u = Tᵀ F for three load columns at once."""
    import scipy.sparse.linalg as spla

    if source == "pratt":
        model = model_of(PRATT)
    else:
        model = model_of(json.loads((Path(__file__).parent / "cases" / f"{source}.json").read_text()))
    ctx = context(model, None)
    rng = np.random.default_rng(3)
    F = rng.standard_normal((model.n_dofs, 3))
    T = ctx.system.T
    Kt = ctx.system.K + ctx.system.K_springs
    expect = T @ spla.spsolve((T.T @ Kt @ T).tocsc(), T.T @ F)
    np.testing.assert_allclose(db.Superposition(ctx).displacements(F), expect, rtol=1e-9, atol=1e-12)


def test_a_member_whose_removal_makes_a_mechanism_is_evidence_not_a_division() -> None:
    """Regression: on the statically determinate Pratt truss, removing a member's stiffness (Δk = −k) makes
    1 + Δk·bᵀz vanish (bᵀz = 1/k: the member's flexibility is its own in a determinate truss; common
    practice).  The rank-one update must say "mechanism" (None), never divide by zero."""
    model = model_of(PRATT)
    ctx = context(model, None)
    assert ctx.solution is not None
    sol = ctx.solution.case("P")
    assert sol is not None
    solver = db.Superposition(ctx)
    B = stiffness.compatibility_matrix(model)
    base = db.Prediction(sol.displacements, sol.axial_forces, sol.reactions)
    for m in range(model.n_members):
        z = solver.displacements(B[[m]].T.toarray())[:, 0]
        beta = float((B[[m]] @ z)[0])
        assert beta * float(solver.k[m]) == pytest.approx(1.0, rel=1e-9)
        unit = solver.response(-z, -solver.k * (B @ z), np.zeros_like(z))
        for dk in (-1.0 / beta, -float(solver.k[m])):
            assert dcm.sherman_morrison_member(base, unit, 0.0, beta, dk) is None


@pytest.mark.parametrize("parts", [None, ("axial_forces", "reactions"), ("displacements", "axial_forces")])
def test_a_member_left_out_of_a_determinate_truss_never_crashes(parts: Any) -> None:
    """Each member's force reported 0 (as from a source that left the member out) on the determinate Pratt
    truss: without the member the truss is a mechanism, so no DX111 may be claimed, and nothing raises."""
    ex = exact_solve(PRATT)["P"]
    for m in range(9):
        n = ex.axial_forces.copy()
        n[m] = 0.0
        kw = {} if parts is None else {"parts": parts}
        out = _diagnose(PRATT, {"P": ExactCase("P", ex.displacements, n, ex.reactions)}, digits=6, **kw)
        assert out.status is not Status.NOT_RUN
        assert "DX111" not in {f.code for f in out.findings}
