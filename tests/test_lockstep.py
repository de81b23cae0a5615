"""Chains of solves run side by side (audit.linsolve.solve_in_lockstep) and the spectrum estimates built on them.

Sources
-------
* The fixed-fixed second-difference matrix tridiag(-1, 2, -1) of order n has the
  eigenvalues 2 - 2 cos(kπ/(n+1)), k = 1..n, and the inverse
  (K⁻¹)_ij = i (n + 1 - j)/(n + 1), i <= j: G. Strang, *Introduction to Applied
  Mathematics*, Wellesley-Cambridge, 1986, §1.2 (recalled from memory; the
  inverse is also checked exactly with sympy in tests/test_linsolve.py).
* Reference values: numpy.linalg.solve, numpy.linalg.eigvalsh and
  numpy.linalg.cond(·, 1) (LAPACK), on dense copies.
* Hager's estimate is a lower bound of ‖S⁻¹‖₁ (Higham, *Accuracy and Stability
  of Numerical Algorithms*, 2nd ed., 2002, §15.3); Ritz values lie inside
  [λ_min, λ_max] (Courant–Fischer; Parlett, *The Symmetric Eigenvalue
  Problem*, 1998, §11.5).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

from audit import linsolve
from audit.certify.eigen_bound import ritz_chain, ritz_extremes
from audit.solve import condition_estimate, estimate_spectrum

BACKENDS = linsolve.available_backends()


def second_difference(n: int) -> sp.csr_matrix:
    return sp.diags([-np.ones(n - 1), 2.0 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1], format="csr")


def graded_spd(n: int, seed: int) -> sp.csr_matrix:
    """A sparse SPD matrix with a spread of diagonal scales (random, reproducible)."""
    rng = np.random.default_rng(seed)
    A = sp.random(n, n, density=4.0 / n, random_state=rng, format="csr")
    A = A + A.T
    scale = sp.diags(10.0 ** rng.uniform(-3, 3, n))
    M = scale @ (A @ A.T + sp.eye(n) * 0.5) @ scale
    return sp.csr_matrix((M + M.T) * 0.5)


def _chain(rhs: list[np.ndarray]):
    """A chain whose every right-hand side depends on the previous answer: x_{k+1} = b_{k+1} + K⁻¹ x_k."""
    answers = []
    prev = None
    for b in rhs:
        x = yield b if prev is None else b + prev
        answers.append(x)
        prev = x
    return answers


def _chain_alone(K: np.ndarray, rhs: list[np.ndarray]) -> list[np.ndarray]:
    out = []
    prev = None
    for b in rhs:
        x = np.linalg.solve(K, b if prev is None else b + prev)
        out.append(x)
        prev = x
    return out


@pytest.mark.parametrize("backend", BACKENDS)
def test_chains_in_lockstep_give_each_chain_its_own_solutions(backend: str) -> None:
    n = 60
    K = second_difference(n)
    Kd = K.toarray()
    f = linsolve.factorize(K, backend)
    rng = np.random.default_rng(3)
    # chains of different lengths and widths: a vector chain, a 3-column chain, a one-step chain, an empty one
    a = [rng.standard_normal(n) for _ in range(5)]
    b = [rng.standard_normal((n, 3)) for _ in range(2)]
    c = [rng.standard_normal((n, 1))]
    got = linsolve.solve_in_lockstep(f, [_chain(a), _chain(b), _chain(c), _chain([])])
    for answers, rhs in zip(got, (a, b, c, []), strict=True):
        want = _chain_alone(Kd, rhs)
        assert len(answers) == len(want)
        for x, y, r in zip(answers, want, rhs, strict=True):
            assert x.shape == r.shape
            np.testing.assert_allclose(x, y, rtol=1e-10, atol=1e-10 * np.abs(y).max())


def test_lockstep_shares_each_round_in_one_backend_call() -> None:
    n = 30
    K = second_difference(n)
    f = linsolve.factorize(K, "splu")
    calls: list[int] = []
    real = f.solve_block

    def counting(B: np.ndarray) -> np.ndarray:
        calls.append(B.reshape(n, -1).shape[1])
        return real(B)

    f.solve_block = counting  # type: ignore[method-assign]
    rng = np.random.default_rng(0)
    linsolve.solve_in_lockstep(
        f, [_chain([rng.standard_normal(n) for _ in range(3)]), _chain([rng.standard_normal((n, 2))])]
    )
    assert calls == [3, 1, 1]  # round 1: both chains (1 + 2 columns); then the longer chain alone


@pytest.mark.parametrize("backend", BACKENDS)
def test_ritz_chain_in_lockstep_matches_the_closed_form_spectrum(backend: str) -> None:
    n = 300
    K = second_difference(n)
    f = linsolve.factorize(K, backend)
    lam = 2 - 2 * np.cos(np.arange(1, n + 1) * np.pi / (n + 1))
    (lo_hi,) = linsolve.solve_in_lockstep(f, [ritz_chain(lambda x: K @ x, n, block=4, steps=4)])
    lo, hi = lo_hi
    assert lam[0] <= lo <= 1.5 * lam[0]
    assert 0.9 * lam[-1] <= hi <= lam[-1] * (1 + 1e-12)
    alone = ritz_extremes(lambda x: K @ x, f.solve, n, block=4, steps=4)
    np.testing.assert_allclose(lo_hi, alone, rtol=1e-9)


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_spectrum_estimates_against_lapack(backend: str, seed: int) -> None:
    n = 120
    K = graded_spd(n, seed)
    f = linsolve.factorize(K, backend)
    cond, (lo, hi) = estimate_spectrum(K, f)
    d = 1.0 / np.sqrt(K.diagonal())
    S = d[:, None] * K.toarray() * d[None, :]
    exact = np.linalg.cond(S, 1)
    # Hager's estimate is a lower bound (up to rounding) and, in practice, within a small factor
    assert exact / 10 <= cond <= exact * (1 + 1e-8)
    # the same estimate as the condition estimate run alone (only the solves' grouping differs)
    assert cond == pytest.approx(condition_estimate(K, f), rel=1e-8)
    lam = np.linalg.eigvalsh(K.toarray())
    assert lam[0] * (1 - 1e-8) <= lo
    assert hi <= lam[-1] * (1 + 1e-8)
    assert lo <= 3 * lam[0]
    assert hi >= lam[-1] / 3


def test_tiny_system_uses_the_dense_inverse_and_still_gives_ritz_values() -> None:
    K = sp.csr_matrix(np.array([[4.0, 1.0, 0.0], [1.0, 3.0, 1.0], [0.0, 1.0, 2.0]]))
    f = linsolve.factorize(K, "splu")
    cond, (lo, hi) = estimate_spectrum(K, f)
    d = 1.0 / np.sqrt(K.diagonal())
    S = d[:, None] * K.toarray() * d[None, :]
    assert cond == pytest.approx(np.linalg.cond(S, 1), rel=1e-12)
    lam = np.linalg.eigvalsh(K.toarray())
    assert lam[0] * (1 - 1e-12) <= lo <= hi <= lam[-1] * (1 + 1e-12)


@pytest.mark.parametrize("kind", ["grid2d", "lattice3d"])
def test_factorised_system_carries_the_ritz_estimates_the_certificate_uses(kind: str) -> None:
    from bench_generator import generator

    from audit.solve import build_system, factorize_system

    gen = generator()
    size = gen.grid2d_size(600) if kind == "grid2d" else gen.lattice3d_size(600)
    model, _meta = gen.build(kind, size)
    system = build_system(model)
    factor, cond = factorize_system(model, system)
    assert factor.ritz_estimates is not None
    lo, hi = factor.ritz_estimates
    lam = np.linalg.eigvalsh(system.K_r.toarray())
    # Courant–Fischer: both inside the spectrum; 3 block steps bring them within a small factor of its ends
    assert lam[0] * (1 - 1e-8) <= lo <= 3 * lam[0]
    assert lam[-1] / 3 <= hi <= lam[-1] * (1 + 1e-8)
    d = 1.0 / np.sqrt(system.K_r.diagonal())
    exact = np.linalg.cond(d[:, None] * system.K_r.toarray() * d[None, :], 1)
    assert exact / 10 <= cond <= exact * (1 + 1e-8)
