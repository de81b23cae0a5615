"""The exact-input path of audit.precision on numbers at the edges of the float range.

The exchange format allows any finite decimal text: subnormal coordinates (``5e-324``), exponents beyond the
float range (``1e-400``, ``0e400``), direction vectors whose components differ by 320 orders of magnitude,
springs of stiffness 0.  The high-precision recomputation must neither fail nor warn on them, must keep its
report JSON-safe, and where it states a proven bound that bound must contain the error against an independent
reference: the stiffness method with Lagrange multipliers in mpmath at 80 digits (``reference`` in
``test_precision.py``; Johansson et al., mpmath 1.3, whose numbers have arbitrary exponents).
"""

from __future__ import annotations

import copy
import json
import warnings
from collections.abc import Callable
from typing import Any

import mpmath
import numpy as np
import pytest
from test_precision import mpmath_reference, to_json

from audit import precision
from audit.exchange import parse_model
from audit.solve import build_system, factorize_system, solve_with


def raw(text: str) -> str:
    """A JSON number written exactly as ``text``."""
    return f"<<{text}>>"


def base_doc() -> dict[str, Any]:
    """A plane truss A(0,0) B(4,0) C(8,0) D(4,3), pin at A, roller at C, one load and one temperature case."""
    members = [
        {"id": "1", "start": "A", "end": "B"},
        {"id": "2", "start": "B", "end": "C"},
        {"id": "3", "start": "A", "end": "D"},
        {"id": "4", "start": "D", "end": "C"},
        {"id": "5", "start": "B", "end": "D"},
    ]
    for m in members:
        m.update({"material": "steel", "section": "tube"})
    return {
        "format": "truss-audit-model",
        "version": 1,
        "title": "edge numbers",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN", "temperature": "degC"},
        "nodes": [
            {"id": "A", "x": 0, "y": 0},
            {"id": "B", "x": 4, "y": 0},
            {"id": "C", "x": 8, "y": 0},
            {"id": "D", "x": 4, "y": 3},
        ],
        "materials": {"steel": {"E": raw("2.0e8"), "alpha": raw("1.2e-5")}},
        "sections": {"tube": {"A": raw("1.2e-3")}},
        "members": members,
        "supports": [{"node": "A", "restrain": ["x", "y"]}, {"node": "C", "restrain": [{"direction": [0, 1]}]}],
        "load_cases": [
            {"id": "snow", "loads": [{"node": "D", "fy": -12.5}]},
            {"id": "heat", "temperature_changes": [{"member": "1", "delta": 25}]},
        ],
        "combinations": [{"id": "design", "factors": {"snow": raw("1.5"), "heat": raw("1.0")}}],
    }


Change = Callable[[dict[str, Any]], None]


def setting(*path: Any, value: Any) -> Change:
    def change(doc: dict[str, Any]) -> None:
        target = doc
        for key in path[:-1]:
            target = target[key]
        target[path[-1]] = value

    return change


def adding(*path: Any, value: Any) -> Change:
    def change(doc: dict[str, Any]) -> None:
        target: Any = doc
        for key in path:
            target = target[key]
        target.append(copy.deepcopy(value))

    return change


#: (id, changes, whether a proof is expected)
EDGE_CASES: list[tuple[str, list[Change], bool]] = [
    ("coordinate-subnormal", [setting("nodes", 0, "y", value=raw("-2.225073858507e-311"))], True),
    ("coordinate-smallest-subnormal", [setting("nodes", 1, "y", value=raw("5e-324"))], True),
    ("coordinate-below-float-range", [setting("nodes", 1, "y", value=raw("1e-400"))], True),
    ("coordinate-zero-with-huge-exponent", [setting("nodes", 1, "y", value=raw("0e400"))], True),
    (
        "subnormal-coordinate-with-length-error",
        [
            setting("nodes", 0, "y", value=raw("1e-310")),
            setting("load_cases", 1, "length_errors", value=[{"member": "3", "value": raw("1e-3")}]),
        ],
        True,
    ),
    ("load-below-float-range", [adding("load_cases", 0, "loads", value={"node": "B", "fx": raw("1e-999")})], True),
    (
        "settlement-subnormal",
        [setting("load_cases", 1, "support_displacements", value=[{"node": "A", "y": 5e-324}])],
        True,
    ),
    ("factor-subnormal", [setting("combinations", 0, "factors", "snow", value=raw("5e-324"))], True),
    (
        "spring-stiffness-zero",
        [adding("supports", value={"node": "D", "springs": [{"axis": "x", "stiffness": 0}]})],
        True,
    ),
    (
        "spring-direction-320-orders-apart",
        [adding("supports", value={"node": "D", "springs": [{"direction": [raw("1e-320"), 1], "stiffness": 100}]})],
        True,
    ),
    (
        "roller-direction-320-orders-apart",
        [setting("supports", 1, "restrain", value=[{"direction": [raw("1e-320"), 1]}])],
        True,
    ),
    (
        "E-times-A-across-600-orders",
        [setting("members", 4, "E", value=raw("1e-300")), setting("members", 4, "A", value=raw("1e300"))],
        True,
    ),
    # every force near 1e-310: the bounds, evaluated in float64, are honestly not established
    (
        "all-forces-subnormal",
        [
            setting("load_cases", 0, "loads", value=[{"node": "D", "fy": raw("-1e-310")}]),
            setting("load_cases", 1, "temperature_changes", value=[{"member": "1", "delta": raw("1e-300")}]),
        ],
        False,
    ),
]


def _doc(changes: list[Change]) -> dict[str, Any]:
    doc = base_doc()
    for change in changes:
        change(doc)
    return doc


def _analysed(doc: dict[str, Any]) -> tuple[Any, precision.PrecisionReport, list[str]]:
    model = parse_model(to_json(doc))
    system = build_system(model)
    factor, cond = factorize_system(model, system)
    sol = solve_with(model, system, factor, cond)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        rep = precision.analyse(model, system, factor, sol, None)
    return model, rep, [str(w.message) for w in caught]


@pytest.mark.parametrize(("changes", "proof"), [c[1:] for c in EDGE_CASES], ids=[c[0] for c in EDGE_CASES])
def test_edge_numbers_are_analysed_without_warning(changes: list[Change], proof: bool) -> None:
    _model, rep, caught = _analysed(_doc(changes))
    assert caught == []
    json.dumps(rep.as_dict(), allow_nan=False)
    assert rep.lambda_lo is not None
    assert rep.lambda_lo > 0
    if proof:
        assert all(c.status == "proven" for c in rep.cases), [c.reason for c in rep.cases]
    else:
        assert all(c.status == "not_established" and c.reason and c.bound is None for c in rep.cases)
        assert all(c.backward_error is None for c in rep.cases)


@pytest.mark.parametrize("changes", [c[1] for c in EDGE_CASES if c[2]], ids=[c[0] for c in EDGE_CASES if c[2]])
def test_edge_numbers_proven_bound_contains_the_mpmath_error(changes: list[Change]) -> None:
    doc = _doc(changes)
    _model, rep, _caught = _analysed(doc)
    ref = mpmath_reference(doc, dps=80)
    with mpmath.workdps(80):
        for case in rep.cases:
            exact = ref[case.case_id]["u"]
            ours = case.displacements_exact.to_mpf(80).reshape(-1)
            err = [abs(ours[i] - exact[i]) for i in range(len(exact))]
            bound = np.asarray(case.bound_dof).reshape(-1)
            scale = max(abs(x) for x in exact)
            for i, e in enumerate(err):
                assert e <= mpmath.mpf(float(bound[i])) + scale * mpmath.mpf(10) ** -70, (case.case_id, i)


def test_zero_spring_changes_nothing() -> None:
    """A spring of stiffness 0 adds nothing: the same exact displacements and the same λ_lo as without it."""
    _m, with_zero, _c = _analysed(_doc([EDGE_CASES[8][1][0]]))
    _m, without, _c = _analysed(base_doc())
    assert with_zero.lambda_lo == without.lambda_lo
    for a, b in zip(with_zero.cases, without.cases, strict=True):
        assert np.array_equal(a.displacements_exact.ints, b.displacements_exact.ints)
        assert a.bound == b.bound


@pytest.mark.parametrize(
    ("x", "k10"),
    [(1.0, 0), (0.75, 3), (5e-324, 330), (1.7976931348623157e308, -400), (3.0, -1), (1e-300, 299)],
    ids=["one", "0.75e3", "subnormal-1e330", "max-1e-400", "3e-1", "1e-300-1e299"],
)
def test_floor_log2_scaled_is_exact(x: float, k10: int) -> None:
    """2^j <= x·10^k10 < 2^(j+1), checked with exact rationals (Python's fractions)."""
    from fractions import Fraction

    j = precision.floor_log2_scaled(x, k10)
    v = Fraction(x) * Fraction(10) ** k10
    assert Fraction(2) ** j <= v < Fraction(2) ** (j + 1)


def test_ints_to_float_keeps_small_entries_next_to_huge_ones() -> None:
    """Entry by entry: 10^400·2^-100 is beyond float64 (inf), 1·2^-100 and −3·10^300·2^-100 keep their values."""
    out = precision.ints_to_float(np.array([10**400, 1, -3 * 10**300], dtype=object), 0, -100)
    assert out[0] == np.inf
    assert out[1] == 2.0**-100
    assert out[2] == pytest.approx(-3e300 * 2.0**-100, rel=1e-15)


def test_round_scaled_exact_path_matches_fractions() -> None:
    """Beyond the float range the scaling is exact: nearest integer to x·10^k·2^e, checked with fractions."""
    from fractions import Fraction

    x = np.array([1.5, -2.25, 1e-300, 3.3e10])
    got = precision.round_scaled(x, -400, 1400, None)
    for xi, gi in zip(x.tolist(), got.tolist(), strict=True):
        v = Fraction(xi) * Fraction(10) ** -400 * Fraction(2) ** 1400
        assert abs(Fraction(gi) - v) <= Fraction(1, 2)
