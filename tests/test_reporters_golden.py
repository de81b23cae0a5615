"""Exact-output (golden file) tests of the text, Markdown, JSON and JUnit reporters.

The inputs are the small hand-built audit results of :mod:`audit.reporters.samples`.
Regenerate the files after an intended change of output with

    TRUSS_AUDIT_UPDATE_GOLDEN=1 pytest tests/test_reporters_golden.py

and review the diff before committing it.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path

import pytest

from audit.findings import AuditResult
from audit.reporters import _shared, json_report, junit, markdown, samples, text

GOLDEN = Path(__file__).resolve().parent / "golden"
UPDATE = os.environ.get("TRUSS_AUDIT_UPDATE_GOLDEN") == "1"

SAMPLES: dict[str, Callable[[], AuditResult]] = {
    "roof-fail": samples.roof_result,
    "bay-unstable": samples.frame_result,
    "tripod-pass": samples.tripod_result,
}
REPORTERS: dict[str, tuple[str, Callable[[AuditResult], str]]] = {
    "text": ("txt", lambda r: text.render(r)),
    "markdown": ("md", lambda r: markdown.render(r)),
    "json": ("json", lambda r: json_report.render(r)),
    "junit": ("xml", lambda r: junit.render(r)),
}
PAIRS = [(s, r) for s in SAMPLES for r in REPORTERS]


@pytest.mark.parametrize(("sample", "reporter"), PAIRS, ids=[f"{s}-{r}" for s, r in PAIRS])
def test_matches_golden_file(sample: str, reporter: str) -> None:
    ext, render = REPORTERS[reporter]
    got = render(SAMPLES[sample]())
    path = GOLDEN / f"{sample}.{ext}"
    if UPDATE:
        path.write_text(got, encoding="utf-8")
    assert path.is_file(), f"missing golden file {path.name}: run with TRUSS_AUDIT_UPDATE_GOLDEN=1"
    assert got == path.read_text(encoding="utf-8")


@pytest.mark.parametrize(("sample", "reporter"), PAIRS, ids=[f"{s}-{r}" for s, r in PAIRS])
def test_output_is_deterministic(sample: str, reporter: str) -> None:
    _, render = REPORTERS[reporter]
    assert render(SAMPLES[sample]()) == render(SAMPLES[sample]())


@pytest.mark.parametrize("reporter", list(REPORTERS), ids=list(REPORTERS))
def test_every_report_carries_the_caution(reporter: str) -> None:
    _, render = REPORTERS[reporter]
    out = render(samples.roof_result())
    flat = " ".join(out.replace("\\", "").split())
    assert " ".join(_shared.CAUTION.split()) in flat


@pytest.mark.parametrize("reporter", list(REPORTERS), ids=list(REPORTERS))
def test_every_report_states_the_verdict(reporter: str) -> None:
    _, render = REPORTERS[reporter]
    assert "fail" in render(samples.roof_result()).lower()
    out = render(samples.tripod_result()).lower()
    assert "pass" in out
