"""The Markdown report: tables stay tables whatever the ids contain."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

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
    for part in (
        "### Checks",
        "### Worst discrepancies",
        "### Diagnoses",
        "DX104",
        "Root cause",
        "> This audit checks",
    ):
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


# ---------------------------------------------------------------- condensing
DEMO = Path(__file__).resolve().parent.parent / "reference_cases" / "demo"


@pytest.fixture(scope="module")
def demo_md() -> tuple[str, object]:
    """The Markdown report of the demo footbridge (invented data, see reference_cases/demo/README.md)."""
    from audit import engine, exchange

    model = exchange.load_model(str(DEMO / "footbridge.json"))
    results = exchange.load_results(str(DEMO / "footbridge.results.json"), model)
    result = engine.audit(model, results)
    return markdown.render(result, model), result


def test_demo_sections_in_order(demo_md) -> None:
    out, _ = demo_md
    heads = ["**VERDICT: FAIL", "### Stability", "### Checks", "### Worst discrepancies", "### Diagnoses"]
    heads += ["### Other findings", "### Tolerances used", "### Precision and proof", "> This audit checks"]
    positions = [out.index(h) for h in heads]
    assert positions == sorted(positions)


def test_demo_check_notes_are_digests(demo_md) -> None:
    out, result = demo_md
    rows = [line for line in out.splitlines() if line.startswith("| ") and line.count("|") == 8]
    rows = rows[1:]  # the header
    assert len(rows) == len(result.outcomes)
    for raw in ("residual\\_table", "largest\\_residual", " = ", "{"):
        assert not any(raw in row for row in rows)


def test_demo_infos_one_row_per_code(demo_md) -> None:
    out, result = demo_md
    n = sum(1 for f in result.findings if f.code == "HP107")
    assert sum(line.startswith("| HP107 |") for line in out.splitlines()) == 1
    assert f"| HP107 | {n} |" in out


def test_demo_stability_and_precision_in_words(demo_md) -> None:
    out, _ = demo_md
    # 23 members, 3 reaction components, 12 joints in the plane (Maxwell's count, common practice)
    assert "Maxwell count m + r − d·j = 23 + 3 − 2·12 = 2" in out
    assert "first\\_order\\_test" not in out
    assert "λ\\_lo = " in out
    assert "Not shown: " in out


def test_demo_quantity_named(demo_md) -> None:
    out, _ = demo_md
    assert "| axial force \\[kN\\] |" in out
    assert "| RC102 \\[kN\\] |" not in out


def test_many_passing_rows_are_merged() -> None:
    outcomes = tuple(CheckOutcome("equilibrium", f"c{k}", Status.PASS) for k in range(80))
    outcomes += tuple(
        CheckOutcome("recompute", f"c{k}", Status.NOT_RUN, reason=f"nothing reported for c{k}") for k in range(10)
    )
    out = markdown.render(replace(samples.tripod_result(), outcomes=outcomes))
    assert "| equilibrium | 80 cases |" in out
    assert "nothing reported for c0" in out
    assert "| recompute | 4 more |" in out
    assert "4 not run (see --json)" in out
