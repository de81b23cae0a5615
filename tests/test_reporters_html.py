"""The HTML page: self-contained, verdict first, every failing member named, sections present, bounded size."""

from __future__ import annotations

import re
from dataclasses import replace
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

from audit.findings import CheckOutcome, Finding, Location, Severity, Status
from audit.reporters import _condense, _shared, html, samples, text

VOID = {"meta", "br", "hr", "img", "input", "link", "circle", "line", "path", "rect"}
ROOF_CONTEXT = {
    "displacements": {"snow": np.array([[0.0, 0.0], [1e-4, -2e-3], [2e-4, 0.0], [1e-4, -1.8e-3]])},
    "axial_forces": {"snow": np.array([25 / 3, 25 / 3, -125 / 12, -125 / 12, 0.0])},
}


class _Checker(HTMLParser):
    """Collects tags, attributes, visible text; checks that every non-void tag is closed in order."""

    def __init__(self) -> None:
        super().__init__()
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))

    def handle_endtag(self, tag):
        if tag in VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unexpected </{tag}> with open {self.stack[-3:]}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def _parse(page: str) -> _Checker:
    c = _Checker()
    c.feed(page)
    c.close()
    return c


@pytest.fixture(scope="module")
def roof_page() -> str:
    return html.render(samples.roof_result(), samples.roof_model(), ROOF_CONTEXT)


def test_tags_balance(roof_page: str) -> None:
    c = _parse(roof_page)
    assert c.errors == []
    assert c.stack == []


def test_self_contained(roof_page: str) -> None:
    c = _parse(roof_page)
    names = {t for t, _ in c.tags}
    assert not names & {"script", "link", "img", "iframe", "object", "embed"}
    for _tag, attrs in c.tags:
        assert "src" not in attrs
        assert "href" not in attrs
    urls = set(re.findall(r"https?://[^\s\"'<>]+", roof_page))
    assert urls == {"http://www.w3.org/2000/svg"}  # the SVG namespace name, never fetched
    assert "default-src 'none'" in roof_page


def test_verdict_first(roof_page: str) -> None:
    body = roof_page.split("<body>", 1)[1]
    assert body.lstrip().startswith("<div class='verdict fail' id='verdict'>VERDICT: FAIL")


def test_every_failing_member_named(roof_page: str) -> None:
    ids = re.search(r"<p class='ids'>([^<]*)</p>", roof_page)
    assert ids is not None
    assert ids.group(1).split(", ") == _shared.failing_members(samples.roof_result()) == ["1", "3"]
    for mid in ("1", "3"):
        assert f'data-member="{mid}"' in roof_page


@pytest.mark.parametrize(
    "section",
    [
        "Stability",
        "Drawings",
        "Checks",
        "Failing members",
        "Worst discrepancies",
        "Diagnoses",
        "Tolerances used",
        "Precision and proof",
        "Caution",
        "Tool and inputs",
    ],
)
def test_sections_present(roof_page: str, section: str) -> None:
    assert f"<h2>{section}</h2>" in roof_page


def test_sections_in_the_stated_order(roof_page: str) -> None:
    heads = re.findall(r"<h2>([^<]+)</h2>", roof_page)
    assert heads.index("Stability") < heads.index("Checks") < heads.index("Worst discrepancies")
    assert heads.index("Diagnoses") < heads.index("Tolerances used") < heads.index("Caution")


def test_drawings_present(roof_page: str) -> None:
    assert roof_page.count("<svg ") == 3  # structure, forces, deformed shape
    assert "Displacements drawn ×" in roof_page


def test_checksums_and_version(roof_page: str) -> None:
    for _name, sha in samples.roof_result().inputs:
        assert sha in roof_page
    assert "truss-audit 0.1.0" in roof_page


def test_text_is_escaped() -> None:
    f = Finding("RC101", Severity.ERROR, "<script>alert(1)</script>", location=Location(member="<b>"))
    r = replace(
        samples.tripod_result(), title="<i>T</i>", outcomes=(CheckOutcome("recompute", "dead", Status.FAIL, (f,)),)
    )
    page = html.render(r, samples.tripod_model())
    assert "<script>" not in page
    assert "&lt;script&gt;" in page
    assert _parse(page).errors == []


def test_without_model_says_so() -> None:
    page = html.render(samples.roof_result())
    assert "No drawings: the model was not passed" in page
    assert "<svg" not in page


def test_missing_recomputation_is_said() -> None:
    page = html.render(samples.roof_result(), samples.roof_model())
    assert "No drawing of the member forces and deformed shape" in page


def test_deterministic(roof_page: str) -> None:
    assert html.render(samples.roof_result(), samples.roof_model(), ROOF_CONTEXT) == roof_page


def test_large_model_page_is_bounded() -> None:
    """10⁵ members, 400 failing, forces and displacements: measured 2.7 MB; bound 6 MB."""
    m = samples.lattice_model(183, 182)
    rng = np.random.default_rng(3)
    bad = sorted(rng.choice(m.n_members, 400, replace=False).tolist())
    fs = tuple(
        Finding(
            "RC101",
            Severity.ERROR,
            "x",
            case="roof",
            location=Location(member=m.member_ids[i]),
            reported=1.0,
            expected=1.1,
        )
        for i in bad
    )
    r = replace(samples.roof_result(), outcomes=(CheckOutcome("recompute", "roof", Status.FAIL, fs),))
    ctx = {
        "displacements": {"roof": rng.normal(size=(m.n_nodes, 2)) * 1e-3},
        "axial_forces": {"roof": rng.normal(size=m.n_members)},
    }
    page = html.render(r, m, ctx)
    assert len(page.encode()) < 6_000_000
    listed = re.search(r"<p class='ids'>([^<]*)</p>", page)
    assert listed is not None
    assert set(listed.group(1).split(", ")) == {m.member_ids[i] for i in bad}
    assert page.count("<tr><td class='mono'>RC101") == html.MAX_TABLE_ROWS + 50  # check table + worst table


# ---------------------------------------------------------------- condensing
# The page must say what the terminal report says (both read audit.reporters._condense): the stability block in
# sentences, one short note per check, infos grouped by code, diagnoses grouped, quantities named.
ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "reference_cases" / "demo"
STABILITY_DATA = Path(__file__).resolve().parent / "data" / "stability"
RAW_STABILITY_KEYS = (
    "connected_parts",
    "counts",
    "first_order_test",
    "mechanism_count_is_lower_bound",
    "notes",
    "self_stress_detail",
    "threshold",
    "traps",
    "[]",
    ": false",
)


@pytest.fixture(scope="module")
def demo_result():
    """The demo footbridge audited by the engine (invented data, see reference_cases/demo/README.md)."""
    from audit import engine, exchange

    model = exchange.load_model(str(DEMO / "footbridge.json"))
    results = exchange.load_results(str(DEMO / "footbridge.results.json"), model)
    return engine.audit(model, results, inputs=(("footbridge.json", "0" * 64), ("footbridge.results.json", "1" * 64)))


@pytest.fixture(scope="module")
def demo_page(demo_result) -> str:
    from audit import exchange

    return html.render(demo_result, exchange.load_model(str(DEMO / "footbridge.json")))


def _audit_of(name: str):
    from audit import engine, exchange

    return engine.audit(exchange.load_model(str(STABILITY_DATA / name)), None)


def _section_html(page: str, title: str) -> str:
    """The markup between ``<h2>title</h2>`` and the next ``<h2>``."""
    start = page.index(f"<h2>{title}</h2>") + len(f"<h2>{title}</h2>")
    end = page.find("<h2>", start)
    return page[start : end if end >= 0 else len(page)]


def _words(markup: str) -> str:
    """The visible text of some markup, whitespace collapsed (entities decoded by the parser)."""
    return " ".join(" ".join(_parse(markup).text).split())


def _text_section(out: str, title: str) -> str:
    """A section of the terminal report, whitespace collapsed."""
    lines = out.splitlines()
    start = lines.index(title.upper()) + 2
    end = next(
        (i for i in range(start, len(lines)) if lines[i] and lines[i] == lines[i].upper() and lines[i][0] != " "),
        len(lines),
    )
    return " ".join(" ".join(lines[start:end]).split())


def _cells(table: str) -> list[list[str]]:
    """The data rows of one ``<table>``'s markup as lists of visible cell texts."""
    rows = re.findall(r"<tr>(.*?)</tr>", table)
    return [[_words(c) for c in re.findall(r"<td[^>]*>(.*?)</td>", r)] for r in rows if "<td" in r]


def _table(page: str, table_id: str) -> list[list[str]]:
    m = re.search(rf"<table[^>]* id='{table_id}'>(.*?)</table>", page)
    assert m is not None, f"no table {table_id}"
    return _cells(m.group(1))


def test_demo_page_is_well_formed_and_self_contained(demo_page: str) -> None:
    c = _parse(demo_page)
    assert c.errors == []
    assert c.stack == []
    assert not {t for t, _ in c.tags} & {"script", "link", "img", "iframe", "object", "embed"}


def test_demo_stability_has_no_raw_keys(demo_page: str) -> None:
    section = _words(_section_html(demo_page, "Stability"))
    for raw in RAW_STABILITY_KEYS:
        assert raw not in section
    # 23 members, 3 reaction components, 12 joints in the plane: 23 + 3 − 2·12 = 2 (Maxwell's count, common practice)
    assert "Maxwell count m + r − d·j = 23 + 3 − 2·12 = 2" in section
    assert "proven in exact arithmetic" in section
    assert "2 states of self-stress" in section


def test_demo_stability_says_what_the_terminal_report_says(demo_result, demo_page: str) -> None:
    assert _words(_section_html(demo_page, "Stability")) == _text_section(text.render(demo_result), "Stability")


def test_demo_stability_states_listed_by_members(demo_result, demo_page: str) -> None:
    section = _section_html(demo_page, "Stability")
    states = demo_result.stability["self_stress_detail"]
    subs = re.findall(r"<li>(\d+\. [^<]*)</li>", section)
    assert len(subs) == len(states) == 2
    for sub, state in zip(subs, states, strict=True):
        assert f"{len(state['members'])} members: " in sub
        assert str(state["members"][0]) in sub


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
    result = _audit_of(name)
    section = _words(_section_html(html.render(result), "Stability"))
    for part in expected:
        assert part in section
    for raw in RAW_STABILITY_KEYS:
        assert raw not in section
    assert section == _text_section(text.render(result), "Stability")


def test_long_self_stress_states_are_abbreviated() -> None:
    members = [f"M{k}" for k in range(12)]
    stab = {
        "classification": "stable-indeterminate",
        "self_stress_states": 1,
        "mechanisms": 0,
        "self_stress_detail": [{"members": members, "forces": [1.0] * 12, "reactions": []}],
    }
    section = _words(_section_html(html.render(replace(samples.tripod_result(), stability=stab)), "Stability"))
    assert "12 members: M0, M1, M2, M3, M4, M5, M6, M7 … 4 more" in section
    assert "M8" not in section


def test_demo_check_rows_have_one_short_note_each(demo_result, demo_page: str) -> None:
    rows = _table(demo_page, "checks")
    assert len(rows) == len(demo_result.outcomes)
    for row, o in zip(rows, demo_result.outcomes, strict=True):
        check, case, _status, _err, _warn, _info, note = row
        assert (check, case) == (o.check, _shared.case_label(o.case))
        assert len(note) <= html.NOTE_WIDTH
        for raw in ("residual_table", "largest_residual", "=", "[", "{"):
            assert raw not in note


def test_demo_check_counts_match_the_findings(demo_result, demo_page: str) -> None:
    for row, o in zip(_table(demo_page, "checks"), demo_result.outcomes, strict=True):
        counts = [int(c) if c else 0 for c in row[3:6]]
        expected = [sum(f.severity is s for f in o.findings) for s in (Severity.ERROR, Severity.WARNING, Severity.INFO)]
        assert counts == expected


def test_summary_figures_are_not_dumped() -> None:
    summary = (("residual_table", [["U2", "y", 1e-4]] * 12), ("largest_residual", 3.4e-4), ("checked", 24))
    r = replace(samples.tripod_result(), outcomes=(CheckOutcome("equilibrium", "dead", Status.PASS, summary=summary),))
    page = html.render(r)
    assert "residual_table" not in page
    assert "largest_residual" not in page
    assert _table(page, "checks")[0][-1] == "24 compared"


def test_not_run_reason_shown_in_full() -> None:
    reason = "the results give no entry for this combination, so its reported numbers cannot be compared " * 2
    r = replace(samples.tripod_result(), outcomes=(CheckOutcome("combinations", "ULS", Status.NOT_RUN, reason=reason),))
    assert _table(html.render(r), "checks")[0][-1] == " ".join(reason.split())


def test_many_passing_rows_are_merged() -> None:
    """Beyond 60 check × case rows, the clean passes of a check take one row."""
    outcomes = tuple(CheckOutcome("equilibrium", f"c{k}", Status.PASS) for k in range(70))
    rows = _table(html.render(replace(samples.tripod_result(), outcomes=outcomes)), "checks")
    assert rows == [["equilibrium", "70 cases", "", "", "", "", "pass, no findings"]]


def test_list_data_of_a_finding_is_counted_not_dumped() -> None:
    f = Finding("ST101", Severity.ERROR, "the model has 1 mechanism", data=(("mechanisms", 1), ("modes", [1, 2])))
    page = html.render(replace(samples.tripod_result(), outcomes=(CheckOutcome("stability", None, Status.FAIL, (f,)),)))
    assert "modes: 2 entries (see --json)" in page
    assert "[1, 2]" not in page
    assert "mechanisms = 1" in page  # a single value stays, in the folded findings of the check


def test_findings_of_each_check_are_folded(demo_result, demo_page: str) -> None:
    blocks = re.findall(r"<details><summary>(.*?)</summary>", demo_page)
    assert len(blocks) == sum(1 for o in demo_result.outcomes if o.findings)
    assert all("open" not in b for b in re.findall(r"<details[^>]*>", demo_page))


def test_demo_infos_grouped_by_code(demo_result, demo_page: str) -> None:
    rows = _table(demo_page, "infos")
    hp107 = [r for r in rows if r[0] == "HP107"]
    n = sum(1 for f in demo_result.findings if f.code == "HP107")
    assert n > 1
    assert len(hp107) == 1
    assert hp107[0][1] == str(n)
    infos = [f for f in _shared.other_findings(demo_result) if f.severity is Severity.INFO]
    assert sum(int(r[1]) for r in rows) == len(infos)


def test_demo_diagnosis_of_one_member_in_several_cases_is_one_item(demo_page: str) -> None:
    items = re.findall(r"<li>(.*?)</li>", _section_html(demo_page, "Diagnoses"))
    dx104 = [_words(i) for i in items if "DX104" in i]
    assert len(dx104) == 1
    assert dx104[0].startswith("warning DX104 member X2")
    assert "(also " in dx104[0]
    assert "EA = " in dx104[0]


def test_demo_worst_discrepancies_name_the_quantity(demo_result, demo_page: str) -> None:
    rows = _table(demo_page, "discrepancies")
    disc = _shared.discrepancies(demo_result)
    assert len(rows) == min(len(disc), html.MAX_DISCREPANCY_ROWS)
    assert {r[3] for r in rows} >= {"axial force [kN]"}
    assert not any(r[3].startswith("RC") for r in rows)
    section = _words(_section_html(demo_page, "Worst discrepancies"))
    left = len(disc) - len(rows)
    assert left > 0
    n_err = sum(f.severity is Severity.ERROR for f in disc[len(rows) :])
    assert f"Not shown: {n_err} errors (" in section
    assert "see --json" in section


def test_warnings_without_numbers_are_capped_per_code() -> None:
    findings = tuple(
        Finding("RC103", Severity.WARNING, f"member {k} has no reported axial force", location=Location(member=str(k)))
        for k in range(20)
    )
    page = html.render(
        replace(samples.tripod_result(), outcomes=(CheckOutcome("recompute", "dead", Status.PASS, findings),))
    )
    items = re.findall(r"<li>(.*?)</li>", _section_html(page, "Other findings"))
    assert sum("RC103" in i for i in items) == 5  # four listed, then the rest counted
    assert "… and 16 more (RC103 ×16; see --json)" in _words(_section_html(page, "Other findings"))


def test_demo_tolerances_state_the_rule(demo_result, demo_page: str) -> None:
    section = _words(_section_html(demo_page, "Tolerances used"))
    assert "allowed = quantum + max(relative·|expected|, floor·scale of the kind in the case)" in section
    assert section == _text_section(text.render(demo_result), "Tolerances used")


def test_demo_precision_in_words(demo_result, demo_page: str) -> None:
    section = _words(_section_html(demo_page, "Precision and proof"))
    for part in ("digits proven", "λ_lo = ", "certified by", "Condition number of K"):
        assert part in section
    assert "timings" not in section
    cases = [r[0] for r in _table(demo_page, "precision-cases")]
    assert cases == ["dead", "crowd", "sun", "ULS-1"]
    told = _text_section(text.render(demo_result), "Precision and proof")
    for item in _condense.precision_items(demo_result.precision):  # each sentence as in the terminal report
        assert item in section
        assert item in told
