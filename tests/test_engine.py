"""The engine (``audit.engine``): a crashing check is reported under its own name and fails the audit, the
only/skip step never drops an engine finding, and a crashing high-precision stage leaves the float64
comparison in place and says so.

What is expected here is the engine's own contract (``FORMAT.md``: exit code 3 when a check crashed; the
team brief: a check that did not run is "not_run", never "pass"), and, for the source matrices, common
practice: a matrix whose rows cannot be placed on the model's degrees of freedom cannot be compared.
"""

from __future__ import annotations

import io
import json
from dataclasses import replace
from pathlib import Path
from types import ModuleType
from typing import Any

import numpy as np
import pytest

from audit import engine, exchange, precision
from audit.checks import stability_check, stiffness_health
from audit.cli import main
from audit.context import Context
from audit.errors import InputError
from audit.findings import CheckOutcome, Finding, Severity, Status
from audit.model import Model

ROOT = Path(__file__).resolve().parent.parent
#: a clean case (every reported value right to its printed digits): the audit passes unless something breaks
CLEAN = ROOT / "tests" / "cases" / "clean_triangle_4sf.json"
#: the 3-4-5 triangle with the source's own matrix, exactly the rebuilt one (tests/data/rules/generate.py)
WITH_MATRIX = ROOT / "tests" / "data" / "rules" / "kh115_source_matrix_agrees.json"


def _model(path: Path) -> Model:
    return exchange.parse_model(path.read_bytes(), path.name)


def _boom(_ctx: Context) -> list[CheckOutcome]:
    raise RuntimeError("deliberate fault for the test")


def _module(check_id: str, run: Any) -> ModuleType:
    m = ModuleType(f"fake_{check_id}")
    m.CHECK_ID = check_id  # type: ignore[attr-defined]
    m.RULES = ()  # type: ignore[attr-defined]
    m.run = run  # type: ignore[attr-defined]
    return m


# ------------------------------------------------------------------ a crashing check
def test_the_clean_case_passes_without_a_crash() -> None:
    """The control for the tests below: the same model passes when nothing crashes."""
    result = engine.audit(_model(CLEAN))
    assert result.verdict == "pass"
    assert result.crashed == ()


def test_a_crashing_check_is_reported_under_its_own_name(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(stiffness_health, "run", _boom)
    result = engine.audit(_model(CLEAN))
    (outcome,) = [o for o in result.outcomes if o.check == "stiffness"]
    assert outcome.status is Status.NOT_RUN
    assert "RuntimeError" in outcome.reason
    (finding,) = outcome.findings
    assert finding.code == "AU901"
    assert finding.severity is Severity.ERROR
    assert "'stiffness'" in finding.message
    assert "deliberate fault" in finding.message
    assert result.crashed == ("stiffness",)
    assert result.verdict == "fail"
    # the other checks still ran
    assert {o.check for o in result.outcomes} >= {"stability", "equilibrium", "recompute"}
    assert all(o.status is not Status.NOT_RUN for o in result.outcomes if o.check == "stability")


def test_cli_exits_3_when_a_check_crashes(monkeypatch: pytest.MonkeyPatch) -> None:
    out, err = io.StringIO(), io.StringIO()
    assert main(["check", str(CLEAN), "--quiet"], out=out, err=err) == 0
    monkeypatch.setattr(stiffness_health, "run", _boom)
    out = io.StringIO()
    assert main(["check", str(CLEAN), "--quiet"], out=out, err=err) == 3
    assert "fail" in out.getvalue()


def test_run_checks_wraps_each_module_and_runs_the_rest() -> None:
    ctx = engine.build_context(_model(CLEAN))
    fine = _module("fine", lambda c: [CheckOutcome(check="fine", case=None, status=Status.PASS, reason="ok")])
    outcomes, crashed = engine.run_checks(ctx, modules=(fine, _module("broken", _boom), stability_check))
    assert crashed == ("broken",)
    assert [o.check for o in outcomes] == ["fine", "broken", "stability"]
    broken = outcomes[1]
    assert broken.status is Status.NOT_RUN
    assert broken.reason
    assert [f.code for f in broken.findings] == ["AU901"]
    assert outcomes[0].status is Status.PASS
    assert outcomes[2].status is Status.PASS


# ------------------------------------------------------------------ only / skip
def _outcomes() -> tuple[CheckOutcome, ...]:
    def f(code: str, sev: Severity) -> Finding:
        return Finding(code=code, severity=sev, message=code)

    return (
        CheckOutcome(
            check="stability",
            case=None,
            status=Status.PASS,
            findings=(f("ST001", Severity.INFO), f("ST002", Severity.INFO)),
        ),
        CheckOutcome(check="stiffness", case=None, status=Status.PASS, findings=(f("KH107", Severity.INFO),)),
        CheckOutcome(
            check="broken",
            case=None,
            status=Status.NOT_RUN,
            reason="crashed",
            findings=(f("AU901", Severity.ERROR),),
        ),
        CheckOutcome(check="solve", case=None, status=Status.FAIL, findings=(f("AU902", Severity.ERROR),)),
    )


@pytest.mark.parametrize(
    ("only", "skip", "kept"),
    [
        ((), (), {"ST001", "ST002", "KH107", "AU901", "AU902"}),
        (("KH",), (), {"KH107", "AU901", "AU902"}),
        (("ST002",), (), {"ST002", "AU901", "AU902"}),
        ((), ("ST",), {"KH107", "AU901", "AU902"}),
        ((), ("AU",), {"ST001", "ST002", "KH107", "AU901", "AU902"}),
        ((), ("AU901", "AU902"), {"ST001", "ST002", "KH107", "AU901", "AU902"}),
        (("ST",), ("ST",), {"AU901", "AU902"}),
        (("XX",), (), {"AU901", "AU902"}),
    ],
    ids=["nothing", "only-KH", "only-one-code", "skip-ST", "skip-AU", "skip-AU-codes", "both", "no-match"],
)
def test_filter_outcomes_only_and_skip_never_drop_engine_findings(
    only: tuple[str, ...], skip: tuple[str, ...], kept: set[str]
) -> None:
    before = _outcomes()
    after = engine.filter_outcomes(before, only, skip)
    assert {f.code for o in after for f in o.findings} == kept
    # outcomes themselves (their checks and statuses) are never dropped, only findings
    assert [(o.check, o.status) for o in after] == [(o.check, o.status) for o in before]


def test_skipping_engine_codes_does_not_hide_a_crash(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(stiffness_health, "run", _boom)
    result = engine.audit(_model(CLEAN), skip=("AU",), only=("EQ",))
    assert "AU901" in {f.code for f in result.findings}
    assert result.verdict == "fail"


# ------------------------------------------------------------------ the high-precision stage
def test_a_crashing_precision_stage_falls_back_to_float64(monkeypatch: pytest.MonkeyPatch) -> None:
    """With the high-precision stage crashed, the recompute check compares against float64 and says so (RC002),
    the crash is an AU901 under "precision-stage", and the audit fails."""

    def crash(*_args: Any, **_kwargs: Any) -> Any:
        raise ZeroDivisionError("deliberate fault in the precision stage")

    monkeypatch.setattr(precision, "analyse", crash)
    model = _model(CLEAN)
    result = engine.audit(model)
    assert "precision-stage" in result.crashed
    (stage,) = [o for o in result.outcomes if o.check == "precision-stage"]
    assert stage.status is Status.NOT_RUN
    assert [f.code for f in stage.findings] == ["AU901"]
    cases = set(model.all_case_ids())
    rc002 = {f.case for f in result.findings if f.code == "RC002"}
    assert rc002 == cases
    recompute = [o for o in result.outcomes if o.check == "recompute"]
    assert recompute
    assert all(dict(o.summary).get("reference") == "float64" for o in recompute)
    assert all(o.status is Status.NOT_RUN for o in result.outcomes if o.check == "precision")
    assert result.precision["status"] in ("crashed", "not_run")
    assert result.precision["status"] != "proven"
    assert result.verdict == "fail"


def test_the_high_precision_answer_is_used_when_the_stage_runs() -> None:
    """The control: the same model, stage running, is compared with the high-precision answer, no RC002."""
    result = engine.audit(_model(CLEAN))
    assert "RC002" not in {f.code for f in result.findings}
    recompute = [o for o in result.outcomes if o.check == "recompute"]
    assert recompute
    assert all(dict(o.summary).get("reference") == "high precision" for o in recompute)


# ------------------------------------------------------------------ a source matrix the reader would refuse
def _doc_variant(kind: str) -> dict[str, Any]:
    doc = json.loads(WITH_MATRIX.read_text())
    st = doc["stiffness"]
    if kind == "unknown-node":
        st["dofs"][5] = ["Z", "y"]
    elif kind == "dof-twice":
        st["dofs"][5] = ["C", "x"]
    else:  # an entry below the diagonal in upper storage
        st["entries"].append([1, 0, 57600])
    return doc


def _source_variant(model: Model, kind: str) -> Model:
    src = model.stiffness
    assert src is not None
    if kind == "unknown-node":
        node = src.dof_node.copy()
        node[5] = model.n_nodes  # no such node
        src = replace(src, dof_node=node)
    elif kind == "dof-twice":
        axis = src.dof_axis.copy()
        axis[5] = 0  # C x again
        src = replace(src, dof_axis=axis)
    else:
        src = replace(
            src,
            rows=np.append(src.rows, 1),
            cols=np.append(src.cols, 0),
            values=np.append(src.values, 57600.0),
        )
    return replace(model, stiffness=src)


@pytest.mark.parametrize("kind", ["unknown-node", "dof-twice", "lower-entry-in-upper-storage"])
def test_an_unmappable_source_matrix_built_in_code_is_kh111(kind: str) -> None:
    """The reader refuses each of these as an input error, so no file can carry one; a model built in code
    (the API) can, and the stiffness check then says the matrix cannot be mapped (KH111) and fails."""
    with pytest.raises(InputError):
        exchange.parse_model(json.dumps(_doc_variant(kind)))
    result = engine.audit(_source_variant(_model(WITH_MATRIX), kind))
    (outcome,) = [o for o in result.outcomes if o.check == "stiffness"]
    assert "KH111" in {f.code for f in outcome.findings}
    assert "KH115" not in {f.code for f in outcome.findings}
    assert outcome.status is Status.FAIL
    assert result.verdict == "fail"
