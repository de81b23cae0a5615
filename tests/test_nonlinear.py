"""Tension-only and compression-only members (``shared/FORMAT.md``, additions to version 1).

References outside the project:

* closed forms derived here with sympy in exact arithmetic: for a small model every active set is tried
  (each a linear truss solved exactly by the direct stiffness method), and the one state that meets
  every condition of FORMAT.md (equilibrium, compatibility of the active members, N ≥ 0 in an active
  tension-only member, a slack member on its slack side) is the answer; FORMAT.md says it is unique for
  a stable active structure, and the test asserts there is exactly one;
* an independent method: the convex strain energy ½·k·max(0, e)² (tension-only) minimised with
  ``scipy.optimize.minimize`` (trust-region Newton-CG) from a random start, and the complementarity
  conditions checked directly.
"""

from __future__ import annotations

import copy
import itertools
import json
from typing import Any

import numpy as np
import pytest
import scipy.optimize as so
import sympy as sp

from audit import engine, exchange, stiffness
from audit.nonlinear import MECHANISM, SOLVED
from audit.solve import build_system, solve_model

Doc = dict[str, Any]


def _model_doc(nodes, members, supports, cases, combinations=None) -> Doc:
    doc: Doc = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": [{"id": k, "x": x, "y": y} for k, (x, y) in nodes.items()],
        "members": members,
        "supports": supports,
        "load_cases": cases,
    }
    if combinations:
        doc["combinations"] = combinations
    return doc


def panel_doc() -> Doc:
    """A square bay, 4 m, with two crossing tension-only diagonals (different areas), pinned A, roller B."""
    nodes = {"A": (0, 0), "B": (4, 0), "C": (4, 4), "D": (0, 4)}
    mem = [
        {"id": "bot", "start": "A", "end": "B", "E": 2e8, "A": 1e-3},
        {"id": "right", "start": "B", "end": "C", "E": 2e8, "A": 1.2e-3},
        {"id": "top", "start": "C", "end": "D", "E": 2e8, "A": 1e-3},
        {"id": "left", "start": "D", "end": "A", "E": 2e8, "A": 1.5e-3},
        {"id": "D1", "start": "A", "end": "C", "E": 2e8, "A": 5e-4, "behaviour": "tension_only"},
        {"id": "D2", "start": "B", "end": "D", "E": 2e8, "A": 4e-4, "behaviour": "tension_only"},
    ]
    sup = [{"node": "A", "restrain": ["x", "y"]}, {"node": "B", "restrain": ["y"]}]
    cases = [
        {"id": "wind", "loads": [{"node": "D", "fx": 12}]},
        {"id": "back", "loads": [{"node": "D", "fx": -8}, {"node": "C", "fy": -5}]},
    ]
    return _model_doc(nodes, mem, sup, cases, [{"id": "both", "factors": {"wind": 1.5, "back": 1.0}}])


def hanger_doc() -> Doc:
    """A joint C hung from A and B by tension-only rods and propped from G by a compression-only strut."""
    nodes = {"A": (-3, 4), "B": (2, 3), "G": (1, -3), "C": (0, 0)}
    mem = [
        {"id": "rodA", "start": "A", "end": "C", "E": 2e8, "A": 3e-4, "behaviour": "tension_only"},
        {"id": "rodB", "start": "B", "end": "C", "E": 2e8, "A": 2e-4, "behaviour": "tension_only"},
        {"id": "prop", "start": "G", "end": "C", "E": 1e7, "A": 1e-2, "behaviour": "compression_only"},
    ]
    sup = [{"node": n, "restrain": ["x", "y"]} for n in ("A", "B", "G")]
    cases = [
        {"id": "down", "loads": [{"node": "C", "fy": -20}]},
        {"id": "sway", "loads": [{"node": "C", "fx": -10, "fy": -20}]},
        {"id": "uplift", "loads": [{"node": "C", "fy": 15}]},
    ]
    return _model_doc(nodes, mem, sup, cases)


# ------------------------------------------------------------------ exact enumeration (sympy)
def exact_states(doc: Doc, loads: dict[str, tuple[Any, Any]]) -> list[dict[str, sp.Expr]]:
    """Every active set's exact linear solution that meets FORMAT.md's conditions (restraints along axes)."""
    nodes = {n["id"]: (sp.Rational(str(n["x"])), sp.Rational(str(n["y"]))) for n in doc["nodes"]}
    fixed = {(s["node"], a) for s in doc["supports"] for a in s["restrain"]}
    dofs = [(n, a) for n in nodes for a in ("x", "y") if (n, a) not in fixed]
    sym = {d: sp.Symbol(f"u_{d[0]}_{d[1]}") for d in dofs}
    members = doc["members"]
    sign = {"tension_only": 1, "compression_only": -1}
    nl = [i for i, m in enumerate(members) if m.get("behaviour", "linear") != "linear"]
    found = []
    for slack in itertools.chain.from_iterable(itertools.combinations(nl, r) for r in range(len(nl) + 1)):

        def disp(n: str, a: str) -> sp.Expr:
            return sym.get((n, a), sp.Integer(0))

        elong = []
        for m in members:
            (xs, ys), (xe, ye) = nodes[m["start"]], nodes[m["end"]]
            length = sp.sqrt((xe - xs) ** 2 + (ye - ys) ** 2)
            nx, ny = (xe - xs) / length, (ye - ys) / length
            e = nx * (disp(m["end"], "x") - disp(m["start"], "x")) + ny * (disp(m["end"], "y") - disp(m["start"], "y"))
            k = sp.Rational(str(m["E"])) * sp.Rational(str(m["A"])) / length
            elong.append((e, k, nx, ny))
        forces = [0 if i in slack else k * e for i, (e, k, _nx, _ny) in enumerate(elong)]
        eqs = []
        for n, a in dofs:
            total = sp.Rational(str(loads.get(n, (0, 0))[0 if a == "x" else 1]))
            for i, m in enumerate(members):
                _e, _k, nx, ny = elong[i]
                c = nx if a == "x" else ny
                if m["end"] == n:
                    total -= forces[i] * c
                if m["start"] == n:
                    total += forces[i] * c
            eqs.append(sp.expand(total))
        sol = sp.solve(eqs, list(sym.values()), dict=True)
        if len(sol) != 1 or len(sol[0]) != len(sym):
            continue  # a mechanism: no unique solution for this active set
        s = sol[0]
        ok = True
        result: dict[str, sp.Expr] = {}
        for i, m in enumerate(members):
            e = sp.nsimplify(elong[i][0].subs(s))
            n_i = sp.simplify(forces[i].subs(s)) if i not in slack else sp.Integer(0)
            sg = sign.get(m.get("behaviour", "linear"), 0)
            if i in slack:
                ok &= bool(sg * e <= 0)
            elif sg:
                ok &= bool(sg * n_i >= 0)
            result[m["id"]] = n_i
        if ok:
            result.update({f"{n}.{a}": s[v] for (n, a), v in sym.items()})
            found.append(result)
    return found


def _case_loads(doc: Doc, case_id: str, factor: float = 1.0) -> dict[str, list[Any]]:
    out: dict[str, list[Any]] = {}
    for lc in doc["load_cases"]:
        if lc["id"] != case_id:
            continue
        for ld in lc.get("loads", []):
            cur = out.setdefault(ld["node"], [sp.Integer(0), sp.Integer(0)])
            cur[0] += sp.Rational(str(ld.get("fx", 0))) * sp.Rational(str(factor))
            cur[1] += sp.Rational(str(ld.get("fy", 0))) * sp.Rational(str(factor))
    return out


def _assert_matches(doc: Doc, case_id: str, exact: dict[str, sp.Expr]) -> None:
    model = exchange.parse_model(json.dumps(doc))
    sol = solve_model(model)
    case = sol.case(case_id)
    assert case is not None
    for j, mid in enumerate(model.member_ids):
        assert case.axial_forces[j] == pytest.approx(float(exact[mid]), rel=1e-9, abs=1e-9), mid
    for key, value in exact.items():
        if "." in key:
            n, a = key.split(".")
            i = model.node_ids.index(n)
            assert case.displacements[i, "xy".index(a)] == pytest.approx(float(value), rel=1e-9, abs=1e-15), key


@pytest.mark.parametrize("case_id", ["wind", "back"])
def test_square_panel_one_diagonal_slack(case_id: str) -> None:
    doc = panel_doc()
    states = exact_states(doc, {n: tuple(v) for n, v in _case_loads(doc, case_id).items()})
    assert len(states) == 1  # unique (FORMAT.md)
    exact = states[0]
    assert (exact["D1"] == 0) != (exact["D2"] == 0)  # exactly one diagonal slack
    _assert_matches(doc, case_id, exact)


def test_square_panel_combination_is_its_own_case() -> None:
    doc = panel_doc()
    loads: dict[str, list[Any]] = {}
    for cid, f in (("wind", 1.5), ("back", 1.0)):
        for n, v in _case_loads(doc, cid, f).items():
            cur = loads.setdefault(n, [0, 0])
            cur[0] += v[0]
            cur[1] += v[1]
    states = exact_states(doc, {n: tuple(v) for n, v in loads.items()})
    assert len(states) == 1
    _assert_matches(doc, "both", states[0])


@pytest.mark.parametrize("case_id", ["down", "sway"])
def test_hanger_with_a_compression_only_prop(case_id: str) -> None:
    doc = hanger_doc()
    states = exact_states(doc, {n: tuple(v) for n, v in _case_loads(doc, case_id).items()})
    assert len(states) == 1
    _assert_matches(doc, case_id, states[0])


def test_uplift_has_no_solution_and_names_the_members() -> None:
    doc = hanger_doc()
    assert exact_states(doc, {n: tuple(v) for n, v in _case_loads(doc, "uplift").items()}) == []
    model = exchange.parse_model(json.dumps(doc))
    sol = solve_model(model)
    assert sol.nonlinear is not None
    st = sol.nonlinear.state("uplift")
    assert st is not None
    assert st.status == MECHANISM
    assert "prop takes tension" in st.message
    assert sol.case("uplift") is None
    assert sol.case("down") is not None


def test_solve_exits_4_and_writes_the_other_cases(tmp_path: Any) -> None:
    import io

    from audit.cli import main

    path = tmp_path / "hanger.json"
    path.write_text(json.dumps(hanger_doc()))
    err = io.StringIO()
    assert main(["solve", str(path), "-o", str(tmp_path / "r.json")], io.StringIO(), err) == 4
    assert "'uplift'" in err.getvalue()
    assert "prop takes tension" in err.getvalue()
    written = json.loads((tmp_path / "r.json").read_text())
    assert set(written["cases"]) == {"down", "sway"}


# ------------------------------------------------------------------ independent method (scipy)
def random_doc(rng: np.random.Generator) -> Doc:
    """A braced grid of bays: chords and posts linear, every bay with two tension-only diagonals, a few
    compression-only props; pinned at the bottom corners, loads in every direction."""
    nx, ny = int(rng.integers(2, 5)), int(rng.integers(1, 4))
    nodes = {}
    for i in range(nx + 1):
        for j in range(ny + 1):
            nodes[f"n{i}_{j}"] = (
                round(i * 3.0 + rng.uniform(-0.4, 0.4), 3),
                round(j * 2.5 + rng.uniform(-0.3, 0.3), 3),
            )
    mem = []

    def add(a: str, b: str, behaviour: str = "linear") -> None:
        m = {"id": f"m{len(mem)}", "start": a, "end": b, "E": 2e8, "A": round(float(rng.uniform(2e-4, 2e-3)), 6)}
        if behaviour != "linear":
            m["behaviour"] = behaviour
        mem.append(m)

    for i in range(nx + 1):
        for j in range(ny + 1):
            if i < nx:
                add(f"n{i}_{j}", f"n{i + 1}_{j}", "compression_only" if rng.random() < 0.1 else "linear")
            if j < ny:
                add(f"n{i}_{j}", f"n{i}_{j + 1}")
            if i < nx and j < ny:
                add(f"n{i}_{j}", f"n{i + 1}_{j + 1}", "tension_only")
                add(f"n{i + 1}_{j}", f"n{i}_{j + 1}", "tension_only")
    sup = [{"node": "n0_0", "restrain": ["x", "y"]}, {"node": f"n{nx}_0", "restrain": ["x", "y"]}]
    loads = [
        {"node": n, "fx": round(float(rng.uniform(-10, 10)), 3), "fy": round(float(rng.uniform(-10, 5)), 3)}
        for n in nodes
        if not n.endswith("_0")
    ]
    return _model_doc(nodes, mem, sup, [{"id": "w", "loads": loads}])


def _energy_minimum(model, start: np.ndarray) -> np.ndarray:
    system = build_system(model)
    B = stiffness.compatibility_matrix(model)
    Br = (B @ system.T).tocsr()
    k = model.axial_stiffness()
    s = model.behaviour_codes()
    b = system.T.T @ model.load_cases[0].loads.reshape(-1)

    def parts(w: np.ndarray):
        e = Br @ w
        on = (s == 0) | (s * e > 0)
        return e, on

    def f(w: np.ndarray) -> float:
        e, on = parts(w)
        return float(0.5 * np.sum(k * on * e * e) - b @ w)

    def g(w: np.ndarray) -> np.ndarray:
        e, on = parts(w)
        return np.asarray(Br.T @ (k * on * e) - b)

    def hessp(w: np.ndarray, p: np.ndarray) -> np.ndarray:
        _e, on = parts(w)
        return np.asarray(Br.T @ (k * on * (Br @ p)))

    scale = 1.0 / np.sqrt(float(np.max(k)))  # variables scaled so that the Hessian is of order one
    res = so.minimize(
        lambda z: f(z * scale),
        start / scale,
        jac=lambda z: g(z * scale) * scale,
        hessp=lambda z, p: hessp(z * scale, p * scale) * scale,
        method="trust-ncg",
        options={"gtol": 1e-13 * float(np.abs(b).max()) * scale, "maxiter": 5000},
    )
    return system.T @ (res.x * scale)


def random_tower(rng: np.random.Generator) -> Doc:
    """A space tower: square storeys (posts, ring beams and one floor diagonal linear), every face braced by
    two tension-only diagonals, pinned at the base, random loads at every upper joint."""
    levels, a = int(rng.integers(1, 4)), 3.0
    corners = [(0, 0), (1, 0), (1, 1), (0, 1)]
    nodes = {
        f"n{k}_{c}": (a * x + rng.uniform(-0.2, 0.2), a * y + rng.uniform(-0.2, 0.2), 2.5 * k)
        for k in range(levels + 1)
        for c, (x, y) in enumerate(corners)
    }
    mem: list[Doc] = []

    def add(p: str, q: str, behaviour: str = "linear") -> None:
        m = {"id": f"m{len(mem)}", "start": p, "end": q, "E": 2e8, "A": round(float(rng.uniform(2e-4, 2e-3)), 6)}
        if behaviour != "linear":
            m["behaviour"] = behaviour
        mem.append(m)

    for k in range(levels + 1):
        for c in range(4):
            if k:
                add(f"n{k}_{c}", f"n{k}_{(c + 1) % 4}")
                add(f"n{k - 1}_{c}", f"n{k}_{c}")
                add(f"n{k - 1}_{c}", f"n{k}_{(c + 1) % 4}", "tension_only")
                add(f"n{k - 1}_{(c + 1) % 4}", f"n{k}_{c}", "tension_only")
        if k:
            add(f"n{k}_0", f"n{k}_2")
    doc = _model_doc({}, mem, [{"node": f"n0_{c}", "restrain": ["x", "y", "z"]} for c in range(4)], [])
    doc["dimensions"] = 3
    doc["nodes"] = [{"id": n, "x": round(x, 3), "y": round(y, 3), "z": z} for n, (x, y, z) in nodes.items()]
    loads = [
        {
            "node": n,
            "fx": round(float(rng.uniform(-8, 8)), 3),
            "fy": round(float(rng.uniform(-8, 8)), 3),
            "fz": round(float(rng.uniform(-10, 2)), 3),
        }
        for n in nodes
        if not n.startswith("n0_")
    ]
    doc["load_cases"] = [{"id": "w", "loads": loads}]
    return doc


@pytest.mark.parametrize("seed", range(16))
def test_random_models_against_energy_minimisation(seed: int) -> None:
    rng = np.random.default_rng(seed)
    doc = random_doc(rng) if seed < 12 else random_tower(rng)
    model = exchange.parse_model(json.dumps(doc))
    sol = solve_model(model)
    assert sol.nonlinear is not None
    st = sol.nonlinear.state("w")
    assert st is not None
    assert st.status == SOLVED, st.message
    case = sol.case("w")
    assert case is not None
    system = build_system(model)
    start = rng.normal(size=system.T.shape[1]) * 1e-3
    u_ref = _energy_minimum(model, start)
    u = case.displacements.reshape(-1)
    assert np.max(np.abs(u - u_ref)) <= 1e-6 * np.max(np.abs(u_ref))
    # complementarity, directly
    B = stiffness.compatibility_matrix(model)
    e = B @ u
    N = case.axial_forces
    s = model.behaviour_codes()
    nscale = float(np.max(np.abs(N)))
    k = model.axial_stiffness()
    assert np.all(s * N >= -1e-9 * nscale)  # no active member in the sense it cannot carry
    slack = (s != 0) & (N == 0)
    assert np.all((s * e)[slack] <= 1e-9 * nscale / k[slack])  # slack members on their slack side
    active = ~slack
    assert np.allclose(N[active], (k * e)[active], rtol=1e-9, atol=1e-9 * nscale)  # compatibility
    R = (B.T @ N - model.load_cases[0].loads.reshape(-1)).reshape(model.n_nodes, model.dim)
    free = np.ones(model.n_nodes, dtype=bool)
    free[model.restraint_node] = False
    assert np.max(np.abs(R[free])) <= 1e-9 * nscale  # equilibrium at every free joint


# ------------------------------------------------------------------ hand-offs through the whole audit
def _audit(doc: Doc, results: Doc) -> tuple[set[str], str]:
    model = exchange.parse_model(json.dumps(doc))
    res = exchange.parse_results(json.dumps(results), model)
    result = engine.audit(model, res)
    return {f.code for o in result.outcomes for f in o.findings}, result.verdict


def _solved(doc: Doc) -> Doc:
    model = exchange.parse_model(json.dumps(doc))
    return json.loads(exchange.dump_results(model, solve_model(model).cases, source="test", digits=12))


def test_a_correct_hand_off_passes() -> None:
    doc = panel_doc()
    codes, verdict = _audit(doc, _solved(doc))
    assert verdict == "pass", codes
    assert "NL001" in codes


def test_a_linear_hand_off_fails_by_member() -> None:
    doc = panel_doc()
    linear = copy.deepcopy(doc)
    for m in linear["members"]:
        m.pop("behaviour", None)
    codes, verdict = _audit(doc, _solved(linear))
    assert verdict == "fail"
    assert "CP103" in codes  # a tension-only diagonal reported in compression
    assert "DX121" in codes  # and the cause: the source treated it as linear


def test_superposed_combination_is_wrong_by_more_than_one_percent_both_ways() -> None:
    doc = panel_doc()
    right = _solved(doc)
    c = right["cases"]
    superposed = copy.deepcopy(right)
    for part in ("displacements", "reactions"):
        superposed["cases"]["both"][part] = {
            n: {a: 1.5 * c["wind"][part][n][a] + 1.0 * c["back"][part][n][a] for a in c["wind"][part][n]}
            for n in c["wind"][part]
        }
    superposed["cases"]["both"]["axial_forces"] = {
        m: 1.5 * c["wind"]["axial_forces"][m] + 1.0 * c["back"]["axial_forces"][m] for m in c["wind"]["axial_forces"]
    }
    true = np.array(list(c["both"]["axial_forces"].values()))
    summed = np.array(list(superposed["cases"]["both"]["axial_forces"].values()))
    assert np.max(np.abs(summed - true)) > 0.01 * np.max(np.abs(true))  # the premise: > 1 % off
    codes, verdict = _audit(doc, superposed)
    assert verdict == "fail"
    assert "CB103" in codes
    codes, verdict = _audit(doc, right)
    assert verdict == "pass"
    assert "CB103" not in codes


def test_self_weight_left_out_fails() -> None:
    doc = panel_doc()
    for m in doc["members"]:
        m["unit_weight"] = 78.5
    doc["load_cases"][0]["self_weight"] = {"factor": 1.0}
    without = copy.deepcopy(doc)
    del without["load_cases"][0]["self_weight"]
    codes, verdict = _audit(doc, _solved(without))
    assert verdict == "fail"
    assert "DX122" in codes
    codes, verdict = _audit(doc, _solved(doc))
    assert verdict == "pass", codes


def test_an_unconverged_solve_is_an_error(monkeypatch: pytest.MonkeyPatch) -> None:
    from audit.nonlinear import search

    monkeypatch.setattr(search, "MAX_ACTIVE_SET", 0)
    monkeypatch.setattr(search, "MAX_NEWTON", 0)
    model = exchange.parse_model(json.dumps(panel_doc()))
    result = engine.audit(model)
    codes = {f.code for f in result.findings}
    assert "NL102" in codes
    assert result.verdict == "fail"


@pytest.mark.parametrize("delta", [-30, 30])
def test_initial_strain_decides_the_state(delta: int) -> None:
    """A tension-only bar beside a linear one between the same joints (FORMAT.md: slack only where it would
    shorten once its initial strain is counted).  Cooled (δ = α·Δt·L < 0) it is pulled: with k_t, k_l the
    two EA/L, compatibility and equilibrium N_t + N_l = 0 give N_t = −k_t·k_l·δ/(k_t + k_l) (derived here,
    common practice); heated it would be pushed, so it goes slack and both forces are 0."""
    doc = _model_doc(
        {"A": (0, 0), "B": (5, 0)},
        [
            {"id": "lin", "start": "A", "end": "B", "E": 2e8, "A": 1e-3},
            {"id": "rod", "start": "A", "end": "B", "E": 2e8, "A": 4e-4, "alpha": 1.2e-5, "behaviour": "tension_only"},
        ],
        [{"node": "A", "restrain": ["x", "y"]}, {"node": "B", "restrain": ["y"]}],
        [{"id": "t", "temperature_changes": [{"member": "rod", "delta": delta}]}],
    )
    doc["units"]["temperature"] = "degC"
    model = exchange.parse_model(json.dumps(doc))
    case = solve_model(model).case("t")
    assert case is not None
    k_l, k_t = 2e8 * 1e-3 / 5, 2e8 * 4e-4 / 5
    d = 1.2e-5 * delta * 5
    expected = -k_t * k_l * d / (k_t + k_l) if delta < 0 else 0.0
    assert case.axial_forces[1] == pytest.approx(expected, rel=1e-12, abs=1e-12)
    assert case.axial_forces[0] == pytest.approx(-expected, rel=1e-12, abs=1e-12)
