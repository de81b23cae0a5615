"""Shared test harness for the checks on reported results, and tests of ``audit.checks._common``.

The harness (imported by the other ``test_checks_*``, ``test_mutation`` and ``test_cases`` files):

* :func:`exact_solve`: an exact solution of a model *document* in sympy rational arithmetic, written
  here independently of the project's solver (Lagrange multipliers for the restraints:
  ``[K −Cᵀ; C 0] [u; λ] = [f + f0; g]``; the direct stiffness method as in Kassimali, *Matrix Analysis
  of Structures*, 2nd ed., ch. 3, with initial strains per FORMAT.md "Conventions").
* :func:`results_text`: a results document with every number written to a chosen number of
  significant figures (or full precision), so the rounding quanta are the reader's own.
* :func:`context`: the audit context built from the project's solver, with a stand-in stability
  report (the stability module is another engineer's and not needed by these checks).
"""

from __future__ import annotations

import json
import os
import re
from dataclasses import dataclass
from decimal import Decimal
from types import SimpleNamespace
from typing import Any

import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from strategies import rational_plane_trusses, rational_space_trusses

from audit import exchange
from audit.checks import _common as cm
from audit.context import Context
from audit.errors import UnsolvableError
from audit.findings import Severity
from audit.model import Model, Results
from audit.solve import build_system, factorize_system, solve_with
from audit.tolerances import Tolerances

AXES = ("x", "y", "z")
#: examples of the random-truss property test (raise it locally: TRUSS_AUDIT_EXAMPLES=500)
EXAMPLES = int(os.environ.get("TRUSS_AUDIT_EXAMPLES", "20"))


# ===================================================================== exact solution
@dataclass(frozen=True)
class ExactCase:
    case_id: str
    displacements: np.ndarray  #: (n_nodes, dim) float
    axial_forces: np.ndarray  #: (n_members,) float
    reactions: np.ndarray  #: (n_nodes, dim) float


def _q(v: Any) -> sp.Rational:
    return sp.Rational(str(Decimal(str(v))))


def _solve_exact(M: sp.Matrix, b: sp.Matrix) -> sp.Matrix:
    """x with M x = b, by exact elimination in the number field the entries generate (e.g. QQ<√2>)."""
    from sympy.polys.matrices import DomainMatrix

    both = DomainMatrix.from_Matrix(sp.Matrix.hstack(M, b), extension=True).to_field()
    n = M.shape[0]
    A = both.extract(list(range(n)), list(range(n)))
    rhs = both.extract(list(range(n)), [n])
    return A.lu_solve(rhs).to_Matrix()


def exact_solve(doc: dict[str, Any]) -> dict[str, ExactCase]:
    """Exact displacements, member forces (tension positive) and reactions of every case and combination."""
    d = int(doc["dimensions"])
    nodes = [str(n["id"]) for n in doc["nodes"]]
    ni = {n: i for i, n in enumerate(nodes)}
    X = [[_q(n[a]) for a in AXES[:d]] for n in doc["nodes"]]
    mats, secs = doc.get("materials", {}), doc.get("sections", {})
    mem = []
    for m in doc["members"]:
        E = _q(m["E"]) if "E" in m else _q(mats[m["material"]]["E"])
        A = _q(m["A"]) if "A" in m else _q(secs[m["section"]]["A"])
        alpha = _q(m["alpha"]) if "alpha" in m else _q(mats.get(m.get("material"), {}).get("alpha", 0))
        s, e = ni[str(m["start"])], ni[str(m["end"])]
        v = [X[e][a] - X[s][a] for a in range(d)]
        L = sp.sqrt(sum(c * c for c in v))
        mem.append((str(m["id"]), s, e, [c / L for c in v], L, E * A, alpha))
    ndof = len(nodes) * d
    K = sp.zeros(ndof, ndof)
    for _mid, s, e, n, L, EA, _al in mem:
        k = EA / L
        for i in range(d):
            for j in range(d):
                kij = k * n[i] * n[j]
                K[s * d + i, s * d + j] += kij
                K[e * d + i, e * d + j] += kij
                K[s * d + i, e * d + j] -= kij
                K[e * d + i, s * d + j] -= kij
    Kmem = K.copy()
    supported = {ni[str(s["node"])] for s in doc.get("supports", [])}
    cons: list[tuple[int, list[sp.Expr], str | int]] = []  # (node, unit direction, key for settlement)
    for sup in doc.get("supports", []):
        node = ni[str(sup["node"])]
        for r in sup.get("restrain", []):
            if isinstance(r, str):
                cons.append((node, [sp.Integer(1 if a == AXES.index(r) else 0) for a in range(d)], r))
            else:
                c = [_q(x) for x in r["direction"]]
                nrm = sp.sqrt(sum(x * x for x in c))
                cons.append((node, [x / nrm for x in c], "dir"))
        for spring in sup.get("springs", []):
            if "axis" in spring:
                sd = [sp.Integer(1 if a == AXES.index(spring["axis"]) else 0) for a in range(d)]
            else:
                c = [_q(x) for x in spring["direction"]]
                nrm = sp.sqrt(sum(x * x for x in c))
                sd = [x / nrm for x in c]
            k = _q(spring["stiffness"])
            for i in range(d):
                for j in range(d):
                    K[node * d + i, node * d + j] += k * sd[i] * sd[j]
    nc = len(cons)
    C = sp.zeros(nc, ndof)
    for r, (node, n, _key) in enumerate(cons):
        for a in range(d):
            C[r, node * d + a] = n[a]
    M = sp.zeros(ndof + nc, ndof + nc)
    M[:ndof, :ndof] = K
    M[:ndof, ndof:] = -C.T
    M[ndof:, :ndof] = C
    out: dict[str, ExactCase] = {}
    exact: dict[str, tuple[sp.Matrix, list[sp.Expr], sp.Matrix]] = {}
    for lc in doc.get("load_cases", []):
        f = sp.zeros(ndof, 1)
        for ld in lc.get("loads", []):
            for a, key in enumerate(("fx", "fy", "fz")[:d]):
                f[ni[str(ld["node"])] * d + a] += _q(ld.get(key, 0))
        d0 = [sp.Integer(0)] * len(mem)
        for t in lc.get("temperature_changes", []):
            j = [m[0] for m in mem].index(str(t["member"]))
            d0[j] += mem[j][6] * _q(t["delta"]) * mem[j][4]
        for le in lc.get("length_errors", []):
            j = [m[0] for m in mem].index(str(le["member"]))
            d0[j] += _q(le["value"])
        f0 = sp.zeros(ndof, 1)
        for j, (_mid, s, e, n, L, EA, _al) in enumerate(mem):
            t0 = EA / L * d0[j]
            for a in range(d):
                f0[s * d + a] -= t0 * n[a]
                f0[e * d + a] += t0 * n[a]
        g = sp.zeros(nc, 1)
        for sd_ in lc.get("support_displacements", []):
            node = ni[str(sd_["node"])]
            if "direction" in sd_:
                c = [_q(x) for x in sd_["direction"]]
                nrm = sp.sqrt(sum(x * x for x in c))
                move = [_q(sd_["value"]) * x / nrm for x in c]
            else:
                move = [_q(sd_.get(a, 0)) for a in AXES[:d]]
            for r, (cn, n_, key) in enumerate(cons):
                if cn == node and (key == "dir" or key in sd_ or "direction" in sd_):
                    g[r] = sum(n_[a] * move[a] for a in range(d))
        sol = _solve_exact(M, sp.Matrix.vstack(f + f0, g))
        u = sol[:ndof, 0]
        N = []
        for j, (_mid, s, e, n, L, EA, _al) in enumerate(mem):
            elong = sum(n[a] * (u[e * d + a] - u[s * d + a]) for a in range(d))
            N.append(EA / L * (elong - d0[j]))
        # the support forces on the structure: K_members u − f − f0 at supported nodes (restraints and springs)
        full = Kmem * u - f - f0
        R = sp.Matrix([full[i] if i // d in supported else 0 for i in range(ndof)])
        exact[str(lc["id"])] = (u, N, R)
    for comb in doc.get("combinations", []):
        u = sp.zeros(ndof, 1)
        R = sp.zeros(ndof, 1)
        N = [sp.Integer(0)] * len(mem)
        for cid, fac in comb["factors"].items():
            fq = _q(fac)
            cu, cn, cr = exact[str(cid)]
            u += fq * cu
            R += fq * cr
            N = [a + fq * b for a, b in zip(N, cn, strict=True)]
        exact[str(comb["id"])] = (u, N, R)
    n = len(nodes)
    for cid, (u, N, R) in exact.items():
        out[cid] = ExactCase(
            cid,
            np.array([float(x) for x in u], dtype=np.float64).reshape(n, d),
            np.array([float(x) for x in N], dtype=np.float64),
            np.array([float(x) for x in R], dtype=np.float64).reshape(n, d),
        )
    return out


# ===================================================================== results writing
def number_text(x: float, digits: int | None) -> str:
    """A JSON number: full precision (17 significant figures, so the reader's quantum is that of a float64,
    not of a short decimal such as ``0.004``) or ``digits`` significant figures; zero as ``0``."""
    if x == 0.0:
        return "0"
    return f"{x:.{(17 if digits is None else digits) - 1}e}"


def results_text(
    model: Model,
    cases: dict[str, ExactCase] | list[Any],
    *,
    digits: int | None = None,
    units: dict[str, str] | None = None,
    sign_convention: str | None = None,
    parts: tuple[str, ...] = ("displacements", "axial_forces", "reactions"),
    only: tuple[str, ...] | None = None,
    skip_nodes: tuple[str, ...] = (),
    skip_members: tuple[str, ...] = (),
    embedded: bool = False,
) -> str:
    """A results document: every displacement, member force and support reaction of the given cases.

    ``embedded``: without ``format`` and ``version``, for the ``results`` key of a model document.
    """
    seq = list(cases.values()) if isinstance(cases, dict) else list(cases)
    d = model.dim
    supported = sorted(set(model.restraint_node.tolist()) | set(model.spring_node.tolist()))
    body: dict[str, Any] = {}
    for c in seq:
        if only is not None and c.case_id not in only:
            continue
        entry: dict[str, Any] = {}
        if "displacements" in parts:
            entry["displacements"] = {
                model.node_ids[i]: {AXES[a]: "§" + number_text(float(c.displacements[i, a]), digits) for a in range(d)}
                for i in range(model.n_nodes)
                if model.node_ids[i] not in skip_nodes
            }
        if "axial_forces" in parts:
            entry["axial_forces"] = {
                model.member_ids[j]: "§" + number_text(float(c.axial_forces[j]), digits)
                for j in range(model.n_members)
                if model.member_ids[j] not in skip_members
            }
        if "reactions" in parts:
            reac = np.asarray(c.reactions)
            extra = [i for i in range(model.n_nodes) if i not in supported and np.any(reac[i] != 0.0)]
            entry["reactions"] = {
                model.node_ids[i]: {AXES[a]: "§" + number_text(float(reac[i, a]), digits) for a in range(d)}
                for i in sorted(supported + extra)
            }
        body[c.case_id] = entry
    doc: dict[str, Any] = {} if embedded else {"format": "truss-audit-results", "version": 1}
    doc |= {"source": "exact solution (sympy), written by the test harness", "cases": body}
    if units:
        doc["units"] = units
    if sign_convention:
        doc["sign_convention"] = sign_convention
    return re.sub(r'"§([^"]*)"', r"\1", json.dumps(doc, indent=1, ensure_ascii=False))


def parse(model: Model, text: str) -> Results:
    return exchange.parse_results(text, model)


def model_of(doc: dict[str, Any]) -> Model:
    d = {k: v for k, v in doc.items() if k != "results"}
    return exchange.parse_model(json.dumps(d))


# ===================================================================== context
class StableStandIn:
    """Stand-in for the stability report (tests only): the models used here are stable."""

    stable = True

    def summary(self) -> str:
        return "stable (stand-in)"

    def as_dict(self) -> dict[str, Any]:
        return {"classification": "stand-in"}


class PrecisionStandIn:
    """Stand-in for ``audit.precision.PrecisionReport`` built from an exact solution."""

    def __init__(self, exact: dict[str, ExactCase]) -> None:
        self._exact = exact

    def case(self, case_id: str) -> Any:
        c = self._exact.get(case_id)
        if c is None:
            return None
        return SimpleNamespace(displacements=c.displacements, axial_forces=c.axial_forces, reactions=c.reactions)

    def as_dict(self) -> dict[str, Any]:
        return {"status": "stand-in"}


def context(
    model: Model, results: Results | None, tolerances: Tolerances | None = None, precision: Any = None
) -> Context:
    system = build_system(model)
    factor, cond, solution, reason = None, float("nan"), None, ""
    try:
        factor, cond = factorize_system(model, system)
        solution = solve_with(model, system, factor, cond)
    except UnsolvableError as exc:
        reason = exc.message
    return Context(
        model=model,
        results=results,
        tolerances=tolerances or Tolerances(),
        system=system,
        factor=factor,
        condition=cond,
        stability=StableStandIn(),
        solution=solution,
        unsolvable_reason=reason,
        precision=precision,
    )


def codes(outcomes: list[Any], min_severity: int = 0) -> set[str]:
    return {f.code for o in outcomes for f in o.findings if int(f.severity) >= min_severity}


# ===================================================================== tests of _common
TRIANGLE = {
    "format": "truss-audit-model",
    "version": 1,
    "dimensions": 2,
    "units": {"length": "m", "force": "kN"},
    "nodes": [{"id": "A", "x": 0, "y": 0}, {"id": "B", "x": 4, "y": 0}, {"id": "C", "x": 4, "y": 3}],
    "members": [
        {"id": "AB", "start": "A", "end": "B", "E": 2.0e8, "A": 0.001},
        {"id": "BC", "start": "B", "end": "C", "E": 2.0e8, "A": 0.001},
        {"id": "AC", "start": "A", "end": "C", "E": 2.0e8, "A": 0.001},
    ],
    "supports": [{"node": "A", "restrain": ["x", "y"]}, {"node": "B", "restrain": ["y"]}],
    "load_cases": [{"id": "P", "loads": [{"node": "C", "fx": 30, "fy": -40}]}],
}


def test_exact_solver_matches_method_of_joints_on_the_triangle() -> None:
    """Joint C of the 3-4-5 triangle (method of joints, e.g. Hibbeler, *Statics*, 12th ed., §6.2, recalled from memory):
    x: 30 − N_AC·4/5 = 0 → N_AC = 37.5 (tension); y: −40 − N_BC − N_AC·3/5 = 0 → N_BC = −62.5;
    joint B: N_AB = 0 (roller in y, BC vertical), B_y = −N_BC = 62.5; A = (−30, −22.5) by global balance."""
    ex = exact_solve(TRIANGLE)["P"]
    assert ex.axial_forces.tolist() == pytest.approx([0.0, -62.5, 37.5], abs=1e-12)
    assert ex.reactions.ravel().tolist() == pytest.approx([-30.0, -22.5, 0.0, 62.5, 0.0, 0.0], abs=1e-12)


def test_exact_solver_matches_the_three_bar_closed_form(published: Any) -> None:
    """Three-bar truss: N_vertical = P/(1 + 2cos³θ), N_outer = P cos²θ/(1 + 2cos³θ) (Timoshenko, *Strength of
    Materials*, Part I, 3rd ed., ch. I; recalled from memory), cos θ = 4/5, P = 100 kN."""
    doc, _model = published("timoshenko_three_bar.json")
    doc = json.loads(json.dumps(doc, default=float))
    ex = exact_solve(doc)["load"]
    c = 0.8
    assert ex.axial_forces[1] == pytest.approx(100 / (1 + 2 * c**3), rel=1e-12)
    assert ex.axial_forces[0] == pytest.approx(100 * c**2 / (1 + 2 * c**3), rel=1e-12)


def test_judge_separates_rounding_tolerance_and_failure() -> None:
    tol = Tolerances()
    rep = np.array([10.0004, 10.005, 10.02, np.nan])
    exp = np.full(4, 10.0)
    q = np.array([0.0005, 0.0005, 0.0005, 0.0005])
    j = cm.judge(rep, exp, q, 10.0, tol)
    assert j.rounding.tolist() == [True, False, False, False]
    assert j.passed.tolist() == [True, True, False, False]
    assert j.checked.tolist() == [True, True, True, False]
    assert [cm.verdict_label(j, i) for i in range(4)] == ["rounding", "tolerance", "fail", "not checked"]


def test_zero_quantum_is_capped_by_the_coarsest_nonzero_value() -> None:
    model = model_of(TRIANGLE)
    ex = exact_solve(TRIANGLE)
    res = parse(model, results_text(model, ex, digits=4))
    raw = res.case("P")
    assert raw is not None
    capped = cm.zero_quanta(raw)
    zero = raw.axial_forces == 0.0
    assert raw.axial_force_quantum[zero].tolist() == [0.5]  # "0" read as half a unit
    assert capped.axial_force_quantum[zero].tolist() == [0.005]  # 62.50 -> 0.005


def test_equilibrium_residual_of_the_exact_solution_is_zero() -> None:
    model = model_of(TRIANGLE)
    ex = exact_solve(TRIANGLE)["P"]
    res = cm.equilibrium_residual(model, model.load_cases[0].loads, ex.axial_forces, ex.reactions)
    assert np.abs(res).max() < 1e-12


def test_reference_prefers_high_precision_and_falls_back_to_float64() -> None:
    model = model_of(TRIANGLE)
    ex = exact_solve(TRIANGLE)
    res = parse(model, results_text(model, ex))
    assert cm.reference(context(model, res), "P").label == "float64"  # type: ignore[union-attr]
    assert cm.reference(context(model, res, precision=PrecisionStandIn(ex)), "P").label == "high precision"  # type: ignore[union-attr]
    broken = SimpleNamespace(case=lambda _cid: SimpleNamespace(displacements=None))
    assert cm.reference(context(model, res, precision=broken), "P").label == "float64"  # type: ignore[union-attr]


def test_action_scales_of_a_temperature_case_come_from_the_inputs() -> None:
    doc = dict(TRIANGLE)
    doc["units"] = {"length": "m", "force": "kN", "temperature": "degC"}
    doc["members"] = [dict(m, alpha=1.0e-5) for m in TRIANGLE["members"]]  # type: ignore[arg-type]
    doc["load_cases"] = [{"id": "T", "temperature_changes": [{"member": "AB", "delta": 50}]}]
    model = model_of(doc)
    a = cm.case_actions(model, "T")
    assert a is not None
    k = 2.0e8 * 0.001 / 4
    # EA/L·δ0 bounds the thermal force; it only sets a noise floor (BOUND_SHARE of it), since a determinate
    # truss heated carries no force at all (common practice)
    assert a.force_scale == pytest.approx(cm.BOUND_SHARE * k * 1.0e-5 * 50 * 4)
    assert a.length_scale == pytest.approx(1.0e-5 * 50 * 4)


# ===================================================================== property: exact answers pass
@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    doc=st.one_of(
        rational_plane_trusses(max_panels=3, initial_strains=True, settlements=True),
        rational_space_trusses(max_stories=1, initial_strains=True, settlements=True),
    ),
    digits=st.sampled_from([None, 4]),
)
def test_exact_solution_of_a_random_truss_passes_every_check(doc: dict[str, Any], digits: int | None) -> None:
    """Random rational trusses (tests/strategies.py), solved exactly in sympy: printed at full precision or to
    4 significant figures, the results raise no error and no warning in any check on reported results."""
    from audit.checks import combinations, compatibility, diagnosis, equilibrium, recompute, supports

    model = model_of(doc)
    res = parse(model, results_text(model, exact_solve(doc), digits=digits))
    ctx = context(model, res)
    loud = [
        (f.code, f.case, f.location.label(), f.message)
        for m in (equilibrium, supports, compatibility, recompute, combinations, diagnosis)
        for o in m.run(ctx)
        for f in o.findings
        if f.severity >= Severity.WARNING
    ]
    assert not loud
