"""The HTML page: self-contained, verdict first, every failing member named, sections present, bounded size."""

from __future__ import annotations

import re
from dataclasses import replace
from html.parser import HTMLParser

import numpy as np
import pytest

from audit.findings import CheckOutcome, Finding, Location, Severity, Status
from audit.reporters import _shared, html, samples

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
