"""Every published reference case and the demo, through every table form, gives its JSON's model and audit.

The truth is each case's own JSON file (``reference_cases/published/SOURCES.md`` names the published
source of every one; the demo is the invented scenario of the README): the table forms are written
from it (``tests/table_forms.py``) and must read back to the same model (ids, coordinates, members,
supports, loads, results) and audit to the same findings.  CSV forms keep every decimal text, so their
text report is the JSON's line for line (but the inputs' digests); a workbook stores numbers, read at
their stored value (the rounding line of the report may then differ; every finding is the same).
Row order and column order do not matter (the ``trade`` form reverses both).
"""

from __future__ import annotations

import functools
import io
from pathlib import Path

import numpy as np
import pytest

from audit import engine, exchange
from audit.cli import main
from audit.findings import AuditResult
from audit.model import Model
from audit.reporters import text
from audit.sources import load_source
from tests.table_forms import FORMS, write_form

ROOT = Path(__file__).resolve().parent.parent
PUBLISHED = sorted((ROOT / "reference_cases" / "published").glob("*.json"))
DEMO = ROOT / "reference_cases" / "demo"
CASES = [(p.stem, p, None) for p in PUBLISHED] + [("demo", DEMO / "footbridge.json", DEMO / "footbridge.results.json")]


@functools.cache
def _json_audit(name: str) -> tuple[Model, AuditResult]:
    _, model_path, results_path = next(c for c in CASES if c[0] == name)
    model = exchange.load_model(model_path)
    results = exchange.load_results(results_path, model) if results_path else None
    return model, engine.audit(model, results)


def _canonical(model: Model) -> dict[str, object]:
    """The model independent of row order: everything keyed by id (floats compared exactly)."""
    nodes = {nid: tuple(model.coords[i].tolist()) for i, nid in enumerate(model.node_ids)}
    members = {
        mid: (
            model.node_ids[model.conn[j, 0]],
            model.node_ids[model.conn[j, 1]],
            float(model.E[j]),
            float(model.A[j]),
            float(model.alpha[j]),
        )
        for j, mid in enumerate(model.member_ids)
    }
    restraints = sorted(
        (model.node_ids[n], tuple(np.round(d, 15).tolist()))
        for n, d in zip(model.restraint_node.tolist(), model.restraint_dir, strict=True)
    )
    springs = sorted(
        (model.node_ids[n], tuple(d.tolist()), float(k))
        for n, d, k in zip(model.spring_node.tolist(), model.spring_dir, model.spring_k.tolist(), strict=True)
    )
    cases = {}
    for lc in model.load_cases:
        cases[lc.id] = (
            {model.node_ids[i]: tuple(lc.loads[i].tolist()) for i in np.flatnonzero(np.any(lc.loads, axis=1))},
            {model.member_ids[j]: float(lc.temperature[j]) for j in np.flatnonzero(lc.temperature)},
            {model.member_ids[j]: float(lc.length_error[j]) for j in np.flatnonzero(lc.length_error)},
            sorted(float(v) for v in lc.settlement.tolist() if v),
        )
    combos = {c.id: sorted((model.load_cases[k].id, f) for k, f, _t in c.factors) for c in model.combinations}
    results = None
    if model.results is not None:
        results = {}
        for c in model.results.cases:
            disp = sorted((model.node_ids[i], tuple(c.displacements[i].tolist())) for i in range(model.n_nodes))
            forces = sorted((model.member_ids[j], float(c.axial_forces[j])) for j in range(model.n_members))
            reac = sorted((model.node_ids[i], tuple(c.reactions[i].tolist())) for i in range(model.n_nodes))
            results[c.case_id] = (repr(disp), repr(forces), repr(reac))
    return {
        "dim": model.dim,
        "units": model.units,
        "nodes": nodes,
        "members": members,
        "restraints": restraints,
        "springs": springs,
        "cases": cases,
        "combinations": combos,
        "results": results,
    }


def _untitled(model: Model) -> Model:
    """The model without what the tables contract has no column for: its description and case titles."""
    from dataclasses import replace

    return replace(model, description="", load_cases=tuple(replace(lc, title="") for lc in model.load_cases))


def _findings(result: AuditResult) -> list[tuple[object, ...]]:
    return sorted(
        (f.code, f.severity, f.case or "", f.location.node or "", f.location.member or "", f.location.axis or "")
        for f in result.findings
        if not f.code.startswith("SR")
    )


def _report_body(report: str) -> str:
    """The text report without the inputs block (file names and digests differ by form)."""
    lines = report.splitlines()
    out, skipping = [], False
    for line in lines:
        if line.startswith("Inputs and their sha256"):
            skipping = True
            continue
        if skipping and line.startswith("  "):
            continue
        skipping = False
        out.append(line)
    return "\n".join(out)


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize(("name", "model_path", "results_path"), CASES, ids=[c[0] for c in CASES])
def test_table_form_gives_the_json_model_and_audit(
    name: str, model_path: Path, results_path: Path | None, form: str, tmp_path: Path
) -> None:
    source, mapping = write_form(form, model_path, results_path, tmp_path / name)
    read = load_source(source, map_path=mapping)
    json_model, json_result = _json_audit(name)
    expected = _json_with_results(name) if results_path else json_model
    assert _canonical(read.model) == _canonical(expected)
    result = engine.audit(read.model, read.results, source_notes=read.notes)
    assert result.verdict == json_result.verdict
    if form == "trade":  # rows reversed: a tie between equally worst members may name the other one
        assert sorted(f[:3] for f in _findings(result)) == sorted(f[:3] for f in _findings(json_result))
    else:
        assert _findings(result) == _findings(json_result)
    assert not [n for n in read.notes if n.code != "SR002"], read.notes  # nothing left unread
    if form in ("csv", "mapped") and name != "demo":  # same node order and every decimal text as written
        assert exchange.dump_model(read.model) == exchange.dump_model(_untitled(json_model))
    if form in ("csv", "mapped"):
        ours = _report_body(text.render(result, read.model, {}))
        theirs = _report_body(text.render(json_result, json_model, {}))
        assert ours == theirs


@functools.cache
def _json_with_results(name: str) -> Model:
    """The demo's model with its separate results file attached (the tables carry both)."""
    from dataclasses import replace

    _, model_path, results_path = next(c for c in CASES if c[0] == name)
    model = exchange.load_model(model_path)
    assert results_path is not None
    return replace(model, results=exchange.load_results(results_path, model))


def test_the_cli_audits_a_table_folder_as_its_json(tmp_path: Path) -> None:
    """``check FOLDER`` is one audit (not a batch); its verdict and exit code are the JSON's."""
    name, model_path, _ = CASES[0]
    source, _ = write_form("csv", model_path, None, tmp_path / name)
    out_t, out_j = io.StringIO(), io.StringIO()
    code_t = main(["check", str(source), "--quiet"], out=out_t, err=io.StringIO())
    code_j = main(["check", str(model_path), "--quiet"], out=out_j, err=io.StringIO())
    assert code_t == code_j
    assert out_t.getvalue().split(": ")[1] == out_j.getvalue().split(": ")[1]


def test_results_tables_given_separately(tmp_path: Path) -> None:
    """The demo's results as a workbook of their own, after the model's JSON: the same audit."""
    from audit.tables.write import write_tables
    from tests.table_forms import tables_of

    tables = tables_of(DEMO / "footbridge.json", DEMO / "footbridge.results.json")
    only = {k: v for k, v in tables.items() if k in ("displacements", "forces", "reactions")}
    book = tmp_path / "results.xlsx"
    write_tables(book, only)
    out = io.StringIO()
    code = main(["check", str(DEMO / "footbridge.json"), str(book), "--quiet"], out=out, err=io.StringIO())
    ref = io.StringIO()
    code_ref = main(
        ["check", str(DEMO / "footbridge.json"), str(DEMO / "footbridge.results.json"), "--quiet"],
        out=ref,
        err=io.StringIO(),
    )
    assert (code, out.getvalue().split(": ")[1]) == (code_ref, ref.getvalue().split(": ")[1])


def test_the_demo_handoff_workbook_audits_as_the_demo(tmp_path: Path) -> None:
    """``reference_cases/demo/footbridge_handoff.xlsx`` (trade headers, E in N/mm2, A in mm2, a notes
    sheet): the demo's findings, the planted mistake at X2 included, and the unread parts listed."""
    import importlib.util

    import python_calamine

    book = DEMO / "footbridge_handoff.xlsx"
    read = load_source(book)
    _, json_result = _json_audit("demo")
    result = engine.audit(read.model, read.results, source_notes=read.notes)
    assert result.verdict == "fail"
    assert _findings(result) == _findings(json_result)
    assert {f.case for f in result.findings if f.code == "DX104" and f.location.member == "X2"} == {
        "dead",
        "crowd",
        "sun",
        "ULS-1",
    }
    unread = {n.place for n in read.notes if n.code == "SR001"}
    assert 'sheet "notes"' in unread
    assert any("Utilisation" in p for p in unread)
    # the committed workbook is what the script writes
    spec = importlib.util.spec_from_file_location("make_handoff", DEMO / "make_handoff.py")
    assert spec is not None
    assert spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    module.main(tmp_path / "again.xlsx")

    def cells(path: Path) -> dict[str, list[list[object]]]:
        wb = python_calamine.CalamineWorkbook.from_path(str(path))
        return {n: wb.get_sheet_by_name(n).to_python() for n in wb.sheet_names}

    assert cells(tmp_path / "again.xlsx") == cells(book)


@pytest.mark.parametrize("form", ["csv", "xlsx"])
@pytest.mark.parametrize("case", ["nl001_braced_bay_states", "nl101_hanger_uplift_no_solution", "self_weight"])
def test_format_additions_through_tables(case: str, form: str, tmp_path: Path) -> None:
    """``behaviour`` (members), ``unit_weight`` (materials) and the ``self_weight`` table reach the
    format's additions (FORMAT.md): the same model and audit as the JSON.  The cases carry their own
    sources: the rule cases' ``x-source`` and ``tests/test_selfweight.py``'s closed form."""
    import json

    if case == "self_weight":
        from tests.test_selfweight import _doc

        model_path = tmp_path / "self_weight.json"
        model_path.write_text(json.dumps(_doc([1, -2])))
    else:
        model_path = ROOT / "tests" / "data" / "rules" / f"{case}.json"
    source, _ = write_form(form, model_path, None, tmp_path / "tables")
    read = load_source(source)
    json_model = exchange.load_model(model_path)
    if form == "csv":
        assert exchange.dump_model(read.model) == exchange.dump_model(_untitled(json_model))
    result = engine.audit(read.model, read.results, source_notes=read.notes)
    json_result = engine.audit(json_model)
    assert result.verdict == json_result.verdict
    assert _findings(result) == _findings(json_result)
