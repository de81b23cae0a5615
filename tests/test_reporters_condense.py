"""The condensing helpers of the terminal and Markdown reports: digests, words, groups."""

from __future__ import annotations

import pytest

from audit.findings import CheckOutcome, Finding, Location, Severity, Status
from audit.reporters import _condense

EQUILIBRIUM_REASON = "12 joints checked, 0 residual components beyond tolerance; global balance checked"
RECOMPUTE_REASON = (
    "50 quantities compared with the high precision recomputation: 30 beyond tolerance, 20 within printed rounding"
)
STABILITY_REASON = (
    "stable and statically indeterminate to degree 2: rank 24 = d·j, no mechanism (proven in exact arithmetic; "
    "Maxwell count m + r − d·j = 2)"
)
KIND_COUNTS = tuple(
    (f"{kind}_{what}", n)
    for kind, counts in (("displacement", (24, 19, 5)), ("axial_force", (23, 11, 12)), ("reaction", (3, 0, 3)))
    for what, n in zip(("checked", "failed", "within_rounding"), counts, strict=True)
)


@pytest.mark.parametrize(
    ("reason", "summary", "width", "expected"),
    [
        ("23 members checked, 1 inconsistent", (), 60, "23 members checked, 1 inconsistent"),
        (EQUILIBRIUM_REASON, (), 60, "12 joints checked, 0 residual components beyond tolerance"),
        (RECOMPUTE_REASON, KIND_COUNTS, 60, "50 compared, 30 beyond tolerance, 20 within rounding"),
        (RECOMPUTE_REASON, KIND_COUNTS, 48, "50 compared, 30 beyond tol., 20 in rounding"),
        (STABILITY_REASON, (), 60, "stable and statically indeterminate to degree 2"),
        (
            "",
            (("checked", 24), ("failed", 0), ("within_rounding", 24)),
            60,
            "24 compared, 0 beyond tolerance, 24 within rounding",
        ),
        ("", (("compared", 7),), 60, "7 compared"),
        ("", (("maxwell_count", 0),), 60, ""),
    ],
    ids=[
        "short-reason",
        "first-clause",
        "kind-counts",
        "kind-counts-narrow",
        "before-colon",
        "counts",
        "compared",
        "no-dump",
    ],
)
def test_outcome_digest(reason: str, summary: tuple, width: int, expected: str) -> None:
    o = CheckOutcome("x", "c", Status.PASS, reason=reason, summary=summary)
    got = _condense.outcome_digest(o, width)
    assert got == expected
    assert len(got) <= width


def test_digest_never_exceeds_its_width() -> None:
    o = CheckOutcome("x", None, Status.PASS, reason="word " * 40)
    got = _condense.outcome_digest(o, 30)
    assert len(got) <= 30
    assert got.endswith("…")


def test_comparison_counts_sum_the_kinds() -> None:
    # 24 + 23 + 3 compared, 19 + 11 + 0 failed, 5 + 12 + 3 within rounding
    assert _condense.comparison_counts(KIND_COUNTS) == (50, 30, 20)


@pytest.mark.parametrize(
    ("names", "expected"),
    [(["A", "B"], "A, B"), ([str(k) for k in range(10)], "0, 1, 2, 3, 4, 5, 6, 7 … 2 more")],
    ids=["short", "long"],
)
def test_name_list(names: list[str], expected: str) -> None:
    assert _condense.name_list(names) == expected


def test_infos_grouped_by_code_use_the_rule_summary() -> None:
    infos = [Finding("HP107", Severity.INFO, f"{k} reported axial force(s) proven ...", case=str(k)) for k in range(12)]
    groups = _condense.info_groups(infos)
    assert len(groups) == 1
    code, n, text, cases = groups[0]
    assert (code, n) == ("HP107", 12)
    assert text == _condense.rule_summary("HP107")
    assert len(cases) == 12


def test_a_single_short_info_keeps_its_message() -> None:
    groups = _condense.info_groups([Finding("RC002", Severity.INFO, "compared with the float64 solution")])
    assert groups[0][2] == "compared with the float64 solution"


def test_diagnoses_of_one_place_are_grouped() -> None:
    f = [
        Finding("DX104", Severity.WARNING, "m", case=c, location=Location(member="X2"), data=(("EA_ratio", r),))
        for c, r in (("dead", 0.1), ("crowd", 0.1), ("sun", 0.1))
    ]
    f.append(Finding("DX104", Severity.WARNING, "m", case="dead", location=Location(member="X3")))
    groups = _condense.diagnosis_groups(f)
    assert len(groups) == 2
    assert sorted(len(also) for _, also in groups) == [0, 2]


def test_the_location_is_not_repeated_in_the_message() -> None:
    f = Finding("DX104", Severity.WARNING, "member X2: the reported results fit", location=Location(member="X2"))
    assert _condense.strip_location(f) == "the reported results fit"


def test_precision_case_rows_count_the_reported_numbers() -> None:
    prec = {
        "cases": [
            {
                "case": "dead",
                "status": "proven",
                "digits_proven": 40,
                "reported": {
                    "status": "evaluated",
                    "bound_to_exact": 0.00296,
                    "backward_error": 0.00777,
                    "quantities": {
                        "displacements": {"within_rounding": 5, "beyond_rounding": 19, "undecided": 0},
                        "axial_forces": {"within_rounding": 12, "beyond_rounding": 11, "undecided": 0},
                        "reactions": {"within_rounding": 1, "beyond_rounding": 0, "undecided": 2},
                    },
                },
            }
        ]
    }
    assert _condense.precision_case_rows(prec) == [["dead", "proven", "40", "18 / 30 / 2", "0.00296", "0.00777"]]


def test_precision_without_lambda_says_why() -> None:
    items = _condense.precision_items({"status": "not_established", "lambda_lo": None, "lambda_reason": "no factor"})
    assert "Status: not established." in items
    assert "λ_lo not certified: no factor." in items


def test_tolerances_state_the_rule() -> None:
    items = _condense.tolerance_items({"relative": 1e-3, "floor": 1e-4, "use_quanta": True})
    assert items[0].startswith("allowed = quantum + max(relative·|expected|, floor·scale")
    assert "relative = 0.001" in items[1]
