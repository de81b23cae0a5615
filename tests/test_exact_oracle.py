"""The float solver against an exact rational solution of the same model.

For models whose inputs are decimals and whose member lengths are all
rational (Pythagorean and Euler-brick geometry, see ``strategies.py``), the
whole linear problem lives in the rationals.  The oracle below rebuilds it
from the decimal texts the reader kept (``Model.*_text``), assembles K
member by member, imposes the supports with Lagrange multipliers (a
formulation the solver does not use: it eliminates restrained directions),
solves exactly with sympy's ``DomainMatrix`` over QQ, and forms forces and
reactions.  The float solver must agree to 1e-12 of each quantity's largest
magnitude in the case, or to 10 κ · eps where that is larger (κ the
condition number of the scaled, restrained stiffness, above about 450): no
float64 solve can promise more, since the forward error of a backward
stable solve is of order κ · eps times a modest constant (Higham, *Accuracy
and Stability of Numerical Algorithms*, 2nd ed., §7.1, recalled from
memory).  Measured here: the error reached 3.5 κ · eps, hence the factor 10.
κ is computed in the test, independently of the solver, from the exact K
and the supports.

Formulas: k_e = EA/L [[n nᵀ, -n nᵀ], [-n nᵀ, n nᵀ]] (McGuire, Gallagher &
Ziemian, *Matrix Structural Analysis*, 2nd ed., eq. 3.8, as cited in
``audit/stiffness.py``, in its general direction-cosine form); N = EA/L (elongation - α ΔT L
- e) and reactions as forces on the structure (``shared/FORMAT.md``);
Lagrange multipliers for linear constraints (common practice).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np
import pytest
import scipy.linalg
from hypothesis import HealthCheck, given, settings
from strategies import rational_plane_trusses, rational_space_trusses, to_model
from sympy import QQ
from sympy.polys.matrices import DomainMatrix

from audit.solve import solve_model

RTOL = 1e-12
#: allowed forward error in units of κ · eps (see the module docstring)
KAPPA_FACTOR = 10.0


@dataclass(frozen=True)
class ExactCase:
    displacements: list[list[Fraction]]  #: (n_nodes, dim)
    axial_forces: list[Fraction]  #: (n_members,)
    reactions: list[list[Fraction]]  #: (n_nodes, dim)


def _sqrt(q: Fraction) -> Fraction:
    """The exact square root of a rational square; fails for anything else."""
    p, r = math.isqrt(q.numerator), math.isqrt(q.denominator)
    assert p * p == q.numerator, f"{q} is not the square of a rational"
    assert r * r == q.denominator, f"{q} is not the square of a rational"
    return Fraction(p, r)


def _solve_exact(M: list[list[Fraction]], rhs: list[list[Fraction]]) -> list[list[Fraction]]:
    n = len(M)
    A = DomainMatrix([[QQ(v.numerator, v.denominator) for v in row] for row in M], (n, n), QQ)
    b = DomainMatrix([[QQ(v.numerator, v.denominator) for v in row] for row in rhs], (n, len(rhs[0])), QQ)
    x = A.lu_solve(b).to_Matrix()
    return [[Fraction(int(x[i, j].p), int(x[i, j].q)) for j in range(x.shape[1])] for i in range(n)]


@dataclass(frozen=True)
class ExactSolution:
    cases: dict[str, ExactCase]  #: load cases and combinations by id
    kappa: float  #: 1-norm condition of the scaled, restrained stiffness (float64, from the exact K)


def _scaled_condition(Kt: list[list[Fraction]], C: list[list[Fraction]]) -> float:
    """1-norm condition of D^-1/2 Zᵀ K Z D^-1/2, Z an orthonormal basis of the directions the supports leave free."""
    K = np.array(Kt, dtype=np.float64)
    Z = scipy.linalg.null_space(np.array(C, dtype=np.float64)) if C else np.eye(K.shape[0])
    Kr = Z.T @ K @ Z
    dinv = 1.0 / np.sqrt(np.diag(Kr))
    return float(np.linalg.cond(dinv[:, None] * Kr * dinv[None, :], 1))


def exact_solution(model: Any) -> ExactSolution:
    """Exact displacements, forces and reactions of every load case and combination, from the input's decimal texts."""
    d, nn, nm = model.dim, model.n_nodes, model.n_members
    nd = nn * d
    xyz = [[Fraction(t) for t in node] for node in model.coords_text]
    k, unit, length = [], [], []
    for j in range(nm):
        s, e = (int(v) for v in model.conn[j])
        vec = [xyz[e][a] - xyz[s][a] for a in range(d)]
        L = _sqrt(sum((c * c for c in vec), Fraction(0)))
        length.append(L)
        unit.append([c / L for c in vec])
        k.append(Fraction(model.E_text[j]) * Fraction(model.A_text[j]) / L)
    K = [[Fraction(0)] * nd for _ in range(nd)]
    for j in range(nm):
        s, e = (int(v) for v in model.conn[j])
        for a in range(d):
            for b in range(d):
                v = k[j] * unit[j][a] * unit[j][b]
                K[s * d + a][s * d + b] += v
                K[e * d + a][e * d + b] += v
                K[s * d + a][e * d + b] -= v
                K[e * d + a][s * d + b] -= v
    Kt = [row[:] for row in K]
    for i in range(len(model.spring_k_text)):
        node = int(model.spring_node[i])
        dv = [Fraction(t) for t in model.spring_dir_text[i]]
        n2 = sum((c * c for c in dv), Fraction(0))
        ks = Fraction(model.spring_k_text[i])
        for a in range(d):
            for b in range(d):
                Kt[node * d + a][node * d + b] += ks * dv[a] * dv[b] / n2
    nr = model.n_restraints
    C = [[Fraction(0)] * nd for _ in range(nr)]
    raw_norm2 = []
    for r in range(nr):
        node = int(model.restraint_node[r])
        dv = [Fraction(t) for t in model.restraint_dir_text[r]]
        raw_norm2.append(sum((c * c for c in dv), Fraction(0)))
        for a in range(d):
            C[r][node * d + a] = dv[a]
    size = nd + nr
    M = [[Fraction(0)] * size for _ in range(size)]
    for i in range(nd):
        M[i][:nd] = Kt[i]
        for r in range(nr):
            M[i][nd + r] = C[r][i]
    for r in range(nr):
        M[nd + r][:nd] = C[r]
    cases: dict[str, ExactCase] = {}
    for lc in model.load_cases:
        f = [Fraction(0)] * nd
        for node, axis, text in lc.load_text:
            f[node * d + axis] += Fraction(text)
        delta0 = [Fraction(0)] * nm
        for j, text in lc.temperature_text:
            delta0[j] += Fraction(model.alpha_text[j]) * Fraction(text) * length[j]
        for j, text in lc.length_error_text:
            delta0[j] += Fraction(text)
        f0 = [Fraction(0)] * nd
        for j in range(nm):
            t0 = k[j] * delta0[j]
            s, e = (int(v) for v in model.conn[j])
            for a in range(d):
                f0[s * d + a] -= unit[j][a] * t0
                f0[e * d + a] += unit[j][a] * t0
        g = [Fraction(0)] * nr
        for r, text in lc.settlement_text:
            g[r] += Fraction(text) * _sqrt(raw_norm2[r])  # raw direction · u = value · |raw direction|
        x = _solve_exact(M, [[f[i] + f0[i]] for i in range(nd)] + [[v] for v in g])
        u = [x[i][0] for i in range(nd)]
        N = []
        for j in range(nm):
            s, e = (int(v) for v in model.conn[j])
            elong = sum((unit[j][a] * (u[e * d + a] - u[s * d + a]) for a in range(d)), Fraction(0))
            N.append(k[j] * (elong - delta0[j]))
        R = [sum((K[i][c] * u[c] for c in range(nd)), Fraction(0)) - f[i] - f0[i] for i in range(nd)]
        cases[lc.id] = ExactCase(
            [u[i * d : (i + 1) * d] for i in range(nn)], N, [R[i * d : (i + 1) * d] for i in range(nn)]
        )
    for comb in model.combinations:
        parts = [(cases[model.load_cases[ci].id], Fraction(text)) for ci, _v, text in comb.factors]

        def combine(get: Any, parts: list[tuple[ExactCase, Fraction]] = parts) -> Any:
            return np.sum([np.array(get(c), dtype=object) * fac for c, fac in parts], axis=0).tolist()

        cases[comb.id] = ExactCase(
            combine(lambda c: c.displacements), combine(lambda c: c.axial_forces), combine(lambda c: c.reactions)
        )
    return ExactSolution(cases, _scaled_condition(Kt, C))


def _max_abs(values: Any) -> float:
    a = np.abs(np.asarray(values, dtype=object).astype(np.float64))
    return float(a.max()) if a.size else 0.0


def worst_relative_difference(model: Any) -> tuple[float, float]:
    """Largest |float - exact| over every case, norm-wise relative per kind of quantity.

    Displacements are measured against the case's largest exact displacement;
    member forces and reactions against its largest exact force of any kind
    (member force, reaction or load), or, in a case that carries no force at
    all (a rigid-body settlement), against max(EA/L) times the largest
    displacement: the force that a relative error of one in the displacements
    would cause.

    Returns
    -------
    worst, allowed
        The largest relative difference, and the tolerance for this model:
        max(1e-12, 10 κ · eps).
    """
    exact_all = exact_solution(model)
    exact = exact_all.cases
    solution = solve_model(model)
    k_max = float(np.max(model.axial_stiffness()))
    worst = 0.0
    for case in solution.cases:
        ex = exact[case.case_id]
        loads = _case_loads(model, case.case_id)
        disp_scale = _max_abs(ex.displacements)
        force_scale = max(_max_abs(ex.axial_forces), _max_abs(ex.reactions), loads) or k_max * disp_scale
        for got, want, scale in (
            (case.displacements, ex.displacements, disp_scale),
            (case.axial_forces, ex.axial_forces, force_scale),
            (case.reactions, ex.reactions, force_scale),
        ):
            diff = float(np.max(np.abs(np.asarray(got) - np.asarray(want, dtype=object).astype(np.float64))))
            if scale == 0.0:
                assert diff == 0.0
            else:
                worst = max(worst, diff / scale)
    return worst, max(RTOL, KAPPA_FACTOR * exact_all.kappa * float(np.finfo(np.float64).eps))


def _case_loads(model: Any, case_id: str) -> float:
    """Largest |nodal load| of a load case, or of the factored loads of a combination."""
    ci = model.case_index(case_id)
    if ci is not None:
        return float(np.max(np.abs(model.load_cases[ci].loads), initial=0.0))
    comb = model.combinations[model.combination_index(case_id)]
    total = sum(value * model.load_cases[i].loads for i, value, _text in comb.factors)
    return float(np.max(np.abs(total), initial=0.0))


@pytest.mark.parametrize(
    "name",
    [
        pytest.param("timoshenko_three_bar.json", id="three-bar-3-4-5"),
        pytest.param("tripod_space.json", id="tripod-5-12-13"),
        pytest.param("spring_series.json", id="bar-and-spring"),
    ],
)
def test_published_rational_cases_match_exact_solution(name: str, published: Any, record_property: Any) -> None:
    """Bundled cases with rational lengths: every case (settlement, heat, lack of fit, combination) to 1e-12."""
    _, model = published(name)
    worst, allowed = worst_relative_difference(model)
    record_property("max_relative_difference", worst)
    assert worst <= allowed == RTOL


def test_exact_oracle_reproduces_closed_form(published: Any) -> None:
    """The oracle itself against a closed form: Timoshenko's three-bar X = P/(1 + 2c³) = 12500/253 exactly, c = 4/5."""
    _, model = published("timoshenko_three_bar.json")
    ex = exact_solution(model).cases["load"]
    assert ex.axial_forces[model.member_index()["BD"]] == Fraction(12500, 253)
    assert ex.axial_forces[model.member_index()["AD"]] == Fraction(8000, 253)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rational_plane_trusses(initial_strains=True, settlements=True, max_cases=3))
def test_random_plane_trusses_match_exact_solution(doc: dict[str, Any]) -> None:
    """Pythagorean panel trusses, rotated; springs, inclined rollers, heat, lack of fit, settlement, combinations."""
    worst, allowed = worst_relative_difference(to_model(doc))
    assert worst <= allowed


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rational_space_trusses(initial_strains=True, settlements=True, max_cases=2))
def test_random_space_trusses_match_exact_solution(doc: dict[str, Any]) -> None:
    """Euler-brick towers, rotated, with inclined restraints, springs, heat, lack of fit, settlement, combinations."""
    worst, allowed = worst_relative_difference(to_model(doc))
    assert worst <= allowed
