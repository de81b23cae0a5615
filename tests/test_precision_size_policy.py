"""The certificate's size policy (audit.certify.certificate_plan) and what the report says when it does not run.

The policy is a decision from sizes: a certificate estimated to cost more than
``CERTIFICATE_BUDGET`` engine factorisations (and above the free size) does not
run; λ_lo is then *not established* with a reason naming the factor size and
the limit (never zero), while the refinement still runs and its digits are
reported as an estimate, not as proven.  The refined answer is checked against
the exact rational solution by sympy (the independent stiffness-method solver
of ``test_precision.py``; Meurer et al., SymPy, PeerJ CS 3:e103, 2017).
"""

from __future__ import annotations

import json
from fractions import Fraction
from typing import Any

import numpy as np
import pytest
import scipy.sparse as sp
from test_precision import PYTHAGOREAN, frac, model_of, sympy_reference

from audit import certify, precision
from audit.solve import build_system, factorize_system, solve_with


class ClaimedFactor:
    """An engine factor that reports a given backend and factor size and solves with a real factor."""

    def __init__(self, real: Any, backend: str, factor_nonzeros: int | None) -> None:
        self._real = real
        self.backend = backend
        self.n = real.n
        if factor_nonzeros is not None:
            self.factor_nonzeros = factor_nonzeros

    def solve(self, b: np.ndarray) -> np.ndarray:
        return self._real.solve(b)


def laplacian(n: int) -> sp.csr_matrix:
    return sp.diags([-np.ones(n - 1), 2 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1], format="csr")


class _Dummy:
    n = 0

    def solve(self, b: np.ndarray) -> np.ndarray:
        return b


def claimed(backend: str, fnz: int | None) -> Any:
    f = _Dummy()
    f.backend = backend  # type: ignore[attr-defined]
    if fnz is not None:
        f.factor_nonzeros = fnz  # type: ignore[attr-defined]
    return f


@pytest.mark.parametrize(
    ("n", "backend", "fnz", "run"),
    [
        (2000, "pardiso", 10**9 // 1000, True),  # dense path: n <= DENSE_LIMIT
        (50_000, "pardiso", 1_500_000, True),  # below the free size
        (50_000, "pardiso", 2_500_000, True),  # density 50: estimated 0.95 of a factorisation
        (50_000, "pardiso", 25_000_000, False),  # density 500: estimated 3.2
        (50_000, "cholmod", 25_000_000, False),  # the same library again: 1.1 > 1
    ],
    ids=["dense", "free", "2d-like", "3d-like", "same-library"],
)
def test_plan_follows_the_cost_estimate(n: int, backend: str, fnz: int, run: bool) -> None:
    plan = certify.certificate_plan(claimed(backend, fnz), laplacian(n))
    assert plan.run is run
    assert plan.factor_nonzeros == fnz
    if not run:
        assert plan.estimated_ratio > certify.CERTIFICATE_BUDGET
        assert f"{fnz:.3g}" in plan.reason
        assert "limit" in plan.reason
        assert "second factorisation" in plan.reason
    else:
        assert plan.reason == ""


def test_plan_without_a_reported_size_uses_the_lower_triangle() -> None:
    """nnz(tril K) = (nnz(K) + n)/2 = 2n − 1 for the second-difference matrix: a lower bound of the factor's."""
    n = 10_000
    plan = certify.certificate_plan(claimed("cholmod", None), laplacian(n))
    assert plan.factor_nonzeros == 2 * n - 1
    assert plan.factor_nonzeros_source == "lower triangle of K_r"
    assert plan.run  # far below the free size


def test_plan_memory_limit_comes_first() -> None:
    plan = certify.certificate_plan(claimed("pardiso", 10**9), laplacian(5000), max_factor_nonzeros=10**8)
    assert not plan.run
    assert "memory limit" in plan.reason


@pytest.fixture(scope="module")
def skipped() -> tuple[precision.PrecisionReport, dict[str, Any]]:
    """The plain Pythagorean truss analysed with the certificate declared too costly (dense path off)."""
    doc = PYTHAGOREAN["plain"]
    model = model_of(doc)
    system = build_system(model)
    factor, cond = factorize_system(model, system)
    sol = solve_with(model, system, factor, cond)
    big = ClaimedFactor(factor, "pardiso", 50_000_000)
    rep = precision.analyse(model, system, big, sol, None, dense_limit=0, certificate_free_nonzeros=1000)
    return rep, sympy_reference(doc)


def test_skipped_certificate_is_not_established_never_zero(skipped: Any) -> None:
    rep, _ref = skipped
    assert rep.lambda_lo is None
    assert rep.lambda_lo_scaled is None
    assert "second factorisation" in rep.lambda_reason
    assert "5e+07" in rep.lambda_reason
    d = rep.as_dict()
    json.dumps(d, allow_nan=False)
    assert d["status"] == "not_established"
    assert d["lambda_lo"] is None
    assert d["certificate"]["size_policy"]["run"] is False
    assert d["digits_estimated_not_proven_min"] >= 30
    for c in rep.cases:
        assert c.status == "not_established"
        assert c.proven_digits is None
        assert c.bound is None
        assert c.bound_dof is None
        assert c.estimated_digits is not None
        assert c.estimated_digits >= 30


@pytest.mark.parametrize("case", ["snow", "heat", "design"])
def test_skipped_certificate_still_refines_to_30_digits(skipped: Any, case: str) -> None:
    """The refinement is kept: its answer agrees with the exact rational solution to 30 digits."""
    rep, ref = skipped
    got = rep.case(case).displacements_exact.to_fractions().reshape(-1)
    want = [frac(x) for x in ref[case]["u"]]
    scale = max(abs(w) for w in want)
    assert max(abs(g - w) for g, w in zip(got, want, strict=True)) <= scale * Fraction(1, 10**30)
