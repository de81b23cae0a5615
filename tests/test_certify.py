"""Certified lower bounds on the smallest eigenvalue (audit.certify), against closed-form spectra.

References:

* the second-difference matrix tridiag(−1, 2, −1) of order n has eigenvalues 2 − 2cos(kπ/(n+1)),
  k = 1..n (G. Strang, *Introduction to Applied Mathematics*, Wellesley-Cambridge 1986, §1.5; common
  practice);
* Rump, "Verification of positive definiteness", BIT 46 (2006): the certificate may only return a value
  at or below λ_min, and must fail (None) on a matrix that is not positive definite;
* Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed., eq. 3.8 for γ_k.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from audit import certify


def second_difference(n: int, shift: float = 0.0) -> sp.csr_matrix:
    return sp.diags([-np.ones(n - 1), 2 * np.ones(n) + shift, -np.ones(n - 1)], [-1, 0, 1], format="csr")


def lam_min_second_difference(n: int) -> float:
    return 2 - 2 * np.cos(np.pi / (n + 1))


SPARSE = ["superlu", *(["cholmod"] if certify.cholmod_available() else [])]
METHOD = {"dense": "dense-cholesky", "superlu": "sparse-ldlt-superlu", "cholmod": "sparse-cholesky-cholmod"}


@pytest.mark.parametrize(
    ("n", "how"),
    [(50, "dense"), (800, "dense")] + [(n, s) for n in (3000, 20000) for s in SPARSE],
    ids=lambda x: str(x),
)
def test_second_difference_bound_is_below_and_close_to_lambda_min(n: int, how: str) -> None:
    A = second_difference(n)
    lam = lam_min_second_difference(n)
    cert = certify.lower_eigen_bound(
        A, lam * 1.3, dense_limit=2500 if how == "dense" else 10, sparse_method="auto" if how == "dense" else how
    )
    assert cert.lambda_lo is not None, cert.reason
    assert cert.lambda_lo <= lam
    assert cert.lambda_lo >= lam / 64
    assert cert.method == METHOD[how]


@pytest.mark.parametrize("how", ["dense", *SPARSE])
def test_indefinite_matrix_gets_no_bound(how: str) -> None:
    n = 300
    A = second_difference(n, shift=-0.5)  # eigenvalues 1.5 − 2cos(...): the smallest is negative
    cert = certify.lower_eigen_bound(
        A, 0.1, dense_limit=1000 if how == "dense" else 10, sparse_method="auto" if how == "dense" else how
    )
    assert cert.lambda_lo is None
    assert cert.reason


def test_size_limit_is_reported() -> None:
    cert = certify.lower_eigen_bound(second_difference(100), 0.01, dense_limit=10, sparse_limit=50)
    assert cert.lambda_lo is None
    assert "limit" in cert.reason


def test_ill_conditioned_diagonal() -> None:
    d = np.logspace(-10, 0, 200)
    cert = certify.lower_eigen_bound(sp.diags(d, format="csr"), 1.05e-10)
    assert cert.lambda_lo is not None
    assert 0.5e-10 <= cert.lambda_lo <= 1e-10


@settings(max_examples=25, deadline=None)
@given(st.integers(2, 60), st.integers(0, 2**32 - 1))
def test_random_spd_bound_never_exceeds_lambda_min(n: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    B = rng.standard_normal((n, n))
    A = B @ B.T + 1e-3 * np.eye(n)
    lam = float(np.linalg.eigvalsh(A).min())
    cert = certify.lower_eigen_bound(sp.csr_matrix(A), lam * 1.05)
    if cert.lambda_lo is not None:
        assert cert.lambda_lo <= lam * (1 + 1e-10)


@pytest.mark.parametrize("k", [1, 10, 10**6])
def test_gamma(k: int) -> None:
    u = 2.0**-53
    assert certify.gamma(k) >= k * u / (1 - k * u)
    assert certify.gamma(k) <= k * u / (1 - k * u) * (1 + 1e-11)


def test_ritz_values_bracket_the_spectrum() -> None:
    n = 400
    A = second_difference(n)
    lu = sp.linalg.splu(sp.csc_matrix(A))
    lo, hi = certify.ritz_extremes(lambda x: A @ x, lu.solve, n)
    lam_lo, lam_hi = lam_min_second_difference(n), 2 + 2 * np.cos(np.pi / (n + 1))
    assert lam_lo <= lo <= 1.5 * lam_lo
    assert 0.9 * lam_hi <= hi <= lam_hi * (1 + 1e-12)


def test_inf_norm_upper_bounds_the_largest_eigenvalue() -> None:
    A = second_difference(100)
    assert certify.inf_norm_upper(A) >= 2 + 2 * np.cos(np.pi / 101)
