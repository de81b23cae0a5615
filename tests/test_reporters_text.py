"""The terminal report: layout, width, colour only when asked, honest about what did not run."""

from __future__ import annotations

import re
from dataclasses import replace

import pytest

from audit.findings import CheckOutcome, Finding, Location, Severity, Status
from audit.reporters import _shared, samples, text

ANSI = re.compile(r"\x1b\[[0-9;]*m")


def _long_result():
    """Many discrepancies with long ids, long case names and long units, to stress the width."""
    findings = tuple(
        Finding(
            "RC101",
            Severity.ERROR if k % 2 else Severity.WARNING,
            "x",
            case="a-very-long-combination-name-" + str(k),
            location=Location(member="member-with-a-long-identifier-" + str(k)),
            reported=-123456.789 * (k + 1),
            expected=-123456.7 * (k + 1),
            difference=-0.089 * (k + 1),
            tolerance=1.23456e-7,
            units="kN·m/rad",
            data=(("quantity", "axial force at the far end"), ("quantum", 5e-4), ("within_rounding", True)),
        )
        for k in range(40)
    )
    summary = tuple((f"figure_{k}", 1.0 / (k + 3)) for k in range(6))
    outcomes = (
        CheckOutcome("recompute", "c", Status.FAIL, findings),
        CheckOutcome("stiffness_health_of_members", "a-long-case-name-here", Status.PASS, summary=summary),
        CheckOutcome("combinations", "x" * 40, Status.NOT_RUN, reason="the results give no entry for it " * 3),
    )
    return replace(samples.roof_result(), outcomes=outcomes)


@pytest.mark.parametrize(
    "make", [samples.roof_result, samples.frame_result, samples.tripod_result, _long_result], ids=lambda f: f.__name__
)
def test_fits_in_100_columns(make) -> None:
    assert max(len(line) for line in text.render(make()).splitlines()) <= 100


def test_verdict_comes_first() -> None:
    first = text.render(samples.roof_result()).splitlines()[0]
    assert first.startswith("VERDICT: FAIL")


def test_no_colour_unless_asked() -> None:
    assert "\x1b" not in text.render(samples.roof_result())
    coloured = text.render(samples.roof_result(), colour=True)
    assert "\x1b[" in coloured
    assert ANSI.sub("", coloured).splitlines()[0] == text.render(samples.roof_result()).splitlines()[0]


def test_colour_via_context() -> None:
    assert "\x1b[" in text.render(samples.roof_result(), context={"colour": True})


def test_not_run_reason_shown() -> None:
    out = text.render(samples.roof_result())
    assert "not run" in out
    assert "no reported results for this case" in out


def test_crashed_check_named() -> None:
    out = text.render(samples.frame_result())
    assert "crashed checks: compatibility" in out
    assert "AU901" in out


def test_worst_discrepancy_first_and_row_limit() -> None:
    out = text.render(_long_result(), context={"max_rows": 5})
    assert "5 of 40, worst first" in out
    rows = [line for line in out.splitlines() if line.strip().startswith("RC101")]
    assert len(rows) == 5
    # errors (odd k) before warnings; among errors the largest |difference|/tolerance (k = 39) first
    assert "-4.9383e+6" in rows[0]
    assert "-3.56" in rows[0]


def test_sections_in_order() -> None:
    out = text.render(samples.roof_result())
    heads = ["STABILITY", "CHECKS", "WORST DISCREPANCIES", "DIAGNOSES", "TOLERANCES USED", "PRECISION AND PROOF"]
    positions = [out.index(h) for h in [*heads, "CAUTION"]]
    assert positions == sorted(positions)


def test_stability_in_words() -> None:
    out = text.render(samples.frame_result())
    assert "Unstable" in out
    assert "1 independent mechanism" in out
    assert "Mechanism 1: joints C and D sway sideways together." in out


def test_many_passing_rows_are_merged() -> None:
    outcomes = tuple(CheckOutcome("equilibrium", f"c{k}", Status.PASS) for k in range(80))
    outcomes += (CheckOutcome("equilibrium", "bad", Status.NOT_RUN, reason="no results"),)
    out = text.render(replace(samples.tripod_result(), outcomes=outcomes))
    assert "80 cases" in out
    assert "no results" in out


def test_caution_present_once() -> None:
    flat = " ".join(text.render(samples.tripod_result()).split())
    assert flat.count(" ".join(_shared.CAUTION.split())) == 1
