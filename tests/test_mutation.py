"""Mutation test of the checks on reported results.

Correct results of a few models come from outside the project: exact sympy solutions of the model
documents (``test_checks_common.exact_solve``), each model checked against its published or closed-form
answer in the tests below.  One error at a time is injected, as a source program might make it; every
mutant must fail, the failure must point at the right member or joint, and where a diagnosis exists the
diagnosis must name the right cause.  The clean results, at full precision and rounded to 4 significant
figures, must pass with no error.  ``test_mutation_scoreboard`` counts mutants caught and false alarms.

Models:

* ``hibbeler``: reference_cases/published/hibbeler_statics_ex6_1.json (Hibbeler, *Engineering
  Mechanics: Statics*, 12th ed., Example 6.1; recalled from memory), statically determinate.
* ``three_bar``: reference_cases/published/timoshenko_three_bar.json (Timoshenko, *Strength of
  Materials*, Part I, 3rd ed., ch. I), indeterminate; its "load" case, with a horizontal load added.
* ``tripod``: reference_cases/published/tripod_space.json (closed form by joint equilibrium), 3D.
* ``pratt``: a six-joint Pratt truss derived here, determinate; one force checked by the method of
  sections (Hibbeler, *Structural Analysis*, 8th ed., §3.5, recalled from memory).
"""

from __future__ import annotations

import copy
import functools
import json
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from test_checks_common import (
    ExactCase,
    PrecisionStandIn,
    context,
    exact_solve,
    model_of,
    parse,
    results_text,
)

from audit.checks import combinations, compatibility, diagnosis, equilibrium, recompute, supports
from audit.findings import Finding, Severity

PUBLISHED = Path(__file__).resolve().parent.parent / "reference_cases" / "published"
MODULES = (equilibrium, supports, compatibility, recompute, combinations, diagnosis)


def _published(name: str) -> dict[str, Any]:
    doc = json.loads((PUBLISHED / name).read_text())
    doc.pop("results", None)
    return doc


def _three_bar() -> dict[str, Any]:
    doc = _published("timoshenko_three_bar.json")
    doc["load_cases"] = [{"id": "load", "loads": [{"node": "D", "fx": 30, "fy": -100}]}]
    doc.pop("combinations", None)
    return doc


PRATT: dict[str, Any] = {
    "format": "truss-audit-model",
    "version": 1,
    "title": "Six-joint Pratt truss (derived for this test)",
    "dimensions": 2,
    "units": {"length": "m", "force": "kN"},
    "nodes": [
        {"id": "L0", "x": 0, "y": 0},
        {"id": "L1", "x": 4, "y": 0},
        {"id": "L2", "x": 8, "y": 0},
        {"id": "L3", "x": 12, "y": 0},
        {"id": "U1", "x": 4, "y": 3},
        {"id": "U2", "x": 8, "y": 3},
    ],
    "members": [
        {"id": m, "start": s, "end": e, "E": 2.1e8, "A": a}
        for m, s, e, a in (
            ("1", "L0", "L1", 0.002),
            ("2", "L1", "L2", 0.002),
            ("3", "L2", "L3", 0.002),
            ("4", "U1", "U2", 0.003),
            ("5", "L0", "U1", 0.003),
            ("6", "U2", "L3", 0.003),
            ("7", "L1", "U1", 0.001),
            ("8", "L2", "U2", 0.001),
            ("9", "U1", "L2", 0.0015),
        )
    ],
    "supports": [{"node": "L0", "restrain": ["x", "y"]}, {"node": "L3", "restrain": ["y"]}],
    "load_cases": [
        {"id": "P", "loads": [{"node": "L1", "fy": -10}, {"node": "L2", "fy": -20}, {"node": "U1", "fx": 5}]}
    ],
}

MODELS: dict[str, Callable[[], dict[str, Any]]] = {
    "hibbeler": lambda: _published("hibbeler_statics_ex6_1.json"),
    "three_bar": _three_bar,
    "tripod": lambda: _published("tripod_space.json"),
    "pratt": lambda: copy.deepcopy(PRATT),
}


@functools.lru_cache(maxsize=64)
def _exact(text: str) -> dict[str, ExactCase]:
    return exact_solve(json.loads(text))


def exact(doc: dict[str, Any]) -> dict[str, ExactCase]:
    return _exact(json.dumps(doc, sort_keys=True))


# ----------------------------------------------------------------- the references themselves
def test_hibbeler_exact_matches_the_published_forces() -> None:
    """Example 6.1: F_BC = 707.1 N (C), F_BA = 500 N (T), F_CA = 500 N (T)."""
    ex = exact(MODELS["hibbeler"]())["P"]
    assert ex.axial_forces.tolist() == pytest.approx([500.0, -707.1068, 500.0], rel=1e-6)


def test_tripod_exact_matches_the_published_closed_form() -> None:
    doc = json.loads((PUBLISHED / "tripod_space.json").read_text())
    ex = exact(MODELS["tripod"]())["P"]
    pub = doc["results"]["cases"]["P"]
    assert ex.axial_forces.tolist() == pytest.approx([pub["axial_forces"][m] for m in ("AD", "BD", "CD")], rel=1e-12)
    assert ex.displacements[0].tolist() == pytest.approx([pub["displacements"]["D"][a] for a in "xyz"], rel=1e-12)


def test_pratt_lower_chord_by_the_method_of_sections() -> None:
    """Section through 2, 9, 4; moments about U1 of the left part: R_L0y = 145/12 (global moments about L0:
    12 R_L3 = 10·4 + 20·8 + 5·3), R_L0x = −5; −4·R_L0y − 3·5 + 3·N_2 = 0 → N_2 = 190/9 kN (tension)."""
    ex = exact(MODELS["pratt"]())["P"]
    assert ex.axial_forces[1] == pytest.approx(190 / 9, rel=1e-12)
    assert ex.reactions[0].tolist() == pytest.approx([-5.0, 145 / 12], rel=1e-12)


# ----------------------------------------------------------------- mutants
@dataclass(frozen=True)
class Mutant:
    name: str
    #: (doc, exact clean) -> (source doc used for the source's run or None, results mutator, text kwargs)
    kind: str
    code: str | None  #: the diagnosis code that must name the cause (None: no diagnosis expected)


def _largest_member(ex: ExactCase) -> int:
    return int(np.argmax(np.abs(ex.axial_forces)))


def _free_node(doc: dict[str, Any]) -> str:
    supported = {str(s["node"]) for s in doc.get("supports", [])}
    return next(str(n["id"]) for n in doc["nodes"] if str(n["id"]) not in supported)


def _loaded_node(doc: dict[str, Any]) -> str:
    return str(doc["load_cases"][0]["loads"][-1]["node"])


def build_mutant(model_name: str, mutant: str) -> tuple[Any, str, dict[str, str], str]:
    """(context, case id, expected location {"member"|"node": id}, expected diagnosis code or "")."""
    doc = MODELS[model_name]()
    model = model_of(doc)
    clean = exact(doc)
    cid = doc["load_cases"][0]["id"]
    ex = clean[cid]
    where: dict[str, str] = {}
    cause = ""
    kw: dict[str, Any] = {}
    cases: dict[str, ExactCase] = dict(clean)
    if mutant == "force_3pct":
        m = _largest_member(ex)
        n = ex.axial_forces.copy()
        n[m] *= 1.03
        cases[cid] = ExactCase(cid, ex.displacements, n, ex.reactions)
        where = {"member": model.member_ids[m]}
    elif mutant == "signs_flipped":
        cases[cid] = ExactCase(cid, ex.displacements, -ex.axial_forces, ex.reactions)
        cause = "DX101"
    elif mutant == "displacements_in_mm":
        cases[cid] = ExactCase(cid, 1000.0 * ex.displacements, ex.axial_forces, ex.reactions)
        cause = "DX103"
    elif mutant == "forces_in_other_unit":
        # kN models: numbers in N labelled kN (1000 x); N models: numbers in kN labelled N (1/1000 x)
        f = 1000.0 if doc["units"]["force"] == "kN" else 0.001
        cases[cid] = ExactCase(cid, ex.displacements, f * ex.axial_forces, f * ex.reactions)
        cause = "DX102"
    elif mutant == "load_missing":
        src = copy.deepcopy(doc)
        node = _loaded_node(doc)
        src["load_cases"][0]["loads"] = src["load_cases"][0]["loads"][:-1]
        cases[cid] = exact(src)[cid]
        where, cause = {"node": node}, "DX105"
    elif mutant in ("member_E_wrong", "member_E_wrong_forces_only"):
        src = copy.deepcopy(doc)
        m = _largest_member(ex)
        mem = src["members"][m]
        E = mem["E"] if "E" in mem else doc["materials"][mem["material"]]["E"]
        mem["E"] = 2 * E
        cases[cid] = exact(src)[cid]
        where, cause = {"member": model.member_ids[m]}, "DX104"
        if mutant.endswith("forces_only"):
            kw["parts"] = ("axial_forces", "reactions")
    elif mutant == "extra_support":
        src = copy.deepcopy(doc)
        node = _free_node(doc)
        src["supports"].append({"node": node, "restrain": ["x", "y", "z"][: doc["dimensions"]]})
        cases[cid] = exact(src)[cid]
        where, cause = {"node": node}, "DX108"
    else:  # pragma: no cover - a typo in the parameter list
        raise ValueError(mutant)
    res = parse(model, results_text(model, cases, digits=6, **kw))
    return context(model, res, precision=PrecisionStandIn(clean)), cid, where, cause


MUTANTS = {
    "hibbeler": (
        "force_3pct",
        "signs_flipped",
        "displacements_in_mm",
        "forces_in_other_unit",
        "member_E_wrong",
        "extra_support",
    ),
    "three_bar": (
        "force_3pct",
        "signs_flipped",
        "displacements_in_mm",
        "forces_in_other_unit",
        "load_missing",
        "member_E_wrong",
        "member_E_wrong_forces_only",
    ),
    "tripod": ("force_3pct", "signs_flipped", "displacements_in_mm", "forces_in_other_unit", "member_E_wrong"),
    "pratt": (
        "force_3pct",
        "signs_flipped",
        "displacements_in_mm",
        "forces_in_other_unit",
        "load_missing",
        "member_E_wrong",
        "extra_support",
    ),
}
CASES = [(m, k) for m, ks in MUTANTS.items() for k in ks]


def _run(ctx: Any) -> list[Finding]:
    return [f for mod in MODULES for o in mod.run(ctx) for f in o.findings]


@functools.cache
def judge_mutant(model_name: str, mutant: str) -> tuple[bool, str]:
    """(caught, explanation): fails, points at the right place, and names the right cause."""
    ctx, cid, where, cause = build_mutant(model_name, mutant)
    found = _run(ctx)
    errors = [f for f in found if f.severity >= Severity.ERROR and f.case == cid]
    if not errors:
        return False, "no error raised"
    if where:
        key, value = next(iter(where.items()))
        at = [f for f in errors if getattr(f.location, key) == value]
        if not at:
            return False, f"no error at {key} {value}: {sorted({f.location.label() for f in errors})}"
    causes = [f for f in found if f.code.startswith("DX1") and f.case == cid]
    if cause:
        if [f.code for f in causes] == [] or cause not in {f.code for f in causes}:
            return False, f"diagnosis {[f.code for f in found if f.code.startswith('DX')]} instead of {cause}"
        named = next(f for f in causes if f.code == cause)
        if where:
            key, value = next(iter(where.items()))
            alternatives = [label for _code, label, _w in named.data_dict().get("alternatives", ())]
            if getattr(named.location, key) != value and f"{key} {value}" not in alternatives:
                return False, f"{cause} at {named.location.label()} instead of {key} {value}"
    elif causes:
        wrong = [f for f in causes if not where or getattr(f.location, next(iter(where))) != next(iter(where.values()))]
        if wrong:
            return False, f"a wrong cause was named: {[(f.code, f.location.label()) for f in wrong]}"
    return True, "caught"


@pytest.mark.parametrize(("model_name", "mutant"), CASES, ids=[f"{m}-{k}" for m, k in CASES])
def test_mutant_is_caught_located_and_explained(model_name: str, mutant: str) -> None:
    caught, why = judge_mutant(model_name, mutant)
    assert caught, why


CLEAN = [(m, d, ref) for m in MODELS for d in (None, 4) for ref in ("float64", "high precision")]


@functools.cache
def false_alarms(model_name: str, digits: int | None, ref: str) -> tuple[Finding, ...]:
    doc = MODELS[model_name]()
    model = model_of(doc)
    clean = exact(doc)
    res = parse(model, results_text(model, clean, digits=digits))
    ctx = context(model, res, precision=PrecisionStandIn(clean) if ref == "high precision" else None)
    return tuple(f for f in _run(ctx) if f.severity >= Severity.WARNING)


@pytest.mark.parametrize(
    ("model_name", "digits", "ref"), CLEAN, ids=[f"{m}-{'full' if d is None else f'{d}sf'}-{r}" for m, d, r in CLEAN]
)
def test_clean_results_pass_without_error(model_name: str, digits: int | None, ref: str) -> None:
    bad = false_alarms(model_name, digits, ref)
    assert not bad, [(f.code, f.location.label(), f.message) for f in bad]


@pytest.mark.parametrize("name", ["hibbeler_statics_ex6_1.json", "tripod_space.json", "timoshenko_three_bar.json"])
def test_published_results_pass(name: str) -> None:
    """The published results as printed (3 to 5 significant figures, or exact) pass with no error."""
    from audit import exchange

    model = exchange.parse_model((PUBLISHED / name).read_text())
    ctx = context(model, model.results)
    bad = [f for f in _run(ctx) if f.severity >= Severity.WARNING]
    assert not bad, [(f.code, f.case, f.location.label(), f.message) for f in bad]


def test_mutation_scoreboard(capsys: pytest.CaptureFixture[str]) -> None:
    """Counts over every mutant and every clean run (the per-case tests above say which one failed)."""
    caught = sum(judge_mutant(m, k)[0] for m, k in CASES)
    alarms = sum(bool(false_alarms(m, d, r)) for m, d, r in CLEAN)
    with capsys.disabled():
        print(f"\nmutation: {caught}/{len(CASES)} mutants caught, {alarms}/{len(CLEAN)} clean runs with false alarms")
    assert caught == len(CASES)
    assert alarms == 0
