"""The double-double steering residual (audit.precision.steering) against exact rational arithmetic.

References: the error-free transformations TwoSum and TwoProduct of T. Ogita, S. M. Rump and S. Oishi,
"Accurate sum and dot product", SIAM J. Sci. Comput. 26(6), 2005, Algorithms 3.1 and 3.3, must be exact:
checked against sympy's exact rationals (sympy.Rational of each float is its exact binary value).  The
steering residual must lie within its stated bound of the exact residual, the latter recomputed here in
sympy rationals from the exact integers of the model.  The refinement that uses it must prove as many digits
as the refinement with exact residuals only, at 16, 30, 60 and 100 digits.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest
import sympy
from test_precision import to_json

from audit.exchange import parse_model
from audit.precision import analysis, steering
from audit.precision import refinement as refinement_mod
from audit.solve import build_system, factorize_system, solve_with


def grid_doc(n: int = 12) -> dict[str, Any]:
    """An n×n braced plane grid, pinned along the bottom, a load at every top node; areas vary by 10³."""
    nodes = [{"id": f"{i}-{j}", "x": 1.5 * i, "y": 1.25 * j} for j in range(n + 1) for i in range(n + 1)]
    members = []
    for j in range(n + 1):
        for i in range(n + 1):
            if i < n:
                members.append((f"{i}-{j}", f"{i + 1}-{j}"))
            if j < n:
                members.append((f"{i}-{j}", f"{i}-{j + 1}"))
            if i < n and j < n:
                members.append((f"{i}-{j}", f"{i + 1}-{j + 1}"))
    mem = [
        {"id": str(k), "start": a, "end": b, "material": "steel", "section": "s" + str(k % 3)}
        for k, (a, b) in enumerate(members)
    ]
    return {
        "format": "truss-audit-model",
        "version": 1,
        "title": "steering grid",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "materials": {"steel": {"E": "<<2.1e8>>"}},
        "sections": {"s0": {"A": "<<1.2e-3>>"}, "s1": {"A": "<<3.4e-5>>"}, "s2": {"A": "<<7.7e-2>>"}},
        "members": mem,
        "supports": [{"node": f"{i}-0", "restrain": ["x", "y"]} for i in range(n + 1)],
        "load_cases": [
            {"id": "LC1", "loads": [{"node": f"{i}-{n}", "fx": "<<1.5>>", "fy": "<<-10.25>>"} for i in range(n + 1)]}
        ],
    }


def test_error_free_transformations_are_exact() -> None:
    """TwoSum and TwoProduct (Ogita, Rump & Oishi 2005, Algs 3.1, 3.3): s + e = a + b and x + y = a·b exactly."""
    rng = np.random.default_rng(11)
    a = rng.standard_normal(200) * 2.0 ** rng.integers(-60, 60, 200)
    b = rng.standard_normal(200) * 2.0 ** rng.integers(-60, 60, 200)
    s, e = steering.two_sum(a, b)
    x, y = steering.two_prod(a, b)
    for i in range(a.size):
        ra, rb = sympy.Rational(float(a[i])), sympy.Rational(float(b[i]))
        assert sympy.Rational(float(s[i])) + sympy.Rational(float(e[i])) == ra + rb
        assert sympy.Rational(float(x[i])) + sympy.Rational(float(y[i])) == ra * rb


def _captured(doc: dict[str, Any], digits: int) -> tuple[Any, ...]:
    model = parse_model(to_json(doc))
    system = build_system(model)
    factor, cond = factorize_system(model, system, "auto")
    sol = solve_with(model, system, factor, cond)
    return model, system, factor, sol


def test_steering_residual_within_its_bound_of_the_exact_rational_residual(monkeypatch: pytest.MonkeyPatch) -> None:
    model, system, factor, sol = _captured(grid_doc(6), 30)
    seen: dict[str, Any] = {}
    orig = analysis.refine

    def spy(ex, system, factor, sc, rhs, rhs_err, it, digits, cond=float("nan")):
        seen.update(ex=ex, sc=sc, rhs=rhs, u=it.u)
        return orig(ex, system, factor, sc, rhs, rhs_err, it, digits, cond)

    monkeypatch.setattr(analysis, "refine", spy)
    analysis.analyse(model, system, factor, sol, None, digits=30)
    ex, sc, rhs, u = seen["ex"], seen["sc"], seen["rhs"], seen["u"]
    assert steering.SteeringResidual.supported(ex)
    st = steering.SteeringResidual(ex, sc, rhs)
    got = st.evaluate(u)
    assert got is not None
    rf, bound = got
    # the exact residual in sympy rationals: rhs − Σ_e c_e (v_e·Δu_e) v_e at both ends, in residual units
    a10 = ex.kx - ex.k_ea - sc.ku - sc.e10f
    b2 = -ex.Q - sc.S - sc.e2f
    scale = sympy.Integer(10) ** a10 * sympy.Integer(2) ** (b2 - sc.Y)
    r = [[sympy.Rational(int(rhs[n, a, 0]), 2**sc.Y) for a in range(ex.dim)] for n in range(ex.n_nodes)]
    for k in range(ex.s_idx.size):
        s, e = int(ex.s_idx[k]), int(ex.e_idx[k])
        v = [sympy.Integer(int(x)) for x in ex.v[k]]
        p = sum(v[a] * (int(u[e, a, 0]) - int(u[s, a, 0])) for a in range(ex.dim))
        q = sympy.Integer(int(ex.c[k])) * scale * p
        for a in range(ex.dim):
            r[e][a] -= q * v[a]
            r[s][a] += q * v[a]
    worst = 0.0
    for n in range(ex.n_nodes):
        for a in range(ex.dim):
            dev = abs(sympy.Rational(float(rf[n, a, 0])) - r[n][a])
            # rf is the double-double rounded once to float64: half an ulp of |rf| more
            allowed = sympy.Rational(float(bound[n, a, 0])) + sympy.Rational(abs(float(rf[n, a, 0]))) * 2**-53
            assert dev <= allowed, (n, a)
            worst = max(worst, float(dev / allowed) if allowed else 0.0)
    assert worst > 0.0  # the comparison saw non-trivial residuals


@pytest.mark.parametrize("digits", [16, 30, 60, 100])
def test_steered_refinement_proves_as_many_digits_as_exact_residuals(
    digits: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    doc = grid_doc(12)
    model, system, factor, sol = _captured(doc, digits)
    counts: list[int] = []
    orig_refine = analysis.refine

    def spy(*args: Any) -> Any:
        ref = orig_refine(*args)
        counts.append(ref.steering_residuals)
        return ref

    monkeypatch.setattr(analysis, "refine", spy)
    steered = analysis.analyse(model, system, factor, sol, None, digits=digits)
    assert counts
    assert counts[0] >= 1  # the steering residual was used
    orig = refinement_mod.SteeringResidual.supported
    monkeypatch.setattr(refinement_mod.SteeringResidual, "supported", staticmethod(lambda ex: False))
    exact = analysis.analyse(model, system, factor, sol, None, digits=digits)
    monkeypatch.setattr(refinement_mod.SteeringResidual, "supported", staticmethod(orig))
    for a, b in zip(steered.cases, exact.cases, strict=True):
        assert a.status == b.status == "proven"
        assert a.proven_digits is not None
        assert b.proven_digits is not None
        assert a.proven_digits >= min(b.proven_digits, digits)
        assert a.proven_digits >= digits
