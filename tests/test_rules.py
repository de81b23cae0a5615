"""The finding-code registry: every code is well formed, documented, listed by ``truss-audit explain``,
and raised by at least one data case run through the whole engine.

The data cases are the files under ``tests/cases/``, ``tests/data/stability/``, ``tests/data/rules/`` and
``reference_cases/`` (each file's own source or derivation is named inside it), and the table sources under
``tests/data/sources/`` (each with an ``expect.json`` naming its codes, source and derivation), which raise
the source reader's notes (family SR).  The files under
``tests/data/rules/`` (written by its ``generate.py``) are made for one code or scenario each and declare in
``x-expect`` the codes the engine must raise; ``tests/data/rules/slow/`` holds the ones too slow for the
default run (marked ``slow``).
"""

from __future__ import annotations

import functools
import io
import json
from pathlib import Path

import pytest

from audit import engine, exchange
from audit.cli import main
from audit.errors import InputError
from audit.findings import AuditResult, Severity
from audit.rules import CODE_PATTERN
from audit.sources import load_source

ROOT = Path(__file__).resolve().parent.parent
RULES_DIR = ROOT / "tests" / "data" / "rules"
RULE_CASES = sorted(RULES_DIR.glob("*.json"))
SLOW_RULE_CASES = sorted((RULES_DIR / "slow").glob("*.json"))
CASE_FILES = sorted(
    [
        *(ROOT / "tests" / "cases").glob("*.json"),
        *(ROOT / "tests" / "data" / "stability").glob("*.json"),
        *RULE_CASES,
        *(ROOT / "reference_cases" / "published").glob("*.json"),
    ]
)
SOURCES_DIR = ROOT / "tests" / "data" / "sources"
SOURCE_CASES = sorted(p for p in SOURCES_DIR.iterdir() if p.is_dir())
REGISTRY = engine.registry()

#: codes that no model file can raise, with the test that raises them instead
RAISED_ELSEWHERE = {
    "AU901": "tests/test_engine.py::test_a_crashing_check_is_reported_under_its_own_name",
    "KH101": "tests/test_stiffness_health.py (a deliberately asymmetric matrix; the rebuilt K is symmetric by "
    "construction)",
    "KH102": "tests/test_stiffness_health.py (a matrix that resists a rigid-body motion; the rebuilt K cannot)",
    "KH103": "tests/test_stiffness_health.py (EA/L <= 0 cannot pass the reader's validation)",
    "KH111": "tests/test_engine.py::test_an_unmappable_source_matrix_built_in_code_is_kh111 (the reader rejects "
    "every unmappable dof list and storage as an input error)",
    "NL102": "tests/test_nonlinear.py::test_an_unconverged_solve_is_an_error (an iteration cap forced low; "
    "the method has a termination argument, so no model file reaches it)",
    "SR101": "tests/test_sources.py::test_a_warning_note_is_reported_as_a_warning (raised by the IFC reader "
    "for a model with rigid connections; a table source cannot describe one)",
    "RC002": "tests/test_engine.py::test_a_crashing_precision_stage_falls_back_to_float64 (the high-precision "
    "stage answers every case the float64 solve answers, unless it crashes)",
}

#: codes raised only by a case under ``tests/data/rules/slow/`` (see ``test_slow_rule_case``)
RAISED_BY_SLOW_CASE = {
    "ST120": "st120_floating_triangles",
}


def _codes(path: Path) -> list[str]:
    return list(json.loads(path.read_text())["x-expect"]["codes"])


@functools.cache
def _audit(path: Path) -> AuditResult | None:
    """The engine's result for one case file (None when the reader rejects it); cached, results are immutable."""
    try:
        model = exchange.parse_model(path.read_bytes(), path.name)
    except InputError:
        return None
    return engine.audit(model)


@functools.cache
def _audit_source(path: Path) -> AuditResult:
    """The engine's result for one table source, with the reader's notes."""
    read = load_source(path)
    return engine.audit(read.model, read.results, source_notes=read.notes)


@functools.cache
def _raised() -> frozenset[str]:
    codes: set[str] = set()
    for folder in SOURCE_CASES:
        codes.update(f.code for f in _audit_source(folder).findings)
    for path in CASE_FILES:
        result = _audit(path)
        if result is not None:
            codes.update(f.code for f in result.findings)
    demo = ROOT / "reference_cases" / "demo"
    model = exchange.load_model(str(demo / "footbridge.json"))
    results = exchange.load_results(str(demo / "footbridge.results.json"), model)
    codes.update(f.code for f in engine.audit(model, results).findings)
    return frozenset(codes)


@pytest.mark.parametrize("code", sorted(REGISTRY))
def test_code_is_well_formed_and_documented(code: str) -> None:
    rule = REGISTRY[code]
    assert CODE_PATTERN.match(code)
    assert rule.summary.strip()
    assert len(rule.summary) <= 200
    assert rule.family
    for text in (rule.establishes, rule.example, rule.action):
        assert len(text.split()) >= 2, f"{code}: every code says what it establishes, an example and what to do"


def test_the_guide_explains_only_registered_codes() -> None:
    from audit.rule_guide import GUIDE

    assert set(GUIDE) <= set(REGISTRY), sorted(set(GUIDE) - set(REGISTRY))


@pytest.mark.parametrize("code", sorted(REGISTRY))
def test_code_is_raised_by_a_case(code: str) -> None:
    if code in RAISED_ELSEWHERE:
        pytest.skip(f"{code} cannot come from a valid model file; raised in {RAISED_ELSEWHERE[code]}")
    if code in RAISED_BY_SLOW_CASE:
        name = RAISED_BY_SLOW_CASE[code]
        pytest.skip(f"{code} is raised by tests/data/rules/slow/{name}.json: test_slow_rule_case[{name}] (slow)")
    assert code in _raised(), f"no data case raises {code} ({REGISTRY[code].summary})"


def _check_expectation(path: Path, result: AuditResult | None) -> None:
    """Every code in ``x-expect`` is raised; the warnings and errors raised are exactly those listed."""
    assert result is not None, f"{path.name} does not pass the reader"
    wanted = set(_codes(path))
    raised = {f.code for f in result.findings}
    assert wanted <= raised, f"missing {sorted(wanted - raised)}; raised {sorted(raised)}"
    loud = {f.code for f in result.findings if f.severity >= Severity.WARNING}
    assert loud <= wanted, f"unexpected {sorted(loud - wanted)}"
    assert not result.crashed


@pytest.mark.parametrize("path", RULE_CASES, ids=[p.stem for p in RULE_CASES])
def test_rule_case_raises_what_it_expects(path: Path) -> None:
    _check_expectation(path, _audit(path))


@pytest.mark.parametrize("folder", SOURCE_CASES, ids=[p.name for p in SOURCE_CASES])
def test_source_case_raises_what_it_expects(folder: Path) -> None:
    expect = json.loads((folder / "expect.json").read_text())
    assert expect["x-source"].strip()
    assert expect["x-derivation"].strip()
    result = _audit_source(folder)
    wanted = set(expect["codes"])
    assert wanted <= set(REGISTRY)
    raised = {f.code for f in result.findings}
    assert wanted <= raised, f"missing {sorted(wanted - raised)}; raised {sorted(raised)}"
    loud = {f.code for f in result.findings if f.severity >= Severity.WARNING}
    assert loud <= wanted, f"unexpected {sorted(loud - wanted)}"
    assert not result.crashed


@pytest.mark.slow
@pytest.mark.parametrize("path", SLOW_RULE_CASES, ids=[p.stem for p in SLOW_RULE_CASES])
def test_slow_rule_case(path: Path) -> None:
    """A case too large for the default budget (the Lanczos search for 512 zero modes: 10–30 s here)."""
    _check_expectation(path, _audit(path))


@pytest.mark.parametrize("path", [*RULE_CASES, *SLOW_RULE_CASES], ids=[p.stem for p in [*RULE_CASES, *SLOW_RULE_CASES]])
def test_rule_case_names_its_source(path: Path) -> None:
    doc = json.loads(path.read_text())
    assert doc["x-source"].strip()
    assert doc["x-derivation"].strip()
    assert _codes(path), "a rule case must expect at least one code"
    assert set(_codes(path)) <= set(REGISTRY)


def test_raised_elsewhere_names_existing_tests() -> None:
    """Each code skipped above points at a test file that exists and, where named, a test defined in it."""
    for code, where in RAISED_ELSEWHERE.items():
        target = where.split(" ", 1)[0]
        file, _, name = target.partition("::")
        text = (ROOT / file).read_text()
        assert code in text, (code, file)
        if name:
            assert f"def {name}(" in text, (code, target)


def test_slow_cases_declare_the_codes_they_stand_for() -> None:
    for code, name in RAISED_BY_SLOW_CASE.items():
        path = RULES_DIR / "slow" / f"{name}.json"
        assert path in SLOW_RULE_CASES
        assert code in _codes(path)


def test_explain_command_lists_every_code() -> None:
    out = io.StringIO()
    assert main(["explain"], out=out, err=io.StringIO()) == 0
    listed = {line.split()[0] for line in out.getvalue().splitlines()[2:] if line.strip()}
    assert listed == set(REGISTRY)


def test_cli_solver_names_match_the_solver_stack() -> None:
    from audit import cli, linsolve

    assert set(cli._SOLVERS) == {"auto", *linsolve.BACKENDS}


def test_case_files_are_json_objects() -> None:
    for path in CASE_FILES:
        assert isinstance(json.loads(path.read_text()), dict), path
