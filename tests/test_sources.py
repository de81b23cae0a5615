"""The source dispatch (``audit.sources``) and the route of a reader's notes into every report.

A reader's notes become findings of the family SR (``audit.checks.source_notes``) with their registered
severity; a note with an unregistered code is a reader fault, reported as a crash (AU901), never passed.
The expected behaviour is the project's own contract (``TABLES.md``: nothing is ignored silently).
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import pytest

from audit import engine, exchange
from audit.cli import main
from audit.errors import InputError
from audit.findings import Severity
from audit.reporters import json_report
from audit.sources import SourceNote, load_source, load_source_results, source_kind

ROOT = Path(__file__).resolve().parent.parent
PUBLISHED = ROOT / "reference_cases" / "published"
DEMO = ROOT / "reference_cases" / "demo"


def test_kinds_by_form(tmp_path: Path) -> None:
    (tmp_path / "nodes.csv").write_text("id,x,y\n")
    (tmp_path / "Members.csv").write_text("id,start,end\n")
    other = tmp_path / "batch"
    other.mkdir()
    assert source_kind(tmp_path) == "tables"
    assert source_kind(other) is None
    assert source_kind("a.xlsx") == "workbook"
    assert source_kind("a.ODS") == "workbook"
    assert source_kind("a.ifc") == "ifc"
    assert source_kind("a.json") == "json"


def test_a_json_source_reads_as_the_exchange_reader_reads_it() -> None:
    path = PUBLISHED / "logan_ex3_5_plane.json"
    read = load_source(path)
    assert read.kind == "json"
    assert read.notes == ()
    assert exchange.dump_model(read.model) == exchange.dump_model(exchange.load_model(path))


def test_a_map_file_with_a_json_source_is_refused() -> None:
    with pytest.raises(InputError, match="applies only to tables"):
        load_source(PUBLISHED / "logan_ex3_5_plane.json", map_path="x.toml")


def test_json_results_through_the_dispatch() -> None:
    model = exchange.load_model(DEMO / "footbridge.json")
    read = load_source_results(DEMO / "footbridge.results.json", model)
    assert read.results is not None
    assert read.results.cases


def test_a_warning_note_is_reported_as_a_warning() -> None:
    model = exchange.load_model(PUBLISHED / "logan_ex3_5_plane.json")
    note = SourceNote("SR101", "rigid connections: audited as a pin-jointed truss", "#12 IfcStructuralAnalysisModel")
    result = engine.audit(model, source_notes=(note,))
    found = [f for f in result.findings if f.code == "SR101"]
    assert len(found) == 1
    assert found[0].severity == Severity.WARNING
    assert "#12 IfcStructuralAnalysisModel" in found[0].message
    assert result.verdict == "pass"  # a warning does not fail at the default --fail-on error
    doc = json.loads(json_report.render(result, model))
    assert any(f["code"] == "SR101" for f in doc["findings"])


def test_an_unregistered_note_code_is_a_crash_not_a_pass() -> None:
    model = exchange.load_model(PUBLISHED / "logan_ex3_5_plane.json")
    result = engine.audit(model, source_notes=(SourceNote("XX123", "?"),))
    assert "source" in result.crashed
    assert result.verdict == "fail"


def test_no_notes_no_source_outcome() -> None:
    model = exchange.load_model(PUBLISHED / "logan_ex3_5_plane.json")
    assert all(o.check != "source" for o in engine.audit(model).outcomes)


def test_ifc_model_option_with_tables_is_refused(tmp_path: Path) -> None:
    err = io.StringIO()
    code = main(["check", str(PUBLISHED / "logan_ex3_5_plane.json"), "--ifc-model", "M"], out=io.StringIO(), err=err)
    assert code == 2
    assert "--ifc-model" in err.getvalue()
