"""The terminal report: layout, width, colour only when asked, honest about what did not run."""

from __future__ import annotations

import re
from dataclasses import replace
from pathlib import Path

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


# ---------------------------------------------------------------- condensing
ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "reference_cases" / "demo"
STABILITY_DATA = Path(__file__).resolve().parent / "data" / "stability"


@pytest.fixture(scope="module")
def demo_result():
    """The demo footbridge audited by the engine (invented data, see reference_cases/demo/README.md)."""
    from audit import engine, exchange

    model = exchange.load_model(str(DEMO / "footbridge.json"))
    results = exchange.load_results(str(DEMO / "footbridge.results.json"), model)
    return engine.audit(model, results, inputs=(("footbridge.json", "0" * 64), ("footbridge.results.json", "1" * 64)))


def _audit_of(name: str):
    from audit import engine, exchange

    return engine.audit(exchange.load_model(str(STABILITY_DATA / name)), None)


def _section(out: str, title: str) -> list[str]:
    lines = out.splitlines()
    start = lines.index(title.upper()) + 2
    end = next(
        (i for i in range(start, len(lines)) if lines[i] and lines[i] == lines[i].upper() and lines[i][0] != " "),
        len(lines),
    )
    return [line for line in lines[start:end] if line]


def test_demo_report_fits_two_screens(demo_result) -> None:
    out = text.render(demo_result)
    lines = out.splitlines()
    assert len(lines) <= 150
    assert max(len(line) for line in lines) <= 100


def test_demo_sections_in_the_order_of_reading(demo_result) -> None:
    out = text.render(demo_result)
    assert out.startswith("VERDICT: FAIL")
    heads = ["Inputs and their sha256:", "STABILITY", "CHECKS", "WORST DISCREPANCIES", "DIAGNOSES"]
    heads += ["OTHER FINDINGS", "TOLERANCES USED", "PRECISION AND PROOF", "CAUTION"]
    positions = [out.index(h) for h in heads]
    assert positions == sorted(positions)


def test_demo_check_rows_are_one_line_each(demo_result) -> None:
    rows = _section(text.render(demo_result), "Checks")[3:]
    assert len(rows) == len(demo_result.outcomes)
    joined = "\n".join(rows)
    for raw in ("residual_table", "largest_residual", "=", "[", "{"):
        assert raw not in joined


def test_demo_stability_has_no_raw_keys(demo_result) -> None:
    section = "\n".join(_section(text.render(demo_result), "Stability"))
    for raw in ("first_order_test", "mechanism_count_is_lower_bound", "notes", "[]", "self_stress_detail", ": false"):
        assert raw not in section
    # 23 members, 3 reaction components, 12 joints in the plane: 23 + 3 − 2·12 = 2 (Maxwell's count, common practice)
    assert "Maxwell count m + r − d·j = 23 + 3 − 2·12 = 2" in section
    assert "proven in exact arithmetic" in section
    assert "2 states of self-stress" in section


def test_demo_quantities_are_named(demo_result) -> None:
    section = "\n".join(_section(text.render(demo_result), "Worst discrepancies"))
    assert "axial force [kN]" in section
    assert "RC102 [kN]" not in section


@pytest.mark.parametrize("code", ["RC101", "RC102", "CP101"], ids=["displacement", "axial-force", "compatibility"])
def test_demo_findings_carry_their_quantity(demo_result, code: str) -> None:
    found = [f for f in demo_result.findings if f.code == code]
    assert found
    for f in found:
        q = f.data_dict().get("quantity")
        assert q
        if code == "RC101":
            assert q == f"displacement {f.location.axis}"


def test_demo_infos_grouped_by_code(demo_result) -> None:
    section = _section(text.render(demo_result), "Other findings")
    hp107 = [line for line in section if "HP107" in line]
    n = sum(1 for f in demo_result.findings if f.code == "HP107")
    assert n > 1
    assert len(hp107) == 1
    assert f"HP107 ×{n}" in hp107[0]


def test_demo_diagnosis_of_one_member_in_several_cases_is_one_item(demo_result) -> None:
    section = _section(text.render(demo_result), "Diagnoses")
    dx104 = [line for line in section if line.lstrip().startswith("- warning DX104")]
    assert len(dx104) == 1
    assert "(also " in dx104[0]
    assert "EA = " in " ".join(section)


def test_demo_precision_in_words(demo_result) -> None:
    lines = _section(text.render(demo_result), "Precision and proof")
    section = " ".join(" ".join(lines).split())
    assert "digits proven" in section
    assert "λ_lo = " in section
    assert "certified by" in section
    assert "Condition number of K" in section
    for case in ("dead", "crowd", "sun", "ULS-1"):
        assert any(line.strip().startswith(case + " ") for line in lines)
    assert "timings" not in section


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        # Pellegrino & Calladine 1986, Int. J. Solids Structures 22(4): two collinear bars between pins,
        # one infinitesimal mechanism and one state of self-stress; 2 + 4 − 2·3 = 0
        (
            "collinear_two_bar.json",
            ["Unstable: 1 independent mechanism", "= 2 + 4 − 2·3 = 0", "Mechanism 1 (internal)"],
        ),
        # a square of four bars on a pin and a roller with no diagonal: one finite shear mechanism
        # (common practice); 4 + 3 − 2·4 = −1
        ("square_missing_diagonal.json", ["Mechanism 1 (internal): panel", "[finite]", "no state of self-stress"]),
        # no supports in the plane: three rigid-body motions (common practice)
        ("no_supports.json", ["3 rigid-body motions", "Mechanism 3 (rigid-body)", "Trap: the model has no supports"]),
    ],
    ids=["collinear", "missing-diagonal", "no-supports"],
)
def test_stability_in_words_from_the_analysis(name: str, expected: list[str]) -> None:
    section = " ".join(" ".join(_section(text.render(_audit_of(name)), "Stability")).split())
    for part in expected:
        assert part in section


def test_a_trap_told_by_its_mechanism_is_not_repeated() -> None:
    section = " ".join(_section(text.render(_audit_of("square_missing_diagonal.json")), "Stability"))
    assert section.count("has no diagonal") == 1


def test_long_self_stress_states_are_abbreviated() -> None:
    members = [f"M{k}" for k in range(12)]
    stab = {
        "classification": "stable-indeterminate",
        "self_stress_states": 1,
        "mechanisms": 0,
        "self_stress_detail": [{"members": members, "forces": [1.0] * 12, "reactions": []}],
    }
    out = text.render(replace(samples.tripod_result(), stability=stab))
    assert "12 members: M0, M1, M2, M3, M4, M5, M6, M7 … 4 more" in out
    assert "M8" not in out


def test_warnings_without_numbers_are_capped_per_code() -> None:
    findings = tuple(
        Finding("RC103", Severity.WARNING, f"member {k} has no reported axial force", location=Location(member=str(k)))
        for k in range(20)
    )
    out = text.render(
        replace(samples.tripod_result(), outcomes=(CheckOutcome("recompute", "dead", Status.PASS, findings),))
    )
    section = _section(out, "Other findings")
    assert sum("RC103" in line for line in section) == 5  # four listed, then the rest counted
    assert "… and 16 more (RC103 ×16; see --json)" in " ".join(section)


def test_no_raw_data_after_a_finding() -> None:
    f = Finding("ST101", Severity.ERROR, "the model has 1 mechanism", data=(("mechanisms", 1), ("modes", [1, 2])))
    out = text.render(replace(samples.tripod_result(), outcomes=(CheckOutcome("stability", None, Status.FAIL, (f,)),)))
    assert "mechanisms = 1" not in out
    assert "modes" not in out


def test_quantity_falls_back_to_the_family() -> None:
    f = Finding("RC102", Severity.ERROR, "x", location=Location(member="3"), reported=1.0, expected=2.0, units="kN")
    assert _shared.quantity_of(f) == "recomputation [kN]"


def test_discrepancies_left_out_are_counted() -> None:
    out = text.render(_long_result(), context={"max_rows": 5})
    assert "Not shown: 15 errors (RC101 ×15); 20 warnings (RC101 ×20); see --json." in " ".join(out.split())
