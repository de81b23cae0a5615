"""The JSON report: the stable minimum of FORMAT.md ("The audit report (JSON)"), round trip, determinism."""

from __future__ import annotations

import json
import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from audit.findings import AuditResult, CheckOutcome, Finding, Location, Severity, Status
from audit.reporters import json_report, samples

# FORMAT.md, "The audit report (JSON)": the fields a pipeline may rely on
TOP_FIELDS = {"format", "version", "verdict", "model", "stability", "checks", "findings"}
MODEL_FIELDS = {"title", "dimensions", "joints", "members", "restraints"}
STABILITY_FIELDS = {"maxwell_count", "rank", "mechanisms", "self_stress_states", "classification", "proof"}
CHECK_FIELDS = {"id", "case", "status", "reason"}
FINDING_FIELDS = {"code", "severity", "case", "location", "message", "reported", "expected", "difference"}
FINDING_FIELDS |= {"tolerance", "units", "data"}
# the brief's extras
EXTRA_FIELDS = {"tolerances", "precision", "inputs", "tool"}


def _doc(result: AuditResult | None = None) -> dict:
    return json.loads(json_report.render(result or samples.roof_result()))


def test_format_and_version() -> None:
    doc = _doc()
    assert (doc["format"], doc["version"]) == ("truss-audit-report", 1)


@pytest.mark.parametrize(
    ("where", "fields"),
    [
        ("top", TOP_FIELDS | EXTRA_FIELDS),
        ("model", MODEL_FIELDS),
        ("stability", STABILITY_FIELDS),
        ("checks", CHECK_FIELDS),
        ("findings", FINDING_FIELDS),
    ],
    ids=["top", "model", "stability", "checks", "findings"],
)
def test_stable_minimum_fields_present(where: str, fields: set[str]) -> None:
    doc = _doc()
    if where == "top":
        part = [doc]
    elif where in ("checks", "findings"):
        part = doc[where]
    else:
        part = [doc[where]]
    assert part
    for item in part:
        assert fields <= set(item), fields - set(item)


@pytest.mark.parametrize(
    ("make", "verdict"),
    [(samples.roof_result, "fail"), (samples.frame_result, "fail"), (samples.tripod_result, "pass")],
    ids=["roof", "bay", "tripod"],
)
def test_verdict_follows_the_result(make, verdict: str) -> None:
    assert _doc(make())["verdict"] == verdict


def test_statuses_and_severities_use_the_format_words() -> None:
    doc = _doc(samples.roof_result())
    assert {c["status"] for c in doc["checks"]} <= {"pass", "fail", "not_run"}
    assert {f["severity"] for f in doc["findings"]} <= {"error", "warning", "info"}
    not_run = [c for c in doc["checks"] if c["status"] == "not_run"]
    assert not_run
    assert all(c["reason"] for c in not_run)


def test_one_entry_per_finding_in_engine_order() -> None:
    r = samples.roof_result()
    doc = _doc(r)
    assert [f["code"] for f in doc["findings"]] == [f.code for f in r.findings]
    assert [(c["id"], c["case"]) for c in doc["checks"]] == [(o.check, o.case) for o in r.outcomes]


def test_location_is_structured() -> None:
    doc = _doc()
    locs = [f["location"] for f in doc["findings"]]
    assert {"member": "3"} in locs
    assert {"node": "C", "axis": "y"} in locs


def test_floats_round_trip_exactly() -> None:
    r = samples.roof_result()
    doc = _doc(r)
    first = next(f for f in doc["findings"] if f["location"] == {"member": "3"})
    assert first["expected"] == -125 / 12  # repr of a float reads back as the same float
    assert first["reported"] == -10.9


def test_non_finite_numbers_become_null() -> None:
    f = Finding(
        "RC101",
        Severity.ERROR,
        "m",
        reported=math.nan,
        expected=math.inf,
        data=(("ratio", -math.inf), ("arr", np.array([1.0, math.nan]))),
    )
    r = replace(samples.tripod_result(), outcomes=(CheckOutcome("recompute", "dead", Status.FAIL, (f,)),))
    text = json_report.render(r)
    assert "NaN" not in text
    assert "Infinity" not in text
    got = json.loads(text)["findings"][0]
    assert (got["reported"], got["expected"]) == (None, None)
    assert got["data"] == {"ratio": None, "arr": [1.0, None]}


def test_numpy_scalars_are_plain_numbers() -> None:
    f = Finding("RC101", Severity.ERROR, "m", reported=np.float64(2.5), data=(("n", np.int64(7)),))
    r = replace(samples.tripod_result(), outcomes=(CheckOutcome("recompute", "dead", Status.FAIL, (f,)),))
    got = json.loads(json_report.render(r))["findings"][0]
    assert got["reported"] == 2.5
    assert got["data"]["n"] == 7


def test_inputs_carry_no_directories() -> None:
    r = replace(
        samples.tripod_result(), inputs=(("/home/eng/jobs/tripod.json", "ab" * 32), ("C:\\x\\y.json", "cd" * 32))
    )
    doc = _doc(r)
    assert doc["inputs"] == [{"file": "tripod.json", "sha256": "ab" * 32}, {"file": "y.json", "sha256": "cd" * 32}]
    assert "/home" not in json_report.render(r)


def test_keys_are_sorted_and_output_is_canonical() -> None:
    text = json_report.render(samples.roof_result())
    assert text == json.dumps(json.loads(text), sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def test_tool_version_and_tolerances_echoed() -> None:
    r = samples.roof_result()
    doc = _doc(r)
    assert doc["tool"] == {"name": "truss-audit", "version": "0.1.0"}
    assert doc["tolerances"] == r.tolerances


_text = st.text(st.characters(blacklist_categories=("Cs",)), max_size=30)
_num = st.none() | st.floats(allow_nan=True, allow_infinity=True)
_finding = st.builds(
    Finding,
    code=st.from_regex(r"\A[A-Z]{2}[0-9]{3}\Z"),
    severity=st.sampled_from(list(Severity)),
    message=_text,
    case=st.none() | _text,
    location=st.builds(Location, node=st.none() | _text, member=st.none() | _text),
    reported=_num,
    expected=_num,
    difference=_num,
    tolerance=_num,
    units=st.none() | _text,
)


@settings(max_examples=60, deadline=None)
@given(st.lists(_finding, max_size=6))
def test_any_findings_round_trip(findings: list[Finding]) -> None:
    """Every field of every finding survives render → json.loads (non-finite numbers as null)."""
    r = replace(samples.tripod_result(), outcomes=(CheckOutcome("recompute", "dead", Status.FAIL, tuple(findings)),))
    doc = json.loads(json_report.render(r))
    assert len(doc["findings"]) == len(findings)
    for f, got in zip(findings, doc["findings"], strict=True):
        assert got["code"] == f.code
        assert got["message"] == f.message
        assert got["case"] == f.case
        assert got["location"] == f.location.as_dict()
        for key in ("reported", "expected", "difference", "tolerance"):
            v = getattr(f, key)
            assert got[key] == (v if v is not None and math.isfinite(v) else None)
