"""JUnit XML: parses with xml.etree, one testcase per (check, case), failures, skips, errors, escaping."""

from __future__ import annotations

import xml.etree.ElementTree as ET
from dataclasses import replace

from hypothesis import given, settings
from hypothesis import strategies as st

from audit.findings import CheckOutcome, Finding, Location, Severity, Status
from audit.reporters import junit, samples


def _root(result=None) -> ET.Element:
    return ET.fromstring(junit.render(result or samples.roof_result()).encode("utf-8"))


def test_one_testcase_per_check_and_case() -> None:
    r = samples.roof_result()
    cases = _root(r).findall("./testsuite/testcase")
    assert [(c.get("classname"), c.get("name")) for c in cases] == [
        (f"truss-audit.{o.check}", o.case if o.case is not None else "(model)") for o in r.outcomes
    ]


def test_a_testsuite_per_check_family() -> None:
    r = samples.roof_result()
    names = [s.get("name") for s in _root(r).findall("testsuite")]
    assert names == list(dict.fromkeys(o.check for o in r.outcomes))


def test_a_failure_per_error_finding() -> None:
    r = samples.roof_result()
    failures = _root(r).findall(".//failure")
    errors = [f for f in r.findings if f.severity >= Severity.ERROR]
    assert sorted(f.get("type") for f in failures) == sorted(f.code for f in errors)
    text = " ".join(f.text or "" for f in failures)
    assert "reported = -10.9" in text
    assert "tolerance = 0.0104" in text


def test_not_run_is_skipped_with_its_reason() -> None:
    skipped = _root().findall(".//skipped")
    assert len(skipped) == 2
    assert {s.get("message") for s in skipped} == {"no reported results for this case"}


def test_a_crashed_check_is_an_error_not_a_skip() -> None:
    root = _root(samples.frame_result())
    suite = root.find("./testsuite[@name='compatibility']")
    assert suite is not None
    assert suite.find(".//error") is not None
    assert suite.find(".//skipped") is None
    assert root.get("errors") == "1"


def test_counts_add_up() -> None:
    root = _root(samples.roof_result())
    assert (root.get("tests"), root.get("failures"), root.get("skipped"), root.get("errors")) == ("7", "1", "2", "0")
    assert sum(int(s.get("tests")) for s in root.findall("testsuite")) == 7


def test_warnings_go_to_system_out() -> None:
    out = _root().findall(".//system-out")
    assert any("RC102" in (o.text or "") for o in out)


def test_hostile_text_is_escaped() -> None:
    bad = 'member <3> & "quoted" \x00\x07 ]]> end'
    f = Finding("RC101", Severity.ERROR, bad, case="a&b", location=Location(member="<m>"))
    r = replace(samples.tripod_result(), title="<T&>", outcomes=(CheckOutcome("recompute", "a&b", Status.FAIL, (f,)),))
    root = _root(r)
    failure = root.find(".//failure")
    assert failure is not None
    assert 'member <3> & "quoted"' in failure.get("message")
    assert root.find(".//testcase").get("name") == "a&b"


@settings(max_examples=50, deadline=None)
@given(st.text(max_size=40), st.text(max_size=20))
def test_any_text_gives_valid_xml(message: str, case: str) -> None:
    f = Finding("RC101", Severity.ERROR, message, case=case)
    r = replace(samples.tripod_result(), outcomes=(CheckOutcome("recompute", case, Status.FAIL, (f,)),))
    root = _root(r)
    assert root.get("failures") == "1"
