"""Shortcuts of the precision stage against references outside it (prec4: grouped coefficients, conversions).

* ``ExactModel.c`` taken once per group of members with equal (E·A, L²) must still be, member by member,
  E·A/L³ to the stated relative error ``η`` (the closed form E·A/L³ with the exact L = √L² evaluated in
  sympy), and the exact residual with grouped coefficients must equal, integer for integer, the residual
  recomputed in sympy integers from the model's exact integers (also at a force scale that makes the
  coefficient a multiple of c, the ``per_c_group`` path of ``_apply_K``).
* :func:`audit.precision.exact_numbers.float_to_ints` must give each integer-valued float exactly
  (``fractions.Fraction`` of the float, Python's exact rational of an IEEE double).
* :func:`audit.precision.exact_numbers.ints_to_float` with a power of ten below one must stay within one ulp
  of the exact value (``fractions.Fraction``, whose ``float()`` is correctly rounded), on integers of
  hundreds of bits, as its docstring states, and equal the path it documents
  (``RN(floor(a·2^s / 10^k))·2^(e2 − s)``, recomputed here in Python ints).
"""

from __future__ import annotations

import copy
import math
from dataclasses import replace
from fractions import Fraction
from typing import Any

import numpy as np
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st
from test_precision import to_json
from test_precision_fast_paths import _seen
from test_precision_steering import grid_doc

from audit.exchange import parse_model
from audit.precision import exact_model as exact_model_mod
from audit.precision import residual
from audit.precision.exact_model import exact_model
from audit.precision.exact_numbers import float_to_ints, ints_to_float


def _two_materials(n: int = 6) -> dict[str, Any]:
    """The steering grid (3 sections, 3 lengths) with every fifth member of a second material."""
    doc = copy.deepcopy(grid_doc(n))
    doc["materials"]["alu"] = {"E": "<<7.0000005e7>>"}
    for k, mem in enumerate(doc["members"]):
        if k % 5 == 2:
            mem["material"] = "alu"
    return doc


@pytest.mark.parametrize("doc", [grid_doc(6), _two_materials()], ids=["one material", "two materials"])
def test_grouped_coefficients_are_ea_over_l_cubed(doc: dict[str, Any], monkeypatch: pytest.MonkeyPatch) -> None:
    model = parse_model(to_json(doc))
    P = 200
    ex = exact_model(model, P, False)
    assert ex.c_groups is not None  # 120 members, at most 18 groups: grouped
    first, group = ex.c_groups
    assert first.size < model.n_members // 4
    assert group.size == model.n_members
    assert int(group.max()) + 1 == first.size
    # the same integers as without the groups
    monkeypatch.setattr(exact_model_mod, "_pair_groups", lambda *_a: None)
    plain = exact_model(model, P, False)
    assert plain.c_groups is None
    assert [int(x) for x in plain.c] == [int(x) for x in ex.c]
    for name in ("cf", "kf_member", "vf"):  # floats from the groups and the int64 copies: bit for bit
        assert np.array_equal(getattr(ex, name), getattr(plain, name)), name
    assert np.array_equal(ex.vf, ints_to_float(ex.v, -ex.kx, 0))
    # against the closed form E·A/L³ (sympy, exact L = sqrt(L²)): c·10^(3kx − k_ea)·2^−Q within η
    for k in range(model.n_members):
        L = sympy.sqrt(sympy.Integer(int(ex.L2[k]))) / sympy.Integer(10) ** ex.kx
        EA = sympy.Integer(int(ex.EA[k])) / sympy.Integer(10) ** ex.k_ea
        want = EA / L**3
        got = sympy.Integer(int(ex.c[k])) * sympy.Integer(10) ** (3 * ex.kx - ex.k_ea) / sympy.Integer(2) ** ex.Q
        rel = abs(sympy.N((got - want) / want, 60))
        assert rel <= ex.eta, k


@pytest.mark.parametrize("extra", [0, 5], ids=["unit scale", "scaled coefficient"])
def test_exact_residual_with_grouped_coefficients_equals_sympy(extra: int, monkeypatch: pytest.MonkeyPatch) -> None:
    seen = _seen(_two_materials(), monkeypatch)
    ex, sc, rhs, u = seen["ex"], seen["sc"], seen["rhs"], seen["u"]
    assert ex.c_groups is not None
    sc = replace(sc, e2f=sc.e2f - extra)  # a force scale 2^extra finer: the coefficient is c·2^(b2+extra)
    r, _rm, _mag, _eff, _err, p = residual.exact_residual(ex, sc, rhs, seen["rhs_err"], u)
    a10 = ex.kx - ex.k_ea - sc.ku - sc.e10f
    b2 = -ex.Q - sc.S - sc.e2f
    if extra:
        assert a10 or b2  # the per_c_group path of _apply_K
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
    for n in range(ex.n_nodes):
        for a in range(ex.dim):
            assert sympy.Integer(int(r[n, a, 0])) == want[n][a], (n, a)


@settings(max_examples=200, deadline=None)
@given(
    st.lists(
        st.floats(allow_nan=False, allow_infinity=False, width=64).map(lambda x: float(math.floor(x))),
        min_size=1,
        max_size=12,
    ),
    st.integers(min_value=0, max_value=900),
)
def test_float_to_ints_is_exact(xs: list[float], shift: int) -> None:
    top = max((math.frexp(x)[1] for x in xs), default=0)
    y = np.ldexp(np.array(xs), max(0, min(shift, 1023 - top)))  # still integers, still finite
    y = np.where(np.isfinite(y), y, 0.0)
    got = float_to_ints(y)
    for g, x in zip(got.tolist(), y.tolist(), strict=True):
        assert type(g) is int
        assert Fraction(g) == Fraction(x)  # the float's exact value
    with pytest.raises(OverflowError):
        float_to_ints(np.array([2.0**70, np.inf]))


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.integers(min_value=-(2**420), max_value=2**420), min_size=1, max_size=8),
    st.integers(min_value=-22, max_value=-1),
    st.integers(min_value=-600, max_value=200),
)
def test_ints_to_float_below_one_power_of_ten_is_within_one_ulp(ints: list[int], e10: int, e2: int) -> None:
    a = np.empty(len(ints), dtype=object)
    a[:] = ints
    got = ints_to_float(a, e10, e2)
    den = 10 ** (-e10)
    s = 64 + den.bit_length()
    for x, g in zip(ints, got.tolist(), strict=True):
        exact = Fraction(x) * Fraction(10) ** e10 * Fraction(2) ** e2
        assert abs(Fraction(g) - exact) <= Fraction(math.ulp(float(exact))), x  # float(Fraction): correctly rounded
        if abs(x) >= 2**53:  # the documented exact path
            assert g == math.ldexp(float((x << s) // den), e2 - s)
