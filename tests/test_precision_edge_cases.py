"""Edge cases of the high-precision stage: nearly-axis inclined restraints, subnormal data (``fuzz/crashes``).

The reproducers in ``fuzz/crashes`` once crashed the certificate with "matrix is numerically singular"
(a 40-digit inverse of ZᵀZ for a restraint direction within 1.5e-7 of an axis, or with data near 1e-313).
Each must now run to the end with a sound λ_lo (at or below the smallest eigenvalue of K_r) or an explicit
"not established" reason, never a crash.

Independent references:

* the smallest eigenvalue of the float restrained stiffness by LAPACK (``numpy.linalg.eigvalsh``); the exact
  matrix differs from it by a few units of roundoff relative (Weyl's inequality; Higham, *Accuracy and
  Stability of Numerical Algorithms*, 2nd ed., 2002, §6.3), hence the 1e-9 relative margin;
* the orthonormal basis nearest to the projection Y of the engine's basis onto the exact free directions is
  the polar factor Y (YᵀY)^(−1/2) (Higham, *Functions of Matrices*, SIAM 2008, §8.1), computed here in
  60-digit mpmath from the exact rational projection;
* √q for rationals q by 50-digit mpmath.
"""

from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import mpmath
import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from audit import precision
from audit.certify.restrained import _basis_deviation, _node_basis_deviation, _sqrt_up
from audit.exchange import load_model
from audit.model import Model
from audit.precision.exact_model import assembly_data, exact_model
from audit.solve import build_system

CRASHES = Path(__file__).resolve().parents[1] / "fuzz" / "crashes"

#: reproducers that crashed the precision stage, and those that once broke it otherwise (kept as regressions)
REPRODUCERS = [
    "certify-zero-division",
    "precision-int-too-large-363",
    "hp-wrong-inclined-3d",
    "precision-subnormal-coordinate",
    "precision-overflow-1100",
]


def _model(name: str) -> Model:
    return load_model(CRASHES / f"{name}.model.json")


@pytest.mark.parametrize("name", REPRODUCERS, ids=REPRODUCERS)
def test_reproducer_gives_sound_lambda_or_reason(name: str) -> None:
    model = _model(name)
    _cases, report = precision.solve_high_precision(model, digits=20)
    Kr = build_system(model).K_r
    lam_min = float(np.linalg.eigvalsh(Kr.toarray()).min())
    if report.lambda_lo is None:
        assert report.lambda_reason
    else:
        assert 0 < report.lambda_lo <= lam_min * (1 + 1e-9)


@pytest.mark.parametrize("name", ["certify-zero-division", "precision-int-too-large-363"])
def test_reproducer_lambda_is_established(name: str) -> None:
    # both models are well conditioned: a crash-free but vacuous answer would hide a weak bound
    model = _model(name)
    _cases, report = precision.solve_high_precision(model, digits=20)
    lam_min = float(np.linalg.eigvalsh(build_system(model).K_r.toarray()).min())
    assert report.lambda_lo is not None, report.lambda_reason
    assert report.lambda_lo >= lam_min / 64


def _polar_deviation(Tn: np.ndarray, Z: list[list[int]]) -> float:
    """max |T̃ − T*| with T* the polar factor of the projection of T̃ onto range(Z), in mpmath.

    The working precision is four times the digits of Z's largest entry plus 60, so that the solve with the
    integer Gram matrix ZᵀZ (condition at most ~ max|Z|⁴) leaves 60 correct digits -- independent of the
    exact-rational route of the code under test.
    """
    dps = 60 + 4 * max(len(str(abs(x))) for row in Z for x in row)
    with mpmath.workdps(dps):
        Zm = mpmath.matrix([[mpmath.mpf(int(x)) for x in row] for row in Z])
        G = Zm.T * Zm
        Tm = mpmath.matrix(Tn.tolist())
        W = Zm.T * Tm
        X = mpmath.matrix(W.rows, W.cols)
        for c in range(W.cols):
            X[:, c] = mpmath.lu_solve(G, W[:, c])
        Y = Zm * X
        E, V = mpmath.eigsy(Y.T * Y)
        k = E.rows
        D = mpmath.diag([1 / mpmath.sqrt(E[i]) for i in range(k)])
        Ts = Y * (V * D * V.T)
        return float(max(abs(Ts[a, c] - Tm[a, c]) for a in range(Tm.rows) for c in range(k)))


def _node_blocks(name: str) -> list[tuple[np.ndarray, list[list[int]]]]:
    model = _model(name)
    system = build_system(model)
    ad = assembly_data(model, exact_model(model, 200, False))
    d = ad.dim
    Tc = sp.csc_matrix(system.T)
    col_node = Tc.indices[Tc.indptr[:-1]] // d
    out = []
    for j, node in enumerate(ad.rn.tolist()):
        cj = np.flatnonzero(col_node == node)
        if ad.inclined[j] and cj.size:
            Tn = np.asarray(Tc[node * d : (node + 1) * d][:, cj].todense())
            out.append((Tn, [[int(ad.Z[j, a, c]) for c in range(cj.size)] for a in range(d)]))
    return out


@pytest.mark.parametrize("name", ["certify-zero-division", "hp-wrong-inclined-3d", "precision-int-too-large-363"])
def test_basis_deviation_bounds_the_polar_factor_distance(name: str) -> None:
    blocks = _node_blocks(name)
    assert blocks  # these models have inclined restraints
    for Tn, Z in blocks:
        dev, why = _node_basis_deviation(Tn, Z)
        assert not why
        assert _polar_deviation(Tn, Z) <= dev <= 1e-13


def test_basis_deviation_matrix_has_no_reason_for_reproducer() -> None:
    model = _model("certify-zero-division")
    system = build_system(model)
    ad = assembly_data(model, exact_model(model, 200, False))
    Tc = sp.csc_matrix(system.T)
    DT, why = _basis_deviation(system, ad, Tc.indices[Tc.indptr[:-1]] // ad.dim)
    assert why == ""
    assert DT.shape == system.T.shape
    assert np.all(DT.data > 0)
    assert np.all(DT.data <= 1e-13)


def test_basis_far_from_orthonormal_is_not_established() -> None:
    Z = [[1, 0], [0, 1], [0, 0]]
    Tn = np.array([[2.0, 0.0], [0.0, 1.0], [0.0, 0.0]])  # right span, first column of length 2
    dev, why = _node_basis_deviation(Tn, Z)
    assert dev == float("inf")
    assert "orthonormal" in why


def test_dependent_exact_directions_are_not_established() -> None:
    Z = [[1, 2], [1, 2], [0, 0]]
    dev, why = _node_basis_deviation(np.eye(3)[:, :2], Z)
    assert dev == float("inf")
    assert "dependent" in why


def _near_axis_free_basis(p: int, q: int) -> list[list[int]]:
    """Integer basis of the plane normal to n = (q, p, 0): columns (p, −q, 0) and (0, 0, 1)."""
    return [[p, 0], [-q, 0], [0, 1]]


@settings(max_examples=40, deadline=None)
@given(
    p=st.integers(1, 10**40),
    q=st.integers(1, 10**40),
    scale=st.integers(0, 300),
)
def test_basis_deviation_bound_holds_for_near_axis_and_huge_directions(p: int, q: int, scale: int) -> None:
    # directions of any slope from 1e-40 to 1e40 (restraints within ~1e-7 of an axis and far closer),
    # the engine-like float basis from a float QR of the rounded directions
    Z = _near_axis_free_basis(p * 10**scale, q * 10**scale)
    m = max(p, q)
    Zf = np.array([[float(Fraction(p, m)), 0.0], [-float(Fraction(q, m)), 0.0], [0.0, 1.0]])
    Tn, _r = np.linalg.qr(Zf)
    dev, why = _node_basis_deviation(Tn, Z)
    assert not why
    assert _polar_deviation(Tn, Z) <= dev <= 1e-14


@pytest.mark.parametrize(
    "q",
    [Fraction(2), Fraction(1, 3), Fraction(10) ** -700, Fraction(10) ** 600, Fraction(7, 10**310)],
    ids=["two", "third", "1e-700", "1e600", "7e-310"],
)
def test_sqrt_up_is_an_upper_bound(q: Fraction) -> None:
    with mpmath.workdps(50):
        true = mpmath.sqrt(mpmath.mpf(q.numerator) / q.denominator)
        got = _sqrt_up(q)
        assert mpmath.mpf(got) >= true
        if true > mpmath.mpf(2) ** -980 and true < mpmath.mpf(2) ** 1000:
            assert mpmath.mpf(got) <= true * (1 + mpmath.mpf(2) ** -50)
        elif true >= mpmath.mpf(2) ** 1000:
            assert got == float("inf") or mpmath.mpf(got) <= true * (1 + mpmath.mpf(2) ** -50)


def test_sqrt_up_of_zero_is_zero() -> None:
    assert _sqrt_up(Fraction(0)) == 0.0


def test_non_finite_engine_basis_is_not_established() -> None:
    Tn = np.array([[np.nan, 0.0], [0.0, 1.0], [0.0, 0.0]])
    dev, why = _node_basis_deviation(Tn, [[1, 0], [0, 1], [0, 0]])
    assert dev == float("inf")
    assert "finite" in why
