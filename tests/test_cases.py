"""Data-driven cases: every ``tests/cases/*.json`` is a model with reported results and an ``x-expect`` key
(see ``tests/cases/generate.py`` for the format and for how each case was made).  One test per case."""

from __future__ import annotations

import functools
import json
from pathlib import Path
from typing import Any

import pytest
from test_checks_common import context

from audit import exchange
from audit.checks import combinations, compatibility, diagnosis, equilibrium, recompute, supports
from audit.findings import Severity

CASES_DIR = Path(__file__).resolve().parent / "cases"
FILES = sorted(CASES_DIR.glob("*.json"))
MODULES = (equilibrium, supports, compatibility, recompute, combinations, diagnosis)
OWN_CODES = {r.code for m in MODULES for r in m.RULES}


@functools.cache
def _run(path: Path) -> tuple[dict[str, Any], list[Any]]:
    """(x-expect, outcomes) of one case file; cached, the outcomes are immutable records."""
    text = path.read_text()
    expect = json.loads(text)["x-expect"]
    model = exchange.parse_model(text)
    ctx = context(model, model.results)
    return expect, [o for m in MODULES for o in m.run(ctx)]


@pytest.mark.parametrize("path", FILES, ids=[p.stem for p in FILES])
def test_case(path: Path) -> None:
    expect, outcomes = _run(path)
    findings = [f for o in outcomes for f in o.findings]
    raised = {f.code for f in findings}
    wanted = set(expect["codes"])
    assert wanted <= raised, f"missing {sorted(wanted - raised)}; raised {sorted(raised)}"
    loud = {f.code for f in findings if f.severity >= Severity.WARNING}
    assert loud <= wanted, f"unexpected {sorted(loud - wanted)}"
    verdict = "fail" if any(f.severity >= Severity.ERROR for f in findings) else "pass"
    assert verdict == expect["verdict"]
    for code, where in expect.get("where", {}).items():
        at = [f for f in findings if f.code == code]
        key, value = next(iter(where.items()))
        assert any(getattr(f.location, key) == value for f in at), [(f.code, f.location.label()) for f in at]
    first = outcomes[0].case
    for check, status in expect.get("statuses", {}).items():
        got = [o.status.value for o in outcomes if o.check == check and o.case == first]
        assert got == [status], (check, got)


def test_the_cases_cover_every_code() -> None:
    """Each code the checks on reported results can raise is demanded by at least one case."""
    demanded = {c for p in FILES for c in json.loads(p.read_text())["x-expect"]["codes"]}
    assert demanded >= OWN_CODES, sorted(OWN_CODES - demanded)


def test_outcomes_follow_the_protocol() -> None:
    """FAIL exactly when an error is raised; NOT_RUN always with a reason; one outcome per (check, case)."""
    for path in FILES:
        _expect, outcomes = _run(path)
        keys = [(o.check, o.case) for o in outcomes]
        assert len(keys) == len(set(keys)), path.stem
        for o in outcomes:
            has_error = any(f.severity >= Severity.ERROR for f in o.findings)
            assert (o.status.value == "fail") == has_error, (path.stem, o.check, o.case)
            if o.status.value == "not_run":
                assert o.reason, (path.stem, o.check, o.case)
            assert all(f.code in OWN_CODES for f in o.findings)


@pytest.mark.parametrize("path", FILES, ids=[p.stem for p in FILES])
def test_case_end_to_end(path: Path) -> None:
    """The same case through ``audit.engine.audit`` (real stability and high-precision modules): the checks
    on reported results raise the same warnings and errors (RC002 aside: the high-precision answer is used)."""
    from audit import engine

    text = path.read_text()
    expect = json.loads(text)["x-expect"]
    result = engine.audit(exchange.parse_model(text))
    assert not result.crashed
    mine = [f for f in result.findings if f.code in OWN_CODES]
    loud = {f.code for f in mine if f.severity >= Severity.WARNING}
    wanted = set(expect["codes"]) - {"RC002"}
    assert loud <= set(expect["codes"]), sorted(loud - set(expect["codes"]))
    assert wanted <= {f.code for f in mine}, sorted(wanted - {f.code for f in mine})
