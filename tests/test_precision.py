"""High-precision recomputation and proven bounds (audit.precision) against references outside the project.

References:

* exact rational solutions by sympy (Meurer et al., "SymPy: symbolic computing in Python", PeerJ Computer
  Science 3:e103, 2017) of models whose member lengths are all rational (Pythagorean coordinates:
  3-4-5 triangles), with the stiffness method written out independently in this file: element stiffness
  EA/L·[n nᵀ, −n nᵀ; −n nᵀ, n nᵀ] (Kassimali, *Matrix Analysis of Structures*, 2nd ed., eq. 3.73), supports
  as Lagrange multipliers, N = EA/L·(n·Δu − αΔT·L − e) (the exchange format's definition);
* mpmath (Johansson et al., mpmath 1.3) dense LU solves at 60 digits for irrational lengths;
* the symmetric two-bar truss, whose joint stiffness 2EA/L³·diag(a², h²) is derived in the test (common
  practice), for the condition number (a/h)².
"""

from __future__ import annotations

import json
import re
from fractions import Fraction
from typing import Any

import mpmath
import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from audit import precision
from audit.exchange import parse_model
from audit.model import Model
from audit.solve import build_system, factorize_system, solve_with


# ----------------------------------------------------------------------------- model documents
def raw(text: str) -> str:
    """A JSON number written exactly as ``text`` (e.g. with trailing zeros)."""
    return f"<<{text}>>"


def to_json(doc: dict[str, Any]) -> str:
    return re.sub(r'"<<([^>]*)>>"', r"\1", json.dumps(doc))


def pythagorean_doc(
    e_soft: str = "2.0e8",
    inclined: bool = True,
    spring: bool = True,
    results: dict | None = None,
    exact: bool = False,
    soft: tuple[int, ...] = (2, 7),
) -> dict[str, Any]:
    """Two-panel truss on a 3 x 4 grid: every member is 3, 4 or 5 long (rational lengths)."""
    x3, x6, y4 = (raw("3.000000"), raw("6.000000"), raw("4.000000")) if exact else (3, 6, 4)
    nodes = [
        {"id": "A", "x": 0, "y": 0},
        {"id": "B", "x": x3, "y": 0},
        {"id": "C", "x": x6, "y": 0},
        {"id": "D", "x": 0, "y": y4},
        {"id": "E", "x": x3, "y": y4},
        {"id": "F", "x": x6, "y": y4},
    ]
    pairs = ["AB", "BC", "DE", "EF", "AD", "BE", "CF", "AE", "BF", "BD", "CE"]
    members = []
    for i, (s, e) in enumerate(pairs):
        mem: dict[str, Any] = {"id": str(i + 1), "start": s, "end": e, "section": "tube"}
        mem["E"] = raw(e_soft) if i in soft else raw("2.0e8")
        members.append(mem)
    supports: list[dict[str, Any]] = [{"node": "A", "restrain": ["x", "y"]}]
    supports.append({"node": "C", "restrain": [{"direction": [3, 4]}] if inclined else ["y"]})
    if spring:
        supports.append({"node": "F", "springs": [{"direction": [4, 3], "stiffness": 1500}]})
    load = raw("-12.50000") if exact else -12.5
    doc: dict[str, Any] = {
        "format": "truss-audit-model",
        "version": 1,
        "title": "pythagorean",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN", "temperature": "degC"},
        "nodes": nodes,
        "materials": {"steel": {"E": 2.0e8, "alpha": 1.2e-5}},
        "sections": {"tube": {"A": raw("1.2e-3")}},
        "members": members,
        "supports": supports,
        "load_cases": [
            {"id": "snow", "loads": [{"node": "E", "fy": load}, {"node": "F", "fx": 3.75}]},
            {
                "id": "heat",
                "temperature_changes": [{"member": "1", "delta": 25}],
                "length_errors": [{"member": "9", "value": 0.002}],
                "support_displacements": [{"node": "A", "y": -0.005}],
            },
        ],
        "combinations": [{"id": "design", "factors": {"snow": 1.35, "heat": 1.5}}],
    }
    for mem in members:
        mem["material"] = "steel"
    if results is not None:
        doc["results"] = results
    return doc


def model_of(doc: dict[str, Any]) -> Model:
    return parse_model(to_json(doc))


# ----------------------------------------------------------------------------- independent reference solver
def reference(doc: dict[str, Any], num: Any, sqrt: Any, solve: Any, zeros: Any) -> dict[str, dict[str, Any]]:
    """Solve the document's cases with the stiffness method and Lagrange multipliers, in the given arithmetic."""
    d = doc["dimensions"]
    axes = "xyz"[:d]

    def val(x: Any) -> Any:
        s = str(x)
        m = re.fullmatch(r"<<(.*)>>", s)
        return num(m.group(1) if m else s)

    ids = [n["id"] for n in doc["nodes"]]
    idx = {n: i for i, n in enumerate(ids)}
    X = [[val(n[a]) for a in axes] for n in doc["nodes"]]
    nd = len(ids) * d
    mats, secs = doc.get("materials", {}), doc.get("sections", {})
    mem = []
    for m in doc["members"]:
        E = val(m["E"]) if "E" in m else val(mats[m["material"]]["E"])
        A = val(m["A"]) if "A" in m else val(secs[m["section"]]["A"])
        alpha = val(mats[m["material"]].get("alpha", 0)) if "material" in m else num("0")
        s, e = idx[m["start"]], idx[m["end"]]
        v = [X[e][a] - X[s][a] for a in range(d)]
        L = sqrt(sum(c * c for c in v))
        mem.append((m["id"], s, e, E * A / L, [c / L for c in v], alpha, L))
    K = zeros(nd, nd)
    for _id, s, e, k, n, _al, _L in mem:
        for i in range(d):
            for j in range(d):
                kk = k * n[i] * n[j]
                K[s * d + i, s * d + j] += kk
                K[e * d + i, e * d + j] += kk
                K[s * d + i, e * d + j] -= kk
                K[e * d + i, s * d + j] -= kk
    Ks = zeros(nd, nd)
    cons: list[tuple[int, list[Any]]] = []
    for sup in doc.get("supports", []):
        j = idx[sup["node"]]
        for r in sup.get("restrain", []):
            vec = (
                [num("1") if a == r else num("0") for a in axes]
                if isinstance(r, str)
                else [val(c) for c in r["direction"]]
            )
            ln = sqrt(sum(c * c for c in vec))
            cons.append((j, [c / ln for c in vec]))
        for spg in sup.get("springs", []):
            vec = (
                [num("1") if a == spg["axis"] else num("0") for a in axes]
                if "axis" in spg
                else [val(c) for c in spg["direction"]]
            )
            ln = sqrt(sum(c * c for c in vec))
            n = [c / ln for c in vec]
            for i in range(d):
                for k2 in range(d):
                    Ks[j * d + i, j * d + k2] += val(spg["stiffness"]) * n[i] * n[k2]
    nc = len(cons)
    cases: dict[str, tuple[list[Any], list[Any], list[Any]]] = {}
    for lc in doc.get("load_cases", []):
        f = [num("0")] * nd
        for ld in lc.get("loads", []):
            for a_i, a in enumerate(axes):
                if "f" + a in ld:
                    f[idx[ld["node"]] * d + a_i] += val(ld["f" + a])
        d0 = [num("0")] * len(mem)
        mi = {m[0]: i for i, m in enumerate(mem)}
        for t in lc.get("temperature_changes", []):
            e_i = mi[t["member"]]
            d0[e_i] += mem[e_i][5] * val(t["delta"]) * mem[e_i][6]
        for t in lc.get("length_errors", []):
            d0[mi[t["member"]]] += val(t["value"])
        g = [num("0")] * nc
        for sd in lc.get("support_displacements", []):
            j = idx[sd["node"]]
            for ci, (cj, n) in enumerate(cons):
                if cj == j and "direction" not in sd:
                    for a_i, a in enumerate(axes):
                        if a in sd and n[a_i] != 0:
                            g[ci] += val(sd[a]) * n[a_i]
        cases[lc["id"]] = (f, d0, g)
    for cb in doc.get("combinations", []):
        f = [num("0")] * nd
        d0 = [num("0")] * len(mem)
        g = [num("0")] * nc
        for cid, fac in cb["factors"].items():
            w = val(fac)
            cf, cd, cg = cases[cid]
            f = [a + w * b for a, b in zip(f, cf, strict=True)]
            d0 = [a + w * b for a, b in zip(d0, cd, strict=True)]
            g = [a + w * b for a, b in zip(g, cg, strict=True)]
        cases[cb["id"]] = (f, d0, g)
    out: dict[str, dict[str, Any]] = {}
    n_all = nd + nc
    for cid, (f, d0, g) in cases.items():
        M = zeros(n_all, n_all)
        rhs = zeros(n_all, 1)
        f0 = [num("0")] * nd
        for e_i, (_id, s, e, k, n, _al, _L) in enumerate(mem):
            for i in range(d):
                f0[s * d + i] -= k * d0[e_i] * n[i]
                f0[e * d + i] += k * d0[e_i] * n[i]
        for i in range(nd):
            for j in range(nd):
                M[i, j] = K[i, j] + Ks[i, j]
            rhs[i, 0] = f[i] + f0[i]
        for ci, (j, n) in enumerate(cons):
            for a in range(d):
                M[nd + ci, j * d + a] = n[a]
                M[j * d + a, nd + ci] = n[a]
            rhs[nd + ci, 0] = g[ci]
        x = solve(M, rhs)
        u = [x[i] for i in range(nd)]
        N = []
        for e_i, (_id, s, e, k, n, _al, _L) in enumerate(mem):
            el = sum(n[a] * (u[e * d + a] - u[s * d + a]) for a in range(d))
            N.append(k * (el - d0[e_i]))
        R = [sum(K[i, j] * u[j] for j in range(nd)) - f[i] - f0[i] for i in range(nd)]
        out[cid] = {"u": u, "N": N, "R": R}
    return out


def sympy_reference(doc: dict[str, Any]) -> dict[str, dict[str, Any]]:
    return reference(doc, sympy.Rational, sympy.sqrt, lambda M, b: M.LUsolve(b), sympy.zeros)


def mpmath_reference(doc: dict[str, Any], dps: int = 60) -> dict[str, dict[str, Any]]:
    with mpmath.workdps(dps):
        return reference(doc, mpmath.mpf, mpmath.sqrt, mpmath.lu_solve, mpmath.zeros)


def analysed(doc: dict[str, Any], digits: int = 30, **kw: Any) -> tuple[Model, precision.PrecisionReport]:
    model = model_of(doc)
    system = build_system(model)
    factor, cond = factorize_system(model, system)
    sol = solve_with(model, system, factor, cond)
    return model, precision.analyse(model, system, factor, sol, model.results, digits=digits, **kw)


def frac(x: Any) -> Fraction:
    if isinstance(x, sympy.Rational):
        return Fraction(int(x.p), int(x.q))
    return Fraction(str(x))


# ----------------------------------------------------------------------------- exact rational references
PYTHAGOREAN = {
    "plain": pythagorean_doc(inclined=False, spring=False),
    "inclined-roller-and-spring": pythagorean_doc(),
    "stiffness-spread-1e10": pythagorean_doc(e_soft="2.0e-2"),
    # every member at joint F 1e10 times softer, no spring: the restrained K has condition ~1e10
    "ill-conditioned-1e10": pythagorean_doc(e_soft="2.0e-2", spring=False, soft=(3, 6, 8)),
}


@pytest.fixture(scope="module", params=sorted(PYTHAGOREAN), ids=sorted(PYTHAGOREAN))
def exact_case(request: pytest.FixtureRequest) -> tuple[Model, precision.PrecisionReport, dict[str, Any]]:
    doc = PYTHAGOREAN[request.param]
    model, rep = analysed(doc)
    return model, rep, sympy_reference(doc)


CASES = ("snow", "heat", "design")


@pytest.mark.parametrize("case", CASES)
def test_displacements_agree_to_30_digits_with_sympy(exact_case: Any, case: str) -> None:
    _model, rep, ref = exact_case
    got = rep.case(case).displacements_exact.to_fractions().reshape(-1)
    want = [frac(x) for x in ref[case]["u"]]
    scale = max(abs(w) for w in want)
    err = max(abs(g - w) for g, w in zip(got, want, strict=True))
    assert err <= scale * Fraction(1, 10**30)


@pytest.mark.parametrize("case", CASES)
def test_proven_displacement_bound_contains_true_error(exact_case: Any, case: str) -> None:
    _model, rep, ref = exact_case
    c = rep.case(case)
    got = c.displacements_exact.to_fractions().reshape(-1)
    want = [frac(x) for x in ref[case]["u"]]
    err = np.array([float(abs(g - w)) for g, w in zip(got, want, strict=True)])
    assert c.status == "proven"
    assert c.bound is not None
    assert np.all(err <= c.bound_dof.reshape(-1))
    assert float(np.sqrt((err**2).sum())) <= c.bound
    assert c.proven_digits is not None
    assert c.proven_digits >= 30


@pytest.mark.parametrize("case", CASES)
def test_axial_forces_and_reactions_within_proven_bounds(exact_case: Any, case: str) -> None:
    model, rep, ref = exact_case
    c = rep.case(case)
    n_got = c.axial_forces_exact.to_fractions()
    n_err = np.array([float(abs(g - frac(w))) for g, w in zip(n_got, ref[case]["N"], strict=True)])
    assert np.all(n_err <= c.bound_axial)
    r_got = c.reactions_exact.to_fractions().reshape(-1)
    sup = np.zeros(model.n_nodes, dtype=bool)
    sup[model.restraint_node] = True
    sup[model.spring_node] = True
    r_want = [frac(w) if sup[i // 2] else Fraction(0) for i, w in enumerate(ref[case]["R"])]
    r_err = np.array([float(abs(g - w)) for g, w in zip(r_got, r_want, strict=True)])
    assert np.all(r_err <= c.bound_reaction.reshape(-1))
    scale = float(max(abs(frac(w)) for w in ref[case]["N"]))
    assert float(n_err.max()) <= 1e-30 * scale


@pytest.mark.parametrize("case", CASES)
def test_float64_outputs_are_the_rounded_exact_values(exact_case: Any, case: str) -> None:
    _model, rep, ref = exact_case
    c = rep.case(case)
    want = np.array([float(frac(x)) for x in ref[case]["u"]])
    np.testing.assert_array_max_ulp(c.displacements.reshape(-1), want, maxulp=1)


def test_ill_conditioned_model_is_ill_conditioned() -> None:
    _model, rep = analysed(PYTHAGOREAN["ill-conditioned-1e10"])
    assert rep.condition_estimate > 1e9
    assert rep.condition_upper is not None
    assert rep.condition_upper >= rep.condition_estimate


def test_sixty_digits_agree_with_sympy() -> None:
    doc = PYTHAGOREAN["inclined-roller-and-spring"]
    _model, rep = analysed(doc, digits=60)
    ref = sympy_reference(doc)
    c = rep.case("design")
    got = c.displacements_exact.to_fractions().reshape(-1)
    want = [frac(x) for x in ref["design"]["u"]]
    scale = max(abs(w) for w in want)
    assert max(abs(g - w) for g, w in zip(got, want, strict=True)) <= scale * Fraction(1, 10**60)
    assert c.proven_digits is not None
    assert c.proven_digits >= 60
    assert mpmath.nstr(c.displacements_hp[4, 1], 60).startswith(mpmath.nstr(c.displacements_hp[4, 1], 20)[:10])


# ----------------------------------------------------------------------------- mpmath, irrational lengths
def irrational_doc(xs: tuple[int, ...] = (0, 2, 5, 1, 4), ys: tuple[int, ...] = (3, 2)) -> dict[str, Any]:
    """A braced frame with non-Pythagorean geometry (member lengths irrational)."""
    nodes = [
        {"id": "A", "x": xs[0], "y": 0},
        {"id": "B", "x": xs[1], "y": 0},
        {"id": "C", "x": xs[2], "y": 0},
        {"id": "D", "x": xs[3], "y": ys[0]},
        {"id": "E", "x": xs[4], "y": ys[1]},
    ]
    pairs = ["AB", "BC", "AD", "BD", "BE", "CE", "DE"]
    return {
        "format": "truss-audit-model",
        "version": 1,
        "title": "irrational",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "materials": {"steel": {"E": 2.1e8}},
        "sections": {"s": {"A": 0.0016}},
        "members": [
            {"id": str(i + 1), "start": p[0], "end": p[1], "material": "steel", "section": "s"}
            for i, p in enumerate(pairs)
        ],
        "supports": [{"node": "A", "restrain": ["x", "y"]}, {"node": "C", "restrain": [{"direction": [1, 2]}]}],
        "load_cases": [{"id": "wind", "loads": [{"node": "D", "fx": 7.3, "fy": -1.1}, {"node": "E", "fy": -4.25}]}],
    }


def check_against_mpmath(doc: dict[str, Any]) -> None:
    _model, rep = analysed(doc)
    ref = mpmath_reference(doc)
    c = rep.case("wind")
    got = c.displacements_exact.to_mpf(60).reshape(-1)
    with mpmath.workdps(60):
        err = [abs(g - w) for g, w in zip(got, ref["wind"]["u"], strict=True)]
        scale = max(abs(w) for w in ref["wind"]["u"])
        assert max(err) <= scale * mpmath.mpf(10) ** -30
        assert all(e <= b + mpmath.mpf(10) ** -50 for e, b in zip(err, c.bound_dof.reshape(-1), strict=True))


def test_irrational_lengths_agree_with_mpmath_at_60_digits() -> None:
    check_against_mpmath(irrational_doc())


@settings(max_examples=8, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    xs=st.tuples(st.just(0), st.integers(2, 3), st.integers(5, 7), st.integers(0, 2), st.integers(3, 5)),
    ys=st.tuples(st.integers(2, 5), st.integers(1, 4)),
)
def test_bound_contains_mpmath_error_on_random_geometry(xs: tuple[int, ...], ys: tuple[int, ...]) -> None:
    check_against_mpmath(irrational_doc(xs, ys))


# ----------------------------------------------------------------------------- condition: the two-bar truss
@pytest.mark.parametrize(("a", "h"), [(10, 1), (3, 2), (1, 4)], ids=["a10-h1", "a3-h2", "a1-h4"])
def test_two_bar_condition_is_a_over_h_squared(a: int, h: int) -> None:
    """Apex (0, h) on bars from (±a, 0): K = 2EA/L³·diag(a², h²) (derived: n = (∓a, h)/L, the cross terms cancel),
    so cond₂ = max(a, h)²/min(a, h)² and λ_min = 2EA·min(a, h)²/L³ (common practice)."""
    doc = {
        "format": "truss-audit-model",
        "version": 1,
        "title": "two-bar",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": [{"id": "L", "x": -a, "y": 0}, {"id": "R", "x": a, "y": 0}, {"id": "T", "x": 0, "y": h}],
        "members": [
            {"id": "1", "start": "L", "end": "T", "E": 2.0e8, "A": 1.0e-3},
            {"id": "2", "start": "R", "end": "T", "E": 2.0e8, "A": 1.0e-3},
        ],
        "supports": [{"node": "L", "restrain": ["x", "y"]}, {"node": "R", "restrain": ["x", "y"]}],
        "load_cases": [{"id": "p", "loads": [{"node": "T", "fy": -10}]}],
    }
    _model, rep = analysed(doc)
    ratio = (max(a, h) / min(a, h)) ** 2
    L3 = (a * a + h * h) ** 1.5
    lam_min = 2 * 2.0e8 * 1.0e-3 * min(a, h) ** 2 / L3
    assert rep.condition_estimate == pytest.approx(ratio, rel=1e-9)
    assert rep.condition_upper is not None
    assert rep.condition_upper >= ratio * (1 - 1e-12)
    assert rep.lambda_lo is not None
    assert 0.5 * lam_min <= rep.lambda_lo <= lam_min
    # the engine's estimate is of the diagonally scaled matrix, here the identity
    assert rep.condition_scaled == pytest.approx(1.0, rel=1e-12)


# ----------------------------------------------------------------------------- reported results
def rounded(x: Fraction, sig: int) -> float:
    return float(f"{float(x):.{sig}g}")


def results_from(ref: dict[str, Any], model_doc: dict[str, Any], case: str, sig: int, bump: float = 1.0) -> dict:
    ids = [n["id"] for n in model_doc["nodes"]]
    u = [frac(x) for x in ref[case]["u"]]
    disp = {}
    for i, nid in enumerate(ids):
        disp[nid] = {"x": rounded(u[2 * i], sig), "y": rounded(u[2 * i + 1], sig)}
    disp["E"]["y"] = disp["E"]["y"] * bump
    forces = {m["id"]: rounded(frac(n), sig) for m, n in zip(model_doc["members"], ref[case]["N"], strict=True)}
    return {"cases": {case: {"displacements": disp, "axial_forces": forces}}}


@pytest.fixture(scope="module")
def exact_reference() -> dict[str, Any]:
    return sympy_reference(pythagorean_doc(exact=True))


def test_reported_values_rounded_to_6_digits_are_proven_within_rounding(exact_reference: dict[str, Any]) -> None:
    doc = pythagorean_doc(exact=True)
    doc = pythagorean_doc(exact=True, results=results_from(exact_reference, doc, "snow", 6))
    _model, rep = analysed(doc)
    r = rep.case("snow").reported
    assert r.status == "evaluated"
    counts = {q.name: q.counts() for q in r.quantities}
    assert counts["displacements"]["within_rounding"] == counts["displacements"]["reported"] == 12
    assert counts["axial_forces"]["within_rounding"] == 11
    assert r.bound is not None
    assert r.distance_lower is not None
    assert r.distance_lower <= r.bound


def test_perturbed_displacement_is_proven_beyond_rounding(exact_reference: dict[str, Any]) -> None:
    doc = pythagorean_doc(exact=True)
    doc = pythagorean_doc(exact=True, results=results_from(exact_reference, doc, "snow", 6, bump=1.01))
    model, rep = analysed(doc)
    r = rep.case("snow").reported
    disp = next(q for q in r.quantities if q.name == "displacements")
    e = model.node_ids.index("E")
    assert disp.verdict[e, 1] == 2
    assert disp.counts()["beyond_rounding"] == 1
    assert r.distance_lower is not None
    assert r.distance_lower > 0
    assert r.backward_error is not None
    assert r.backward_error > rep.data_precision
    assert r.as_good_as_data is False


def test_sixteen_digit_results_are_as_good_as_the_data(exact_reference: dict[str, Any]) -> None:
    doc = pythagorean_doc(exact=True)
    doc = pythagorean_doc(exact=True, results=results_from(exact_reference, doc, "snow", 16))
    _model, rep = analysed(doc)
    r = rep.case("snow").reported
    assert r.backward_error is not None
    assert r.backward_error < 1e-14
    assert r.as_good_as_data is True


# ----------------------------------------------------------------------------- what could not be established
def test_bound_not_established_is_none_with_reason() -> None:
    _model, rep = analysed(PYTHAGOREAN["plain"], dense_limit=0, sparse_limit=0)
    assert rep.lambda_lo is None
    assert "limit" in rep.lambda_reason
    for c in rep.cases:
        assert c.bound is None
        assert c.proven_digits is None
        assert c.status == "not_established"
        assert c.reason
    d = rep.as_dict()
    json.dumps(d)
    assert d["status"] == "not_established"
    assert all(c["bound_displacements"] is None for c in d["cases"])


def test_factor_too_large_for_the_certificate_is_reported() -> None:
    model = model_of(PYTHAGOREAN["plain"])
    system = build_system(model)
    factor, cond = factorize_system(model, system)
    sol = solve_with(model, system, factor, cond)

    class Reported:
        """The engine's factor, claiming a factor too large for the certificate's memory limit."""

        backend = factor.backend
        n = factor.n
        factor_nonzeros = 10**9

        def solve(self, b: np.ndarray) -> np.ndarray:
            return factor.solve(b)

    rep = precision.analyse(model, system, Reported(), sol, None, dense_limit=0, max_factor_nonzeros=10**8)
    assert rep.lambda_lo is None
    assert "memory limit" in rep.lambda_reason
    assert all(c.bound is None for c in rep.cases)


def test_report_is_json_safe() -> None:
    _model, rep = analysed(PYTHAGOREAN["inclined-roller-and-spring"])
    text = json.dumps(rep.as_dict())
    back = json.loads(text)
    assert back["digits_requested"] == 30
    assert back["digits_proven_min"] >= 30
    assert back["lambda_certificate"] == "dense-cholesky"


def test_solve_high_precision_returns_exact_fractions() -> None:
    doc = PYTHAGOREAN["plain"]
    cases, rep = precision.solve_high_precision(model_of(doc), digits=40)
    ref = sympy_reference(doc)
    assert [c.case_id for c in cases] == ["snow", "heat", "design"]
    assert rep.digits == 40
    for c in cases:
        assert c.proven_digits is not None
        assert c.proven_digits >= 40
        want = [frac(x) for x in ref[c.case_id]["u"]]
        scale = max(abs(w) for w in want)
        got = c.displacements.reshape(-1)
        assert all(isinstance(g, Fraction) for g in got)
        assert max(abs(g - w) for g, w in zip(got, want, strict=True)) <= scale * Fraction(1, 10**40)


def test_dump_results_writes_the_requested_digits() -> None:
    from audit.exchange import dump_results

    doc = PYTHAGOREAN["plain"]
    model = model_of(doc)
    cases, _rep = precision.solve_high_precision(model, digits=35)
    text = dump_results(model, cases, source="test", digits=35)
    ref = sympy_reference(doc)
    ey = frac(ref["snow"]["u"][model.node_ids.index("E") * 2 + 1])
    written = json.loads(text, parse_float=str)["cases"]["snow"]["displacements"]["E"]["y"]
    assert Fraction(written) == Fraction(f"{sympy.N(sympy.Rational(ey.numerator, ey.denominator), 35)}")


def test_model_without_load_cases_still_gets_a_certificate() -> None:
    doc = dict(PYTHAGOREAN["plain"])
    doc.pop("load_cases")
    doc.pop("combinations")
    _model, rep = analysed(doc)
    assert rep.cases == ()
    assert rep.lambda_lo is not None


@pytest.mark.parametrize(("text", "quantum"), [("2.1e8", 5e6), ("-12.50", 0.005), ("3", 0.5), ("0.0016", 5e-5)])
def test_text_quantum(text: str, quantum: float) -> None:
    assert precision.text_quantum(text) == pytest.approx(quantum, rel=1e-12)


@pytest.mark.parametrize("digits", [3, 101], ids=["too-few", "too-many"])
def test_digits_out_of_range_are_refused(digits: int) -> None:
    model = model_of(PYTHAGOREAN["plain"])
    system = build_system(model)
    factor, cond = factorize_system(model, system)
    sol = solve_with(model, system, factor, cond)
    with pytest.raises(ValueError, match="digits"):
        precision.analyse(model, system, factor, sol, None, digits=digits)


def space_doc() -> dict[str, Any]:
    """A braced space truss with inclined rollers (directions (1,2,2) and (2,−1,2): rational unit vectors) and a
    spring along (1,1,0): irrational member lengths."""
    pairs = ["AB", "AC", "BD", "CD", "AE", "BE", "CE", "BF", "DF", "CF", "EF", "AD", "BC", "DE", "AF"]
    return {
        "format": "truss-audit-model",
        "version": 1,
        "title": "space",
        "dimensions": 3,
        "units": {"length": "m", "force": "kN"},
        "nodes": [
            {"id": "A", "x": 0, "y": 0, "z": 0},
            {"id": "B", "x": 4, "y": 0, "z": 0},
            {"id": "C", "x": 0, "y": 3, "z": 0},
            {"id": "D", "x": 4, "y": 3, "z": 0},
            {"id": "E", "x": 1, "y": 1, "z": 2},
            {"id": "F", "x": 3, "y": 2, "z": 2.5},
        ],
        "members": [{"id": str(i), "start": p[0], "end": p[1], "E": 2.1e8, "A": 0.0016} for i, p in enumerate(pairs)],
        "supports": [
            {"node": "A", "restrain": ["x", "y", "z"]},
            {"node": "B", "restrain": [{"direction": [1, 2, 2]}, "z"]},
            {"node": "C", "restrain": ["z"]},
            {
                "node": "D",
                "restrain": [{"direction": [2, -1, 2]}],
                "springs": [{"direction": [1, 1, 0], "stiffness": 900}],
            },
        ],
        "load_cases": [
            {"id": "wind", "loads": [{"node": "E", "fx": 3.1, "fz": -7}, {"node": "F", "fy": 2.2, "fz": -5.5}]}
        ],
    }


def test_space_truss_with_inclined_rollers_agrees_with_mpmath() -> None:
    check_against_mpmath(space_doc())


def test_axis_direction_written_as_a_vector_gives_the_same_proof() -> None:
    """A roller written {"direction": [0, 2]} is the axis restraint "y": same answer, same bounds."""
    doc = irrational_doc()
    doc["supports"][1] = {"node": "C", "restrain": ["y"]}
    _m, by_axis = analysed(doc)
    doc["supports"][1] = {"node": "C", "restrain": [{"direction": [0, 2]}]}
    _m, by_vector = analysed(doc)
    a, b = by_axis.case("wind"), by_vector.case("wind")
    np.testing.assert_array_equal(a.displacements, b.displacements)
    assert a.bound is not None
    assert b.bound is not None
    assert b.bound <= 2 * a.bound
