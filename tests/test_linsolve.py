"""Tests of audit.linsolve: every backend against closed forms, dense LAPACK and scipy.

Sources
-------
* The fixed-fixed second-difference matrix K_n = tridiag(-1, 2, -1) (a chain of
  n + 1 equal unit springs between two walls) has the inverse
  (K_n⁻¹)_ij = i (n + 1 - j) / (n + 1) for i <= j (1-based, symmetric):
  G. Strang, *Introduction to Applied Mathematics*, Wellesley-Cambridge,
  1986, §1.2 (recalled from memory; the test also confirms it exactly with
  sympy for a small n).
* Dense reference solutions: numpy.linalg.solve (LAPACK gesv).
"""

from __future__ import annotations

import gc

import numpy as np
import pytest
import scipy.sparse as sp
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from audit import linsolve

BACKENDS = linsolve.available_backends()


def second_difference(n: int) -> sp.csr_matrix:
    return sp.diags([-np.ones(n - 1), 2.0 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1], format="csr")


def second_difference_inverse(n: int) -> np.ndarray:
    """Strang's closed form, 1-based i <= j: i (n + 1 - j) / (n + 1)."""
    i = np.arange(1, n + 1)[:, None]
    j = np.arange(1, n + 1)[None, :]
    return np.minimum(i, j) * (n + 1 - np.maximum(i, j)) / (n + 1)


def test_closed_form_inverse_matches_sympy_exact() -> None:
    n = 7
    exact = sympy.Matrix(second_difference(n).toarray().astype(int)).inv()
    assert np.allclose(np.array(exact, dtype=float), second_difference_inverse(n), rtol=0, atol=1e-15)


@pytest.mark.parametrize("backend", BACKENDS)
def test_solve_vector_matches_closed_form(backend: str) -> None:
    n = 300
    b = np.cos(np.arange(n))
    x = linsolve.factorize(second_difference(n), backend).solve(b)
    assert x.shape == (n,)
    np.testing.assert_allclose(x, second_difference_inverse(n) @ b, rtol=1e-10, atol=1e-10)


@pytest.mark.parametrize("backend", BACKENDS)
def test_solve_matrix_matches_closed_form_column_by_column(backend: str) -> None:
    n, k = 120, 4
    B = np.sin(np.arange(n * k).reshape(n, k) * 0.7)
    X = linsolve.factorize(second_difference(n), backend).solve(B)
    assert X.shape == (n, k)
    np.testing.assert_allclose(X, second_difference_inverse(n) @ B, rtol=1e-10, atol=1e-10)


@pytest.mark.parametrize("k", [2, 7, 8, 12], ids=["2-columns", "7-columns", "8-columns", "12-columns"])
@pytest.mark.parametrize("backend", BACKENDS)
def test_column_by_column_and_block_solves_agree_with_closed_form(backend: str, k: int) -> None:
    # PardisoFactor solves fewer than 8 columns one at a time and 8 or more as one block
    n = 90
    B = np.cos(np.arange(n * k).reshape(n, k) * 0.3)
    X = linsolve.factorize(second_difference(n), backend).solve(B)
    np.testing.assert_allclose(X, second_difference_inverse(n) @ B, rtol=1e-10, atol=1e-10)


@pytest.mark.parametrize("backend", BACKENDS)
def test_single_column_matrix_keeps_its_shape(backend: str) -> None:
    n = 50
    f = linsolve.factorize(second_difference(n), backend)
    b = np.ones((n, 1))
    x = f.solve(b)
    assert x.shape == (n, 1)
    np.testing.assert_allclose(x[:, 0], f.solve(b[:, 0]), rtol=0, atol=0)


@pytest.mark.parametrize("order", ["C", "F"], ids=["c-order", "fortran-order"])
@pytest.mark.parametrize("backend", BACKENDS)
def test_memory_layout_of_rhs_does_not_matter(backend: str, order: str) -> None:
    n = 40
    B = np.array(np.arange(3 * n, dtype=float).reshape(n, 3) ** 0.5, order=order)
    X = linsolve.factorize(second_difference(n), backend).solve(B)
    np.testing.assert_allclose(X, second_difference_inverse(n) @ B, rtol=1e-10, atol=1e-10)


@pytest.mark.parametrize("backend", BACKENDS)
def test_strided_rhs(backend: str) -> None:
    n = 30
    wide = np.arange(2 * n, dtype=float)
    b = wide[::2]  # not contiguous
    x = linsolve.factorize(second_difference(n), backend).solve(b)
    np.testing.assert_allclose(x, second_difference_inverse(n) @ b, rtol=1e-10, atol=1e-10)


@pytest.mark.parametrize("backend", BACKENDS)
def test_repeated_solves_reuse_the_factor_unchanged(backend: str) -> None:
    n = 60
    f = linsolve.factorize(second_difference(n), backend)
    b = np.linspace(-1, 1, n)
    first = f.solve(b)
    f.solve(np.ones((n, 5)))
    np.testing.assert_array_equal(f.solve(b), first)


@pytest.mark.parametrize("backend", BACKENDS)
def test_backend_is_reported(backend: str) -> None:
    f = linsolve.factorize(second_difference(5), backend)
    assert (f.backend, f.n, f.note) == (backend, 5, "")


@pytest.mark.parametrize("backend", BACKENDS)
def test_rhs_of_wrong_length_is_refused(backend: str) -> None:
    f = linsolve.factorize(second_difference(5), backend)
    with pytest.raises(ValueError, match="does not match"):
        f.solve(np.ones(6))


@pytest.mark.parametrize("backend", BACKENDS)
def test_empty_row_is_singular(backend: str) -> None:
    K = second_difference(6).tolil()
    K[3, :] = 0
    K[:, 3] = 0
    with pytest.raises(np.linalg.LinAlgError):
        linsolve.factorize(K.tocsr(), backend)


@pytest.mark.parametrize("backend", [b for b in BACKENDS if b != "splu"])
def test_cholesky_backends_refuse_an_indefinite_matrix(backend: str) -> None:
    K = second_difference(8).tolil()
    K[4, 4] = -5.0  # a negative pivot: not positive definite
    with pytest.raises(np.linalg.LinAlgError, match="not positive definite"):
        linsolve.factorize(K.tocsr(), backend)


@pytest.mark.skipif("pardiso" not in BACKENDS, reason="pypardiso is not installed")
def test_pardiso_factor_memory_is_released_when_collected() -> None:
    f = linsolve.factorize(second_difference(1000), "pardiso")
    assert isinstance(f, linsolve.PardisoFactor)
    assert f.factor_nonzeros >= 1000  # tridiagonal: the Cholesky factor has 2n - 1 entries
    finalizer = f._finalizer
    assert finalizer.alive
    del f
    gc.collect()
    assert not finalizer.alive


@pytest.mark.skipif("pardiso" not in BACKENDS, reason="pypardiso is not installed")
def test_broken_pardiso_library_falls_back_to_splu(monkeypatch: pytest.MonkeyPatch) -> None:
    def broken() -> None:
        raise OSError("libmkl_rt.so: cannot open shared object file")

    monkeypatch.setattr(linsolve, "_pardiso_entry", broken)
    f = linsolve.factorize(second_difference(10), "pardiso")
    assert f.backend == "splu"
    assert "cannot open shared object" in f.note
    np.testing.assert_allclose(f.solve(np.ones(10)), second_difference_inverse(10) @ np.ones(10), rtol=1e-12)


def test_auto_uses_the_first_available_backend() -> None:
    assert linsolve.factorize(second_difference(4)).backend == BACKENDS[0]


def test_splu_is_always_available_and_last() -> None:
    assert BACKENDS[-1] == "splu"


def test_unknown_backend_is_refused() -> None:
    with pytest.raises(ValueError, match="unknown solver backend"):
        linsolve.factorize(second_difference(4), "gauss-seidel")


def test_non_square_matrix_is_refused() -> None:
    with pytest.raises(ValueError, match="square"):
        linsolve.factorize(sp.csr_matrix(np.ones((2, 3))))


@pytest.mark.parametrize("backend", BACKENDS)
def test_empty_matrix(backend: str) -> None:
    f = linsolve.factorize(sp.csr_matrix((0, 0)), backend)
    assert f.solve(np.zeros(0)).shape == (0,)


@st.composite
def spd_systems(draw: st.DrawFn) -> tuple[sp.csr_matrix, np.ndarray]:
    """K = Bᵀ diag(k) B + diag(s): a random spring network grounded by springs s > 0 (SPD by construction)."""
    n = draw(st.integers(2, 25))
    m = draw(st.integers(1, 60))
    seed = draw(st.integers(0, 2**31 - 1))
    rng = np.random.default_rng(seed)
    ends = rng.integers(0, n, size=(m, 2))
    ends = ends[ends[:, 0] != ends[:, 1]]
    B = sp.csr_matrix(
        (np.tile([-1.0, 1.0], len(ends)), (np.repeat(np.arange(len(ends)), 2), ends.ravel())), shape=(len(ends), n)
    )
    k = 10.0 ** rng.uniform(-3, 3, size=len(ends))
    s = 10.0 ** rng.uniform(-1, 1, size=n)
    K = (B.T @ sp.diags(k) @ B + sp.diags(s)).tocsr()
    b = rng.standard_normal((n, draw(st.integers(1, 3))))
    return K, b


@pytest.mark.parametrize("backend", BACKENDS)
@settings(max_examples=40, deadline=None)
@given(system=spd_systems())
def test_random_spd_systems_match_dense_lapack(backend: str, system: tuple[sp.csr_matrix, np.ndarray]) -> None:
    K, b = system
    x = linsolve.factorize(K, backend).solve(b)
    ref = np.linalg.solve(K.toarray(), b)
    np.testing.assert_allclose(x, ref, rtol=1e-8, atol=1e-12 * np.abs(ref).max())


@settings(max_examples=40, deadline=None)
@given(system=spd_systems())
def test_upper_triangle_matches_scipy_triu(system: tuple[sp.csr_matrix, np.ndarray]) -> None:
    K, _ = system
    K.sort_indices()
    U = linsolve._upper_csr(K)
    assert U.indices.dtype == np.int32
    assert U.indptr.dtype == np.int32
    assert (sp.triu(K, format="csr") != U).nnz == 0
