"""Writes the data cases of tension-only / compression-only models (run from the project root):

    PYTHONPATH=$PWD:tests python tests/data/nonlinear_cases.py

The scenarios (a braced bay, a propped hanger) are the closed-form models of ``tests/test_nonlinear.py``,
whose exact states are established there by sympy; the reported results are the high-precision solution
printed to 10 significant digits, then one planted change per case.  ``x-expect`` lists the codes the
change must raise (the intended one is asserted to be among them when the file is written).
"""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

from test_checks_common import context
from test_nonlinear import hanger_doc, panel_doc

from audit import engine, exchange, precision
from audit.checks import combinations, compatibility, diagnosis, equilibrium, recompute, supports
from audit.findings import Severity

ROOT = Path(__file__).resolve().parent
MODULES = (equilibrium, supports, compatibility, recompute, combinations, diagnosis)
SOURCE = (
    "invented scenario (a braced bay / a propped hanger) from tests/test_nonlinear.py, whose exact states are "
    "derived there with sympy; results: the high-precision solution to 10 digits, then the planted change "
    "named in the title"
)


def _results(doc: dict[str, Any], linear: bool = False) -> dict[str, Any]:
    d = copy.deepcopy(doc)
    if linear:
        for m in d["members"]:
            m.pop("behaviour", None)
    model = exchange.parse_model(json.dumps(d))
    cases, _ = precision.solve_high_precision(model, 10)
    out = json.loads(exchange.dump_results(model, cases, source="truss-audit solve --digits 10", digits=10))
    del out["format"], out["version"]
    return out


def _write(folder: Path, name: str, doc: dict[str, Any], title: str, intended: str, whole: bool) -> None:
    doc = copy.deepcopy(doc)
    doc["title"] = title
    text = json.dumps(doc)
    model = exchange.parse_model(text)
    if whole:
        findings = list(engine.audit(model).findings)
    else:
        ctx = context(model, model.results)
        findings = [f for m in MODULES for o in m.run(ctx) for f in o.findings]
    loud = sorted({f.code for f in findings if f.severity >= Severity.WARNING})
    codes = sorted(set(loud) | {intended})
    assert intended in {f.code for f in findings}, (name, sorted({f.code for f in findings}))
    verdict = "fail" if any(f.severity >= Severity.ERROR for f in findings) else "pass"
    doc["x-source"] = SOURCE
    doc["x-derivation"] = (
        "written by tests/data/nonlinear_cases.py: the planted change in the title, over results solved to 10 "
        "digits; the codes are those the checks raise for it, the intended one asserted present"
    )
    doc["x-expect"] = {"codes": codes, "verdict": verdict}
    (folder / f"{name}.json").write_text(json.dumps(doc, indent=1) + "\n")


def main() -> None:
    cases, rules = ROOT.parent / "cases", ROOT / "rules"
    panel = panel_doc()
    right = _results(panel)

    slack = copy.deepcopy(panel)
    slack["results"] = copy.deepcopy(right)
    slack["results"]["cases"]["wind"]["axial_forces"]["D2"] = 3.0
    _write(cases, "nl_slack_member_reported_with_force", slack, "slack diagonal reported with a force", "CP102", False)

    lin = copy.deepcopy(panel)
    lin["results"] = _results(panel, linear=True)
    _write(
        cases, "nl_tension_only_member_in_compression", lin, "linear hand-off of tension-only bracing", "CP103", False
    )

    sup = copy.deepcopy(panel)
    sup["results"] = copy.deepcopy(right)
    c = sup["results"]["cases"]
    for part in ("displacements", "reactions"):
        c["both"][part] = {
            n: {a: 1.5 * c["wind"][part][n][a] + c["back"][part][n][a] for a in c["wind"][part][n]}
            for n in c["wind"][part]
        }
    c["both"]["axial_forces"] = {
        m: 1.5 * c["wind"]["axial_forces"][m] + c["back"]["axial_forces"][m] for m in c["wind"]["axial_forces"]
    }
    _write(cases, "nl_superposed_combination", sup, "combination written as the factored sum", "CB103", False)

    sw = copy.deepcopy(panel)
    for m in sw["members"]:
        m["unit_weight"] = 78.5
    sw["load_cases"][0]["self_weight"] = {"factor": 1.35}
    without = copy.deepcopy(sw)
    del without["load_cases"][0]["self_weight"]
    sw["results"] = _results(without)
    _write(cases, "nl_self_weight_left_out", sw, "self weight left out of the dead load", "RC102", False)

    ok = copy.deepcopy(panel)
    ok["results"] = right
    _write(rules, "nl001_braced_bay_states", ok, "correct hand-off of a braced bay", "NL001", True)

    hanger = hanger_doc()
    _write(rules, "nl101_hanger_uplift_no_solution", hanger, "propped hanger under uplift", "NL101", True)


if __name__ == "__main__":
    main()
