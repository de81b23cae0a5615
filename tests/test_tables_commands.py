"""``truss-audit import`` and ``truss-audit template`` (``TABLES.md``; the issue's commands section).

The import's truth is the audit of the source itself: the written model, re-read and audited, gives the
same report as the tables it came from (the reference cases' JSON files name their published sources).
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import pytest
import python_calamine

from audit.cli import main
from audit.tables.names import TABLES, column_of, split_header
from tests.table_forms import write_form

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "reference_cases" / "demo"
CASE = ROOT / "reference_cases" / "published" / "timoshenko_three_bar.json"


def _report(argv: list[str]) -> tuple[int, str]:
    """The exit code and the text report without its inputs block (names and digests differ by form)."""
    out = io.StringIO()
    code = main(argv, out=out, err=io.StringIO())
    lines, skipping = [], False
    for line in out.getvalue().splitlines():
        if line.startswith("Inputs and their sha256"):
            skipping = True
            continue
        if skipping and line.startswith("  "):
            continue
        skipping = False
        lines.append(line)
    return code, "\n".join(lines)


@pytest.mark.parametrize("form", ["csv", "xlsx", "mapped"])
def test_the_imported_model_audits_as_its_tables(form: str, tmp_path: Path) -> None:
    source, mapping = write_form(form, DEMO / "footbridge.json", DEMO / "footbridge.results.json", tmp_path / "tables")
    target = tmp_path / "model.json"
    argv = ["import", str(source), "-o", str(target), *(["--map", str(mapping)] if mapping else [])]
    assert main(argv, out=io.StringIO(), err=io.StringIO()) == 0
    doc = json.loads(target.read_text())
    assert doc["format"] == "truss-audit-model"
    assert "results" in doc
    from_tables = _report(["check", str(source), *(["--map", str(mapping)] if mapping else [])])
    from_json = _report(["check", str(target)])
    assert from_tables == from_json


def test_import_with_separate_results(tmp_path: Path) -> None:
    source, _ = write_form("csv", DEMO / "footbridge.json", DEMO / "footbridge.results.json", tmp_path / "tables")
    model, results = tmp_path / "model.json", tmp_path / "results.json"
    argv = ["import", str(source), "-o", str(model), "--results-out", str(results)]
    assert main(argv, out=io.StringIO(), err=io.StringIO()) == 0
    assert "results" not in json.loads(model.read_text())
    assert json.loads(results.read_text())["format"] == "truss-audit-results"
    assert _report(["check", str(source)]) == _report(["check", str(model), str(results)])


def test_import_of_a_broken_source_writes_nothing(tmp_path: Path) -> None:
    source, _ = write_form("csv", CASE, None, tmp_path / "tables")
    nodes = source / "nodes.csv"
    nodes.write_text(nodes.read_text().replace("A,-3,4", "A,-3,four"))
    target = tmp_path / "model.json"
    err = io.StringIO()
    assert main(["import", str(source), "-o", str(target)], out=io.StringIO(), err=err) == 2
    assert 'nodes.csv: row 2, column "y"' in err.getvalue()
    assert not target.exists()


@pytest.mark.parametrize("dim", [2, 3])
@pytest.mark.parametrize("suffix", [".xlsx", ".ods", ""])
def test_template_writes_every_table_with_contract_headers(dim: int, suffix: str, tmp_path: Path) -> None:
    target = tmp_path / f"blank{suffix}"
    assert main(["template", "--dimensions", str(dim), "-o", str(target)], out=io.StringIO()) == 0
    if suffix:
        book = python_calamine.CalamineWorkbook.from_path(str(target))
        sheets = {n: book.get_sheet_by_name(n).to_python() for n in book.sheet_names}
    else:
        import csv

        sheets = {p.stem: list(csv.reader(p.open())) for p in target.glob("*.csv")}
    assert set(sheets) == set(TABLES)
    for name, rows in sheets.items():
        header = [str(h) for h in rows[0] if h != ""]
        cols = [column_of(name, split_header(h)[0]) for h in header]
        assert None not in cols, (name, header)
        assert ("z" in cols or "uz" in cols or "rz" in cols or "fz" in cols) == (
            dim == 3 and name in ("nodes", "supports", "loads", "settlements", "displacements", "reactions")
        )
    about = dict((r[0], r[1]) for r in sheets["about"][1:])
    assert str(about["dimensions"]).startswith(str(dim))
