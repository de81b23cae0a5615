"""The bundled demo (invented data, reference_cases/demo/README.md): the planted mistake is caught and explained.

The consultant's run had counter-brace X2's area one decimal place out (2.14e-4 instead of 2.14e-3 m²);
the audit must fail, point at X2 in every case, and recover an EA ratio of 0.1 from the printed numbers.
"""

from __future__ import annotations

import io
from pathlib import Path

import pytest

from audit import engine, exchange
from audit.cli import main

DEMO = Path(__file__).resolve().parent.parent / "reference_cases" / "demo"


@pytest.fixture(scope="module")
def result():  # type: ignore[no-untyped-def]
    model = exchange.load_model(str(DEMO / "footbridge.json"))
    results = exchange.load_results(str(DEMO / "footbridge.results.json"), model)
    return engine.audit(model, results)


def test_demo_fails(result) -> None:  # type: ignore[no-untyped-def]
    assert result.verdict == "fail"
    assert not result.crashed


@pytest.mark.parametrize("case", ["dead", "crowd", "sun", "ULS-1"])
def test_demo_diagnosis_names_the_member_and_the_ratio(result, case: str) -> None:  # type: ignore[no-untyped-def]
    found = [f for f in result.findings if f.code == "DX104" and f.case == case]
    assert [f.location.member for f in found] == ["X2"]
    ratio = found[0].data_dict()["EA_ratio"]
    assert ratio == pytest.approx(0.1, rel=0.02)  # four printed figures leave about 1 % of play


def test_demo_members_away_from_the_braced_panels_are_not_accused(result) -> None:  # type: ignore[no-untyped-def]
    # the slip only redistributes force inside the two indeterminate middle panels (common practice:
    # a determinate part's forces follow from statics alone)
    accused = {f.location.member for f in result.findings if f.code == "RC102"}
    assert accused <= {"B3", "B4", "T2", "T3", "V2", "V3", "V4", "D2", "D3", "X1", "X2"}


def test_quick_start_command_exits_1_and_writes_the_html(tmp_path: Path) -> None:
    out, err = io.StringIO(), io.StringIO()
    html = tmp_path / "footbridge-audit.html"
    args = ["check", str(DEMO / "footbridge.json"), str(DEMO / "footbridge.results.json"), "--html", str(html)]
    code = main(args, out=out, err=err)
    assert code == 1, err.getvalue()
    assert "VERDICT: FAIL" in out.getvalue()
    assert "X2" in html.read_text(encoding="utf-8")
