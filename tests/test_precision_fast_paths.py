"""Fast paths of the exact residual and its bounds against exact rational arithmetic.

References: the exact residual ``r = f − K̂u − K_s u`` must equal, integer for integer, the residual recomputed
here in sympy rationals from the model's exact integers (members exact, springs floored at the force scale as
:mod:`audit.precision.residual` documents).  :func:`audit.precision.exact_numbers.abs_to_float_bound` must lie
within its stated relative error of the exact value (Python's ``fractions``), since float(int) is correctly
rounded and one IEEE multiplication adds one rounding (IEEE 754-2019, §4.3).  The float scatter of the error
bounds must add in the order of ``np.add.at`` (common practice: ``np.bincount`` adds its weights in input order),
so that the bounds are bit-identical to those of that order.
"""

from __future__ import annotations

import copy
import math
from fractions import Fraction
from typing import Any

import numpy as np
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st
from test_precision import to_json
from test_precision_steering import grid_doc

from audit.exchange import parse_model
from audit.precision import analysis, residual
from audit.precision.exact_numbers import ABS_BOUND_REL, abs_to_float_bound, ints_to_float
from audit.solve import build_system, factorize_system, solve_with


def _spring_doc() -> dict[str, Any]:
    """The steering grid with axial springs at two top nodes (the spring path of the residual)."""
    doc = copy.deepcopy(grid_doc(4))
    doc["supports"].append({"node": "0-4", "springs": [{"axis": "x", "stiffness": "<<1234.5>>"}]})
    doc["supports"].append({"node": "4-4", "springs": [{"axis": "y", "stiffness": "<<7.25e3>>"}]})
    return doc


def _seen(doc: dict[str, Any], monkeypatch: pytest.MonkeyPatch) -> dict[str, Any]:
    model = parse_model(to_json(doc))
    system = build_system(model)
    factor, cond = factorize_system(model, system, "auto")
    sol = solve_with(model, system, factor, cond)
    seen: dict[str, Any] = {}
    orig = analysis.refine

    def spy(ex, system, factor, sc, rhs, rhs_err, it, digits, cond=float("nan")):  # type: ignore[no-untyped-def]
        seen.update(ex=ex, sc=sc, rhs=rhs, rhs_err=rhs_err, u=it.u)
        return orig(ex, system, factor, sc, rhs, rhs_err, it, digits, cond)

    monkeypatch.setattr(analysis, "refine", spy)
    analysis.analyse(model, system, factor, sol, None, digits=30)
    return seen


@pytest.mark.parametrize("springs", [False, True], ids=["members", "members+springs"])
def test_exact_residual_equals_the_sympy_residual(springs: bool, monkeypatch: pytest.MonkeyPatch) -> None:
    seen = _seen(_spring_doc() if springs else grid_doc(4), monkeypatch)
    ex, sc, rhs, u = seen["ex"], seen["sc"], seen["rhs"], seen["u"]
    assert bool(ex.sp_node.size) == springs
    r, rm, _mag, _eff, _err, p = residual.exact_residual(ex, sc, rhs, seen["rhs_err"], u)
    a10 = ex.kx - ex.k_ea - sc.ku - sc.e10f
    b2 = -ex.Q - sc.S - sc.e2f
    scale = sympy.Integer(10) ** a10 * sympy.Integer(2) ** b2
    want = [[sympy.Integer(int(rhs[n, a, 0])) for a in range(ex.dim)] for n in range(ex.n_nodes)]
    for k in range(ex.s_idx.size):
        s, e = int(ex.s_idx[k]), int(ex.e_idx[k])
        v = [sympy.Integer(int(x)) for x in ex.v[k]]
        pk = sum(v[a] * (int(u[e, a, 0]) - int(u[s, a, 0])) for a in range(ex.dim))
        assert int(p[k, 0]) == pk
        q = sympy.Integer(int(ex.c[k])) * scale * pk
        for a in range(ex.dim):
            want[e][a] -= q * v[a]
            want[s][a] += q * v[a]
    springs_part = [[sympy.Integer(0)] * ex.dim for _ in range(ex.n_nodes)]
    s10, s2 = -ex.kk - sc.ku - sc.e10f, -sc.S - sc.e2f
    for j in range(ex.sp_node.size):
        n = int(ex.sp_node[j])
        raw = [sympy.Integer(int(x)) for x in ex.sp_raw[j]]
        t = sum(raw[a] * int(u[n, a, 0]) for a in range(ex.dim))
        coef = sympy.Integer(int(ex.sp_k[j])) * sympy.Integer(10) ** s10 * sympy.Integer(2) ** s2
        for a in range(ex.dim):
            springs_part[n][a] += sympy.floor(coef * t * raw[a] / int(ex.sp_raw2[j]))
    nonzero = 0
    for n in range(ex.n_nodes):
        for a in range(ex.dim):
            assert sympy.Integer(int(rm[n, a, 0])) == want[n][a], (n, a)
            assert sympy.Integer(int(r[n, a, 0])) == want[n][a] - springs_part[n][a], (n, a)
            nonzero += int(r[n, a, 0]) != 0
    assert nonzero  # the comparison saw non-trivial residuals
    if not springs:
        assert r is rm  # without springs the members' residual is the residual


@settings(max_examples=300, deadline=None)
@given(
    st.lists(st.integers(min_value=-(2**1100), max_value=2**1100), min_size=1, max_size=6),
    st.integers(min_value=-400, max_value=400),
    st.integers(min_value=-1300, max_value=1300),
)
def test_abs_to_float_bound_is_within_its_relative_error(ints: list[int], e10: int, e2: int) -> None:
    a = np.empty(len(ints), dtype=object)
    a[:] = ints
    with np.errstate(over="ignore"):  # beyond the float range ints_to_float gives inf (as documented)
        got = abs_to_float_bound(a, e10, e2)
        exact_rounded = np.abs(ints_to_float(a, e10, e2))
    for x, g, cr in zip(ints, got.tolist(), exact_rounded.tolist(), strict=True):
        v = abs(Fraction(x) * Fraction(10) ** e10 * Fraction(2) ** e2)
        if 2.0**-1000 <= cr <= 2.0**1000 or v == 0:
            assert abs(Fraction(g) - v) <= Fraction(ABS_BOUND_REL) * v
        else:  # outside the normal range: the correctly rounded value of ints_to_float
            assert g == cr


def test_abs_to_float_bound_carries_and_extremes() -> None:
    """Integers just below and above powers of two, beyond the float range, and scales near its limits."""
    cases = [(2**53 - 1, -1, 0), (2**53 + 1, -1, 0), (-(2**1023), 0, 0), (2**1030, 0, -100), (3, -330, 1000)]
    cases += [(-7, 300, -1000), (10**400, -400, 0), (1, 0, -1074)]
    for x, e10, e2 in cases:
        a = np.array([x], dtype=object)
        g = float(abs_to_float_bound(a, e10, e2)[0])
        v = abs(Fraction(x) * Fraction(10) ** e10 * Fraction(2) ** e2)
        if 2.0**-1000 <= v <= 2.0**1000:
            assert abs(Fraction(g) - v) <= Fraction(ABS_BOUND_REL) * v, (x, e10, e2)
        else:
            assert g == float(np.abs(ints_to_float(a, e10, e2))[0]), (x, e10, e2)


@settings(max_examples=100, deadline=None)
@given(
    st.integers(min_value=1, max_value=30),
    st.integers(min_value=0, max_value=200),
    st.integers(min_value=0, max_value=2**32 - 1),
)
def test_float_scatter_adds_in_the_order_of_add_at(n_nodes: int, m: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    s = rng.integers(0, n_nodes, m)
    e = rng.integers(0, n_nodes, m)
    F = np.abs(rng.standard_normal((m, 2, 3))) * 2.0 ** rng.integers(-60, 60, (m, 2, 3)).astype(np.float64)
    want = np.zeros((n_nodes, 2, 3))
    np.add.at(want, e, F)
    np.add.at(want, s, F)
    got = residual._scatter_abs(n_nodes, s, e, F)
    assert got.shape == want.shape
    assert np.array_equal(got, want)  # bit for bit


def _slow_ints_to_float(a: np.ndarray, e10: int, e2: int) -> np.ndarray:
    """The exact path of ints_to_float for e10 < 0 on the whole array, as it ran before the mixed split."""
    den = 10 ** (-e10)
    shift = 64 + den.bit_length()
    return np.ldexp((a * (1 << shift) // den).astype(np.float64), e2 - shift)


@settings(max_examples=300, deadline=None)
@given(
    st.lists(st.integers(min_value=-(2**53), max_value=2**53), min_size=1, max_size=5),
    st.lists(st.integers(min_value=-(2**400), max_value=2**400), min_size=1, max_size=5),
    st.integers(min_value=-22, max_value=-1),
    st.integers(min_value=-400, max_value=400),
)
def test_mixed_ints_to_float_equals_the_exact_path(small: list[int], big: list[int], e10: int, e2: int) -> None:
    """Small entries beside big ones: each as correctly rounded as alone, and bit-identical to the exact path."""
    big = [b if abs(b) > 2**53 else b + 2**60 for b in big]  # make them beyond 2^53
    a = np.empty(len(small) + len(big), dtype=object)
    a[:] = small + big
    got = ints_to_float(a, e10, e2)
    assert np.array_equal(got, _slow_ints_to_float(a, e10, e2))
    for x, g in zip(small, got.tolist(), strict=False):
        assert g == float(Fraction(x) * Fraction(10) ** e10 * Fraction(2) ** e2)  # int/int: correctly rounded


@settings(max_examples=300, deadline=None)
@given(
    st.lists(st.floats(allow_nan=False, allow_infinity=False, allow_subnormal=True, width=64), min_size=1, max_size=8),
    st.integers(min_value=-200, max_value=1100),
)
def test_float_exact_to_scale_is_the_floor(xs: list[float], s2: int) -> None:
    """floor(x·2^s2) exactly (fractions), error 1 exactly where the scaled float has bits below the unit."""
    from audit.precision.exact_numbers import float_exact_to_scale

    x = np.array(xs)
    ints, err = float_exact_to_scale(x, 0, s2)
    for xi, n, ei in zip(xs, ints.tolist(), err.tolist(), strict=True):
        v = Fraction(xi) * Fraction(2) ** s2
        assert n == math.floor(v)
        _m, ex = math.frexp(xi)
        assert ei == (1.0 if ex - 53 + s2 < 0 else 0.0)


def test_start_iterate_in_double_double_is_ints_to_dd(monkeypatch: pytest.MonkeyPatch) -> None:
    """The steering's first iterate from the float start equals ints_to_dd of the exact ints, bit for bit."""
    from audit.precision import refinement, steering

    seen: dict[str, Any] = {}
    orig = refinement.start_iterate

    def spy(ex, sc, U0, up):  # type: ignore[no-untyped-def]
        it = orig(ex, sc, U0, up)
        seen.update(ex=ex, it=it)
        return it

    monkeypatch.setattr(analysis, "start_iterate", spy)
    _seen(grid_doc(5), monkeypatch)
    ex, it = seen["ex"], seen["it"]
    assert it.uf is not None
    assert ex.rn.size  # restrained nodes are taken from the exact ints
    got = refinement._start_dd(ex, it)
    want = steering.ints_to_dd(it.u, 0)
    assert got is not None
    for g, w in zip(got, want, strict=True):
        assert np.array_equal(g, w)
        assert np.array_equal(np.signbit(g), np.signbit(w))
    # a negative value that rounded to zero on the grid (rint gives −0.0): still ints_to_dd's +0.0
    free = int(np.flatnonzero(ex.free_node)[0])
    uf = it.uf.copy()
    u = it.u.copy()
    uf[free, 0, 0] = -0.0
    u[free, 0, 0] = 0
    it2 = refinement.Iterate(u, it.w, it.up, uf)
    got2 = refinement._start_dd(ex, it2)
    assert got2 is not None
    for g, w in zip(got2, steering.ints_to_dd(u, 0), strict=True):
        assert np.array_equal(g, w)
        assert np.array_equal(np.signbit(g), np.signbit(w))


@pytest.mark.parametrize("x", [2**53 + 1, -(2**53 + 1), 2**53, 2**53 - 1])
@pytest.mark.parametrize("e10", [-2, -22, 3])
def test_ints_to_float_next_to_2_pow_53_is_correctly_rounded(x: int, e10: int) -> None:
    """2^53 + 1 is the one integer that rounds to 2^53 (ties to even): it must not take the one-division path."""
    for a in (np.array([x], dtype=object), np.array([0, x], dtype=object), np.array([7, x], dtype=object)):
        got = float(ints_to_float(a, e10, 0)[-1])
        assert got == float(Fraction(x) * Fraction(10) ** e10)  # int/int: correctly rounded
