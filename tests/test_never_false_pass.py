"""Never a false pass: over random stable trusses, the exact solution passes and any real error fails.

For each random stable truss (``tests/strategies.py``: Henneberg growth, so
rigid, with supports that remove every rigid-body motion):

* the exact solution -- our float64 solve, written with every digit (``repr``)
  -- passes the audit; so does the same solution rounded to 4 significant
  figures (the rounding is within half a unit in the last printed digit, which
  the tolerances allow: ``audit.tolerances``);
* the exact solution with one single quantity (one displacement component, one
  member force, or one reaction component, in any case or combination) moved
  by more than its tolerance fails the audit, with an error finding in that
  case that names the node or member moved.

"More than its tolerance" is 1.5 times ``Tolerances.allowed(expected, 0,
scale)`` (the moved number is printed with all 17 digits, so its rounding
quantum is negligible beside that), with ``scale`` the largest magnitude of that kind of
quantity in the case, taken generously: the largest member force, reaction,
applied load or equivalent thermal load for forces; the largest displacement
for displacements.  A check that uses a smaller scale has a smaller
tolerance, so the perturbation is beyond every reading of the rule.
"""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, assume, given, settings
from hypothesis import strategies as st
from strategies import plane_trusses, space_trusses

from audit import engine, exchange
from audit.findings import Severity
from audit.model import AXES, Model
from audit.solve import Solution, case_vectors, solve_model
from audit.tolerances import Tolerances

BUDGET = settings(
    max_examples=12,
    deadline=None,
    derandomize=True,
    database=None,
    # no shrinking: each example is a whole audit, and a bounded CI time matters more than a minimal example
    phases=(Phase.explicit, Phase.generate),
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
)

#: random stable trusses of every support and load kind the format allows
TRUSSES = st.one_of(
    plane_trusses(max_nodes=7, max_extra_members=3, initial_strains=True, settlements=True),
    space_trusses(max_nodes=6, max_extra_members=3, initial_strains=True, settlements=True),
)

DIGITS = 20  #: high-precision digits for the audit (enough for these small, well-conditioned models)


def _quantum(text: str) -> float:
    """Half a unit in the last digit of a printed decimal (the rounding a reader may assume)."""
    mantissa, _, exponent = text.lower().partition("e")
    decimals = len(mantissa.split(".")[1]) if "." in mantissa else 0
    return 0.5 * 10.0 ** (int(exponent or 0) - decimals)


def _fmt(value: float, sig: int | None) -> str:
    return repr(float(value)) if sig is None else f"{value:.{sig - 1}e}"


def results_doc(model: Model, solution: Solution, sig: int | None = None) -> dict[str, Any]:
    """Every displacement, member force and support reaction component of every case, printed to ``sig`` figures."""
    axes = AXES[: model.dim]
    supported = sorted(set(model.restraint_node.tolist()) | set(model.spring_node.tolist()))
    cases: dict[str, Any] = {}
    for c in solution.cases:
        cases[c.case_id] = {
            "displacements": {
                node: {a: json.loads(_fmt(c.displacements[i, k], sig)) for k, a in enumerate(axes)}
                for i, node in enumerate(model.node_ids)
            },
            "axial_forces": {m: json.loads(_fmt(c.axial_forces[j], sig)) for j, m in enumerate(model.member_ids)},
            "reactions": {
                model.node_ids[i]: {a: json.loads(_fmt(c.reactions[i, k], sig)) for k, a in enumerate(axes)}
                for i in supported
            },
        }
    return {"format": "truss-audit-results", "version": 1, "source": "float64 solve", "cases": cases}


def audit_doc(model: Model, doc: dict[str, Any]) -> Any:
    text = json.dumps(doc)
    results = exchange.parse_results(text, model)
    return engine.audit(model, results, tolerances=Tolerances(), digits=DIGITS)


def force_scale(model: Model, solution: Solution, case_id: str) -> float:
    """Largest member force, reaction, applied load or equivalent initial-strain load in a case (generous)."""
    c = solution.case(case_id)
    assert c is not None
    parts = [np.abs(c.axial_forces).max(initial=0.0), np.abs(c.reactions).max(initial=0.0)]
    ci = model.case_index(case_id)
    indices: list[tuple[int, float]] = []
    if ci is not None:
        indices = [(ci, 1.0)]
    else:
        comb = model.combinations[model.combination_index(case_id)]  # type: ignore[index]
        indices = [(i, abs(f)) for i, f, _t in comb.factors]
    for i, factor in indices:
        f, f0, _d0 = case_vectors(model, i)
        parts += [factor * np.abs(f).max(initial=0.0), factor * np.abs(f0).max(initial=0.0)]
    return float(max(parts))


def _model(doc: dict[str, Any]) -> tuple[Model, Solution]:
    model = exchange.parse_model(json.dumps(doc))
    return model, solve_model(model)


def _verdict_line(result: Any) -> str:
    worst = [
        f"{f.code} {f.case} {f.location.label()}: {f.message}" for f in result.findings if f.severity >= Severity.ERROR
    ]
    return "\n".join(worst[:10])


@BUDGET
@given(doc=TRUSSES)
def test_exact_solution_passes(doc: dict[str, Any]) -> None:
    model, solution = _model(doc)
    result = audit_doc(model, results_doc(model, solution))
    assert not result.crashed
    assert result.verdict == "pass", _verdict_line(result)


@BUDGET
@given(doc=TRUSSES)
def test_solution_rounded_to_4_figures_passes(doc: dict[str, Any]) -> None:
    model, solution = _model(doc)
    result = audit_doc(model, results_doc(model, solution, sig=4))
    assert not result.crashed
    assert result.verdict == "pass", _verdict_line(result)


@st.composite
def perturbation(draw: st.DrawFn, doc: dict[str, Any]) -> tuple[str, str, str, str | None, float]:
    """(case id, kind, entity id, axis or None, sign) of the one quantity to move."""
    model = exchange.parse_model(json.dumps(doc))
    case_id = draw(st.sampled_from(model.all_case_ids()))
    kind = draw(st.sampled_from(["displacements", "axial_forces", "reactions"]))
    axes = AXES[: model.dim]
    sign = draw(st.sampled_from([1.0, -1.0]))
    if kind == "axial_forces":
        return case_id, kind, draw(st.sampled_from(model.member_ids)), None, sign
    if kind == "reactions":
        supported = sorted(set(model.restraint_node.tolist()) | set(model.spring_node.tolist()))
        node = model.node_ids[draw(st.sampled_from(supported))]
    else:
        node = draw(st.sampled_from(model.node_ids))
    return case_id, kind, node, draw(st.sampled_from(axes)), sign


@BUDGET
@given(data=st.data(), doc=TRUSSES)
def test_one_quantity_beyond_tolerance_fails(data: st.DataObject, doc: dict[str, Any]) -> None:
    model, solution = _model(doc)
    rdoc = results_doc(model, solution)
    case_id, kind, entity, axis, sign = data.draw(perturbation(doc), label="perturbation")
    c = solution.case(case_id)
    assert c is not None
    tol = Tolerances()
    if kind == "displacements":
        scale = float(np.abs(c.displacements).max())
        holder = rdoc["cases"][case_id][kind][entity]
        key: str = axis  # type: ignore[assignment]
    else:
        scale = force_scale(model, solution, case_id)
        holder = rdoc["cases"][case_id][kind] if kind == "axial_forces" else rdoc["cases"][case_id][kind][entity]
        key = entity if kind == "axial_forces" else axis  # type: ignore[assignment]
    assume(scale > 0.0)  # a case with no load at all has nothing to get wrong
    exact = float(holder[key])
    # the allowance beyond rounding; the moved number is printed with every digit, so its own
    # rounding quantum (about 1e-17 of it) adds almost nothing to what the audit allows
    allowed = float(tol.allowed(exact, 0.0, scale))
    moved = exact + sign * 1.5 * allowed
    assert math.isfinite(moved)
    assert moved != exact
    assert _quantum(repr(moved)) < 0.1 * allowed
    holder[key] = moved
    result = audit_doc(model, rdoc)
    assert not result.crashed
    assert result.verdict == "fail", f"{kind} {entity} {axis} in {case_id}: {exact!r} -> {moved!r} passed"
    errors = [f for f in result.findings if f.severity >= Severity.ERROR and f.case == case_id]
    named = [f for f in errors if entity in (f.location.node, f.location.member)]
    assert named, f"no error finding names {kind} {entity} in case {case_id}: {_verdict_line(result)}"


# --------------------------------------------------------------------------- too few digits to judge
def _roof_in_meganewtons() -> Model:
    """The contract's example roof (shared/FORMAT.md) with forces in MN: N3 = -12.5 kN · 5/6 = -0.0104167 MN."""
    from pathlib import Path

    doc = json.loads((Path(__file__).resolve().parents[1] / "fuzz" / "corpus" / "boathouse.model.json").read_text())
    doc["units"]["force"] = "MN"
    doc["materials"]["steel"]["E"] = 2.0e5
    doc["members"][4]["E"] = 2.0e5
    doc["load_cases"][0]["loads"][0]["fy"] = -0.0125
    return exchange.parse_model(json.dumps(doc))


@pytest.mark.parametrize("printed", ["0", "0.0", "0.00"])
def test_a_number_printed_too_coarsely_is_never_a_silent_pass(printed: str) -> None:
    """The largest member force (-0.0104 MN, by the method of joints) reported as a bare zero.

    Half a unit in the last digit of "0" is 0.5 MN, fifty times the force itself: the printed digits
    cannot show whether the number is right.  The audit must then fail it or at least warn about that
    member, never pass it without a word (a check that cannot judge says so).
    """
    model = _roof_in_meganewtons()
    text = '{"format": "truss-audit-results", "version": 1, "cases": {"snow": {"axial_forces": {"3": %s}}}}'
    result = engine.audit(model, exchange.parse_results(text % printed, model), digits=DIGITS)
    flagged = [f for f in result.findings if f.severity >= Severity.WARNING and f.location.member == "3"]
    assert flagged, f"N3 = {printed} MN passed silently (exact -0.0104167 MN); findings: {_verdict_line(result)}"


# --------------------------------------------------------------------------- a settlement must not widen the tolerance
@pytest.mark.parametrize("error", [0.02, 0.05], ids=["2-percent", "5-percent"])
def test_a_rigid_settlement_does_not_hide_a_wrong_member_force(error: float) -> None:
    """The contract's roof (statically determinate) with its roller C lowered 0.1 m in the snow case.

    A settlement of a determinate truss is a rigid-body motion: it moves the joints and stresses no
    member, so the snow forces stay N3 = -12.5 · 5/6 = -10.4167 kN (method of joints; common practice).
    The tolerances promise that a 1 % error in a member force printed to 3 or more figures fails
    (``audit.tolerances``); a 2 % or 5 % error in the largest force, printed with all digits, must fail
    here too, however far the support moved.
    """
    from pathlib import Path

    doc = json.loads((Path(__file__).resolve().parents[1] / "fuzz" / "corpus" / "boathouse.model.json").read_text())
    doc["load_cases"][0]["support_displacements"] = [{"node": "C", "direction": [0, 1], "value": -0.1}]
    model = exchange.parse_model(json.dumps(doc))
    n3 = -12.5 * 5 / 6 * (1 + error)
    body = {"format": "truss-audit-results", "version": 1, "cases": {"snow": {"axial_forces": {"3": n3}}}}
    text = json.dumps(body)
    result = engine.audit(model, exchange.parse_results(text, model), digits=DIGITS)
    assert result.verdict == "fail", f"N3 wrong by {error:.0%} passed; findings: {_verdict_line(result)}"
    assert any(f.severity >= Severity.ERROR and f.location.member == "3" for f in result.findings)
