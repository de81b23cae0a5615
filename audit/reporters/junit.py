"""JUnit XML for CI systems: a testsuite per check family, a testcase per (check, case).

* a finding at or above the failing severity → a ``<failure>`` (message and numbers);
* a check that did not run → ``<skipped>`` with the reason;
* a check that crashed → an ``<error>`` (the AU901 finding);
* other findings → lines of ``<system-out>``.

Deterministic (no timestamps or durations), escaped by the XML writer, and
stripped of characters XML 1.0 cannot carry.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from collections.abc import Mapping
from typing import Any

from audit.findings import AuditResult, CheckOutcome, Finding, Status
from audit.model import Model
from audit.reporters import _explain, _shared

_BAD_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def _clean(text: str) -> str:
    return _BAD_XML.sub("\ufffd", text)


def _numbers(f: Finding) -> str:
    parts = [
        f"{name} = {_shared.fmt_number(v, 10)}"
        for name, v in (
            ("reported", f.reported),
            ("expected", f.expected),
            ("difference", _shared.difference_of(f)),
            ("tolerance", f.tolerance),
        )
        if v is not None
    ]
    if parts and f.units:
        parts.append(f"units {f.units}")
    parts += [f"{k} = {v}" for k, v in _shared.extra_data(f, skip=())]
    return "; ".join(parts)


def _finding_text(f: Finding) -> str:
    head = f"{f.code} {f.severity.label} at {f.location.label()}" + (f", case {f.case}" if f.case else "")
    nums = _numbers(f)
    return _clean(head + ": " + f.message + ("\n" + nums if nums else ""))


def _testcase(suite: ET.Element, o: CheckOutcome, result: AuditResult) -> tuple[int, int, int]:
    """Add one testcase; return (failed, errored, skipped) as 0/1 each."""
    case = ET.SubElement(
        suite, "testcase", {"classname": _clean(f"truss-audit.{o.check}"), "name": _clean(_shared.case_label(o.case))}
    )
    crashed = o.check in result.crashed and o.status is Status.NOT_RUN
    failing = [f for f in _shared.sorted_findings(o.findings) if f.severity >= result.fail_on]
    failed = errored = skipped = 0
    if crashed:
        crash = [f for f in failing if f.code.startswith("AU9")] or failing
        el = ET.SubElement(case, "error", {"message": _clean(o.reason or "the check crashed"), "type": "AU901"})
        el.text = "\n\n".join(_finding_text(f) for f in crash) or _clean(o.reason)
        errored = 1
        failing = [f for f in failing if f not in crash]
    elif o.status is Status.NOT_RUN:
        ET.SubElement(case, "skipped", {"message": _clean(o.reason or "not run")})
        skipped = 1
    for f in failing:
        el = ET.SubElement(case, "failure", {"message": _clean(f"{f.code}: {f.message}"), "type": f.code})
        el.text = _finding_text(f)
        failed = 1
    if o.status is Status.FAIL and not failing and not crashed:
        # the check itself says FAIL (e.g. an error filtered by the threshold): keep its word
        el = ET.SubElement(case, "failure", {"message": _clean(o.reason or "the check failed"), "type": o.check})
        el.text = _clean(o.reason or "the check failed")
        failed = 1
    rest = [f for f in _shared.sorted_findings(o.findings) if f.severity < result.fail_on]
    if rest:
        ET.SubElement(case, "system-out").text = "\n".join(_finding_text(f) for f in rest)
    return failed, errored, skipped


def render(result: AuditResult, model: Model | None = None, context: Mapping[str, Any] | None = None) -> str:
    """JUnit XML: ``<testsuites>`` with one ``<testsuite>`` per check id, in the order the checks ran."""
    root = ET.Element("testsuites", {"name": _clean(f"truss-audit: {result.title}")})
    families: dict[str, list[CheckOutcome]] = {}
    for o in result.outcomes:
        families.setdefault(o.check, []).append(o)
    total = [0, 0, 0, 0]
    for check, outcomes in families.items():
        suite = ET.SubElement(root, "testsuite", {"name": _clean(check)})
        counts = [0, 0, 0]
        for o in outcomes:
            for k, v in enumerate(_testcase(suite, o, result)):
                counts[k] += v
        attrs = {"tests": len(outcomes), "failures": counts[0], "errors": counts[1], "skipped": counts[2]}
        for key, value in attrs.items():
            suite.set(key, str(value))
        for k, v in enumerate((len(outcomes), *counts)):
            total[k] += v
    for key, value in zip(("tests", "failures", "errors", "skipped"), total, strict=True):
        root.set(key, str(value))
    entries = [("verdict", result.verdict)]
    lead = _explain.lead(result)
    if lead:
        entries.append(("root-cause", " ".join(lead)))
    entries += [("tool-version", result.version), ("fail-on", result.fail_on.label)]
    entries += [(f"input:{_shared.file_name(n)}", sha) for n, sha in result.inputs]
    entries.append(("caution", _shared.CAUTION))
    for suite in root.findall("testsuite"):
        props = ET.Element("properties")
        for prop, text in entries:
            ET.SubElement(props, "property", {"name": _clean(prop), "value": _clean(text)})
        suite.insert(0, props)
    ET.indent(root, space="  ")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


__all__ = ["render"]
