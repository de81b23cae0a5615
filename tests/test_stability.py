"""Stability and determinacy (``audit.stability``, ``audit.checks.stability_check``).

Data cases in ``tests/data/stability/``: each model file declares, under the
source's own key ``x-expect``, the counts, the classification, the codes it
must raise (exactly those) and the traps that must be named (which joint,
which direction), with its source under ``x-expect.source``.

Sources: Maxwell 1864, "On the calculation of the equilibrium and stiffness of
frames" (the count m + r − d·j); Pellegrino & Calladine 1986, "Matrix analysis
of statically and kinematically indeterminate frameworks", Int. J. Solids
Structures 22(4) (rank, mechanisms, self-stress; the collinear two-bar
example); Calladine & Pellegrino 1991, "First-order infinitesimal mechanisms",
Int. J. Solids Structures 27(4); the rest common practice, as each file says.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from strategies import rational_plane_trusses

from audit import stability
from audit.checks import stability_check
from audit.engine import build_context
from audit.errors import UnsolvableError
from audit.exchange import parse_model
from audit.model import Model
from audit.solve import build_system, factorize_system

DATA = Path(__file__).resolve().parent / "data" / "stability"
CASES = sorted(DATA.glob("*.json"))


def _analyse(model: Model, method: str = "auto", use_factor: bool = True) -> stability.StabilityReport:
    system = build_system(model)
    factor = cond = None
    if use_factor:
        try:
            factor, cond = factorize_system(model, system)
        except UnsolvableError:
            factor = None
    return stability.analyse(model, system, factor, condition=cond, method=method)


def _load(path: Path) -> tuple[Model, dict[str, Any]]:
    text = path.read_text()
    return parse_model(text), json.loads(text)["x-expect"]


def _close_direction(got: list[float], want: list[float]) -> bool:
    g, w = np.asarray(got, float), np.asarray(want, float)
    return abs(abs(float(g @ w)) / (np.linalg.norm(g) * np.linalg.norm(w)) - 1.0) < 1e-9


# ---------------------------------------------------------------- data cases
@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_counts_and_classification(path: Path) -> None:
    model, exp = _load(path)
    rep = _analyse(model)
    got = rep.as_dict()
    for key in ("classification", "maxwell_count", "rank", "mechanisms", "self_stress_states"):
        assert got[key] == exp[key], (key, got[key], exp[key], exp["source"])
    assert got["proof"] == "exact"
    # Calladine's extended rule s − M = m + r − d·j (Pellegrino & Calladine 1986, eq. for the four subspaces)
    assert rep.self_stress_states - rep.mechanisms == rep.maxwell_count
    if "rigid" in exp:
        assert rep.rigid_body_mechanisms == exp["rigid"]
    if "internal" in exp:
        assert rep.internal_mechanisms == exp["internal"]
    assert len(rep.mechanism_list) == rep.mechanisms


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_codes_raised(path: Path) -> None:
    model, exp = _load(path)
    ctx = build_context(model)
    (outcome,) = stability_check.run(ctx)
    codes = {f.code for f in outcome.findings}
    assert codes == set(exp["codes"]), (sorted(codes), exp["codes"])
    assert outcome.status.value == ("pass" if exp["mechanisms"] == 0 else "fail")


@pytest.mark.parametrize(
    "path", [p for p in CASES if "traps" in json.loads(p.read_text())["x-expect"]], ids=lambda p: p.stem
)
def test_traps_named(path: Path) -> None:
    model, exp = _load(path)
    traps = _analyse(model).traps
    for want in exp["traps"]:
        found = [t for t in traps if t.kind == want["kind"]]
        assert found, (want["kind"], [t.kind for t in traps])
        t = found[0]
        if "nodes" in want:
            assert list(t.nodes) == want["nodes"]
        if "nodes_include" in want:
            assert set(want["nodes_include"]) <= set(t.nodes)
        if "direction" in want:
            assert _close_direction(list(t.direction), want["direction"]), t.direction
        if "point" in want:
            np.testing.assert_allclose(t.point, want["point"], atol=1e-9)
        assert t.message


@pytest.mark.parametrize(
    "path", [p for p in CASES if "mechanism_joints" in json.loads(p.read_text())["x-expect"]], ids=lambda p: p.stem
)
def test_mechanism_joints(path: Path) -> None:
    model, exp = _load(path)
    mechs = _analyse(model).mechanism_list
    assert [sorted(m.joints) for m in mechs] == [sorted(j) for j in exp["mechanism_joints"]]
    for m in mechs:  # each mode is scaled so that the joint that moves most moves by 1
        assert max(np.linalg.norm(v) for _j, v in m.mode) == pytest.approx(1.0)


@pytest.mark.parametrize(
    "path", [p for p in CASES if "self_stress_members" in json.loads(p.read_text())["x-expect"]], ids=lambda p: p.stem
)
def test_self_stress_members(path: Path) -> None:
    model, exp = _load(path)
    states = _analyse(model).self_stress_list
    assert [sorted(s.members) for s in states] == [sorted(m) for m in exp["self_stress_members"]]


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_numerical_path_agrees_with_exact(path: Path) -> None:
    """The numerical path on the geometry-only matrix (no factor given) finds the exact counts."""
    model, exp = _load(path)
    rep = _analyse(model, method="numerical", use_factor=False)
    assert rep.proof == "numerical"
    assert (rep.rank, rep.mechanisms, rep.self_stress_states) == (
        exp["rank"],
        exp["mechanisms"],
        exp["self_stress_states"],
    )


# ---------------------------------------------------- worked examples in detail
def test_braced_square_self_stress_forces() -> None:
    """Square 4 x 3 with both diagonals: the self-stress is diagonals in tension 5/5, sides in compression
    4/5 and 3/5 of it (joint equilibrium with the 3-4-5 triangle; common practice)."""
    model, _ = _load(DATA / "braced_square_both_diagonals.json")
    (state,) = _analyse(model).self_stress_list
    forces = dict(zip(state.members, state.forces, strict=True))
    sign = np.sign(forces["5"])
    expected = {"1": -0.8, "3": -0.8, "2": -0.6, "4": -0.6, "5": 1.0, "6": 1.0}
    for member, value in expected.items():
        assert sign * forces[member] == pytest.approx(value, abs=1e-12)
    assert state.reactions == ()


def test_collinear_two_bar_is_first_order_infinitesimal() -> None:
    """Pellegrino & Calladine 1986 / Calladine & Pellegrino 1991: the mid joint's transverse mechanism is
    stiffened by the self-stress (tension in both bars): first-order infinitesimal."""
    model, _ = _load(DATA / "collinear_two_bar.json")
    rep = _analyse(model)
    (mech,) = rep.mechanism_list
    assert mech.order == "first-order infinitesimal"
    assert mech.joints == ("B",)
    assert _close_direction(list(mech.mode[0][1]), [0.0, 1.0])
    assert rep.order_test["result"] == "first-order infinitesimal"


def test_four_bar_linkage_is_finite() -> None:
    model, _ = _load(DATA / "four_bar_linkage.json")
    (mech,) = _analyse(model).mechanism_list
    assert mech.order == "finite"
    # the sway: C and D move parallel to AB, by the same amount (bars AD, BC vertical)
    mode = dict(mech.mode)
    np.testing.assert_allclose(mode["C"], mode["D"], atol=1e-12)
    assert _close_direction(list(mode["C"]), [1.0, 0.0])


def test_mechanism_not_stiffened_by_unrelated_self_stress() -> None:
    """A four-bar linkage standing on a square with both diagonals: the square's self-stress does not
    touch the linkage, so the mechanism is "not proven infinitesimal" (never claimed finite)."""
    doc = json.loads((DATA / "braced_square_both_diagonals.json").read_text())
    doc["x-expect"] = {}
    doc["nodes"] += [{"id": "E", "x": 4, "y": 6}, {"id": "F", "x": 0, "y": 6}]
    doc["members"] += [
        {"id": "7", "start": "D", "end": "F", "material": "steel", "section": "bar"},
        {"id": "8", "start": "F", "end": "E", "material": "steel", "section": "bar"},
        {"id": "9", "start": "E", "end": "C", "material": "steel", "section": "bar"},
    ]
    rep = _analyse(parse_model(json.dumps(doc)))
    assert (rep.mechanisms, rep.self_stress_states) == (1, 1)
    assert rep.mechanism_list[0].order == "not proven infinitesimal"
    codes = {f.code for f in stability_check.findings_of(rep)}
    assert "ST105" in codes
    assert "ST103" not in codes


def test_trap_messages_name_joint_and_direction() -> None:
    model, _ = _load(DATA / "collinear_two_bar.json")
    (trap,) = [t for t in _analyse(model).traps if t.kind == "collinear-joint"]
    assert "joint B" in trap.message
    assert "along y" in trap.message


def test_as_dict_is_json_safe() -> None:
    for path in CASES:
        model, _ = _load(path)
        text = json.dumps(_analyse(model).as_dict())
        assert "NaN" not in text


# ---------------------------------------------------------- mid-size cross-check
def _grid_doc(n: int, open_rows: tuple[int, ...] = (), jitter: bool = False) -> str:
    """An n x n plane grid, one diagonal per cell, pinned at (0,0), roller at (n,0); the cells of the rows in
    ``open_rows`` get no diagonal (each such row of four-bar panels can shear: one mechanism per row,
    common practice)."""
    rng = np.random.default_rng(7)
    nodes, members = [], []
    for i in range(n + 1):
        for j in range(n + 1):
            dx, dy = (int(rng.integers(-40, 41)), int(rng.integers(-40, 41))) if jitter else (0, 0)
            nodes.append({"id": f"{i}_{j}", "x": float(f"{i}.{50 + dx:02d}"), "y": float(f"{j}.{50 + dy:02d}")})
    for i in range(n + 1):
        for j in range(n + 1):
            ends = []
            if i < n:
                ends.append((i + 1, j))
            if j < n:
                ends.append((i, j + 1))
            if i < n and j < n and j not in open_rows:
                ends.append((i + 1, j + 1))
            for b in ends:
                members.append(
                    {"id": str(len(members) + 1), "start": f"{i}_{j}", "end": f"{b[0]}_{b[1]}", "E": 1, "A": 1}
                )
    doc = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "members": members,
        "supports": [{"node": "0_0", "restrain": ["x", "y"]}, {"node": f"{n}_0", "restrain": ["y"]}],
    }
    return json.dumps(doc)


@pytest.mark.parametrize(
    ("n", "open_rows", "jitter"),
    [(25, (), False), (16, (3, 9, 15), False), (25, (), True), (16, (0, 8), True)],
    ids=["grid25-stable", "grid16-three-open-rows", "grid25-jittered", "grid16-jittered-two-open-rows"],
)
def test_mid_size_numerical_matches_exact(
    n: int, open_rows: tuple[int, ...], jitter: bool, monkeypatch: pytest.MonkeyPatch
) -> None:
    """578 to 1352 dofs, decomposed by shift-invert Lanczos (the dense limit lowered so that the sparse path
    runs), against the exact rational rank."""
    monkeypatch.setattr(stability, "DENSE_EIGEN_LIMIT", 200)
    model = parse_model(_grid_doc(n, open_rows, jitter))
    exact = _analyse(model, method="exact", use_factor=False)
    num = _analyse(model, method="numerical", use_factor=False)
    assert exact.proof == "exact"
    assert num.proof == "numerical"
    assert (num.rank, num.mechanisms, num.self_stress_states) == (
        exact.rank,
        exact.mechanisms,
        exact.self_stress_states,
    )
    assert "shift-invert" in num.method
    if not jitter:  # regular grid: one shear mechanism per open row (jittered: whatever the exact rank says)
        assert exact.mechanisms == len(open_rows)


def test_factor_evidence_path_for_large_stable_model() -> None:
    """Above the exact limit with a factor: numerical, quoting the factor's condition estimate."""
    model = parse_model(_grid_doc(8))
    assert _analyse(model, method="auto", use_factor=True).proof == "exact"
    system = build_system(model)
    factor, cond = factorize_system(model, system)
    big = stability.analyse(model, system, factor, condition=cond, exact_limit=10)
    assert big.proof == "numerical"
    assert big.stable
    assert f"{cond:.3g}" in big.evidence
    assert big.self_stress_states == model.n_members + 3 - 2 * model.n_nodes


# ------------------------------------------------------------------- property
@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(doc=rational_plane_trusses(determinate=True, springs=False, max_cases=1))
def test_removing_a_member_of_a_determinate_truss_makes_one_mechanism(doc: dict[str, Any]) -> None:
    """A stable determinate truss has no redundant member: removing any one leaves exactly one mechanism
    (Maxwell 1864 count with the rank: s − M = −1 and s = 0; common practice)."""
    model = parse_model(json.dumps(doc))
    rep = _analyse(model)
    assume(rep.classification == "stable-determinate")
    doc = dict(doc)
    doc.pop("results", None)
    doc["members"] = doc["members"][1:]
    used = {str(m["id"]) for m in doc["members"]}
    for lc in doc.get("load_cases", []):
        for key in ("temperature_changes", "length_errors"):
            if key in lc:
                lc[key] = [t for t in lc[key] if str(t["member"]) in used]
    cut = _analyse(parse_model(json.dumps(doc)))
    assert (cut.mechanisms, cut.self_stress_states) == (1, 0)


# ------------------------------------------------------- independent oracles
def _sympy_equilibrium_rank(doc: dict[str, Any]) -> int:
    """Rank of [Bᵀ | C] built here from the document in sympy rationals (unnormalised member columns)."""
    import sympy

    d = int(doc["dimensions"])
    axes = "xyz"[:d]
    ids = [str(n["id"]) for n in doc["nodes"]]
    X = {str(n["id"]): [sympy.Rational(str(n[a])) for a in axes] for n in doc["nodes"]}
    cols = []
    for m in doc["members"]:
        s, e = str(m["start"]), str(m["end"])
        col = [sympy.Integer(0)] * (d * len(ids))
        for a in range(d):
            v = X[e][a] - X[s][a]
            col[d * ids.index(s) + a] -= v
            col[d * ids.index(e) + a] += v
        cols.append(col)
    for sup in doc.get("supports", []):
        node = ids.index(str(sup["node"]))
        dirs = []
        for r in sup.get("restrain", []):
            dirs.append([1 if a == r else 0 for a in axes] if isinstance(r, str) else r["direction"])
        for spring in sup.get("springs", []):
            if float(spring["stiffness"]) > 0:
                dirs.append(
                    [1 if a == spring.get("axis") else 0 for a in axes] if "axis" in spring else spring["direction"]
                )
        for vec in dirs:
            col = [sympy.Integer(0)] * (d * len(ids))
            for a in range(d):
                col[d * node + a] = sympy.Rational(str(vec[a]))
            cols.append(col)
    return int(sympy.Matrix(cols).T.rank()) if cols else 0


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_rank_matches_sympy(path: Path) -> None:
    """The exact rank (modular proof or flint null space) equals sympy's rank of an independent build."""
    model, _ = _load(path)
    doc = json.loads(path.read_text())
    assert _analyse(model).rank == _sympy_equilibrium_rank(doc)


def test_modular_proof_used_for_stable_model() -> None:
    model, exp = _load(DATA / "pratt_truss_six_panels.json")
    rep = _analyse(model)
    assert "modulo" in rep.method
    assert rep.rank == exp["rank"]


def test_every_code_the_check_can_raise_is_registered() -> None:
    codes = {r.code for r in stability_check.RULES}
    assert set(stability_check.TRAP_CODES.values()) <= codes
    assert set(stability_check.ORDER_CODES.values()) <= codes
    assert all(r.family == stability_check.CHECK_ID for r in stability_check.RULES)
    assert len(codes) == len(stability_check.RULES)
