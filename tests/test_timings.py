"""``--timings``: stage times go to stderr only; the reports stay byte-identical (determinism, common practice)."""

from __future__ import annotations

import io
import json
from pathlib import Path

from audit import cli, engine, exchange
from audit.reporters import json_report
from audit.timing import Timings

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "reference_cases" / "demo"
MODEL, RESULTS = str(DEMO / "footbridge.json"), str(DEMO / "footbridge.results.json")
STAGES = ("read", "build", "factorise", "stability", "recompute", "refine", "certificate", "checks", "diagnosis")


def _run(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv, out=out, err=err)
    return code, out.getvalue(), err.getvalue()


def test_check_timings_on_stderr_and_reports_unchanged(tmp_path: Path) -> None:
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    code1, out1, err1 = _run(["check", MODEL, RESULTS, "--json", str(a)])
    code2, out2, err2 = _run(["check", MODEL, RESULTS, "--json", str(b), "--timings"])
    assert code1 == code2
    assert out1 == out2
    assert a.read_bytes() == b.read_bytes()
    assert "stage times" not in err1
    for name in (*STAGES, "report", "total"):
        assert f"  {name} " in err2, name
    assert "stage times" not in out2
    assert "timings" not in json.loads(b.read_text(encoding="utf-8"))


def test_solve_timings(tmp_path: Path) -> None:
    code, _out, err = _run(["solve", MODEL, "-o", str(tmp_path / "r.json"), "--timings"])
    assert code == 0
    for name in ("read", "build", "factorise", "recompute", "report"):
        assert f"  {name} " in err
    code, _out, err = _run(["solve", MODEL, "-o", str(tmp_path / "r30.json"), "--digits", "30", "--timings"])
    assert code == 0
    assert "  refine " in err
    assert "  certificate " in err


def test_timings_refused_for_a_batch() -> None:
    code, _out, err = _run(["check", MODEL, str(ROOT / "reference_cases" / "published"), "--timings"])
    assert code == 2
    assert "--timings" in err


def test_engine_fills_the_recorder_and_the_result_does_not_change() -> None:
    model = exchange.load_model(MODEL)
    results = exchange.load_results(RESULTS, model)
    t = Timings()
    with_t, _ = engine.audit_with_context(model, results, timings=t)
    without, _ = engine.audit_with_context(model, results)
    assert json_report.render(with_t, model) == json_report.render(without, model)
    assert set(STAGES) - {"read"} <= set(t.stages)
    assert all(v >= 0.0 for v in t.stages.values())
    assert sum(t.stages.values()) <= t.total()


def test_recorder_adds_repeated_stages() -> None:
    ticks = iter([0.0, 1.0, 3.0, 4.0, 6.0, 10.0])
    t = Timings(clock=lambda: next(ticks))
    with t.stage("x"):
        pass
    with t.stage("x"):
        pass
    assert t.stages == {"x": 4.0}
    assert "total" in t.render()
