"""Root cause first: every report opens with the explanation in plain words right under the verdict, the
differences it explains are counted under it, the drawing marks the cause's place, and a clean hand-off gets
no explanation at all.

The hand-offs are data cases of ``tests/cases/`` (each names its published source and the mistake planted:
``tests/cases/generate.py``); the engine runs on them whole.
"""

from __future__ import annotations

import functools
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from audit import engine, exchange
from audit.findings import AuditResult
from audit.model import Model
from audit.reporters import html, junit, markdown, text

CASES = Path(__file__).resolve().parent / "cases"
LEAD = "agree with the model except for"


@functools.cache
def _audit(name: str) -> tuple[AuditResult, Model]:
    model = exchange.parse_model((CASES / f"{name}.json").read_bytes(), f"{name}.json")
    return engine.audit(model), model


@pytest.mark.parametrize(
    ("name", "cause"),
    [
        ("dx_member_left_out", "member AD is left out"),
        ("dx_two_causes", "2 causes"),
        ("dx_inclined_support_along_an_axis", "entered along y"),
        ("eq_joint_residual", "one number wrong"),
    ],
)
def test_the_terminal_report_opens_with_the_cause(name: str, cause: str) -> None:
    result, model = _audit(name)
    lines = text.render(result, model).splitlines()
    head = " ".join(lines[:15])
    assert lines[0].startswith("VERDICT: FAIL")
    assert LEAD in head
    assert cause in " ".join(head.split())


def test_differences_are_grouped_under_their_cause() -> None:
    result, model = _audit("dx_member_left_out")
    lines = text.render(result, model).splitlines()[:15]
    assert any("all explained by member AD (DX111)" in line for line in lines)


def test_markdown_html_and_junit_open_with_the_cause() -> None:
    result, model = _audit("dx_member_left_out")
    md = markdown.render(result, model).splitlines()
    assert md[2].startswith("**VERDICT: FAIL")
    assert md[4].startswith("> **Root cause.**")
    assert LEAD in md[4]
    page = html.render(result, model)
    assert page.index("id='verdict'") < page.index("id='root-cause'") < page.index("<h1>")
    assert 'class="cause"' in page  # the drawing marks the cause's member
    assert 'data-member="AD"' in page
    props = ET.fromstring(junit.render(result, model)).find("testsuite/properties")
    assert props is not None
    names = [p.get("name") for p in props]
    assert names[:2] == ["verdict", "root-cause"]
    assert LEAD in (props[1].get("value") or "")


@pytest.mark.parametrize("name", ["clean_triangle_4sf", "clean_tripod_3sf", "clean_inclined_roller_4sf"])
def test_a_clean_hand_off_gets_no_explanation(name: str) -> None:
    result, model = _audit(name)
    for out in (text.render(result, model), markdown.render(result, model), junit.render(result, model)):
        for word in (LEAD, "Root cause", "root-cause"):
            assert word not in out
    assert "id='root-cause'" not in html.render(result, model)
