"""The Markdown report: tables stay tables whatever the ids contain."""

from __future__ import annotations

from dataclasses import replace

from audit.findings import CheckOutcome, Finding, Location, Severity, Status
from audit.reporters import markdown, samples


def test_escape_makes_text_literal() -> None:
    assert markdown.esc("a|b *c* `d` <e>\nf") == r"a\|b \*c\* \`d\` \<e\> f"


def test_pipes_in_ids_keep_the_table_shape() -> None:
    f = Finding("RC101", Severity.ERROR, "x", case="c|1", location=Location(member="m|2"), reported=1.0, expected=2.0)
    r = replace(samples.tripod_result(), outcomes=(CheckOutcome("recompute", "c|1", Status.FAIL, (f,)),))
    out = markdown.render(r)
    table = [line for line in out.splitlines() if line.startswith("| RC101")]
    assert len(table) == 1
    assert table[0].replace("\\|", "").count("|") == 10  # nine cells


def test_contents() -> None:
    out = markdown.render(samples.roof_result())
    assert out.splitlines()[2].startswith("**VERDICT: FAIL")
    for part in ("### Checks", "### Worst discrepancies", "### Diagnoses", "DX201", "> This audit checks"):
        assert part in out


def test_row_limit() -> None:
    findings = tuple(
        Finding("RC101", Severity.ERROR, "x", location=Location(member=str(k)), reported=k, expected=0.0)
        for k in range(30)
    )
    r = replace(samples.tripod_result(), outcomes=(CheckOutcome("recompute", "dead", Status.FAIL, findings),))
    out = markdown.render(r, context={"max_rows": 7})
    assert "7 of 30" in out
    assert sum(1 for line in out.splitlines() if line.startswith("| RC101")) == 7
