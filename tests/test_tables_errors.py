"""Broken tables are refused by place: file (and sheet), row as a spreadsheet shows it, column header.

Each case starts from a correct table form of a published case (Logan, *A First Course in the Finite
Element Method*, 4th ed., Example 3.5; ``reference_cases/published/logan_ex3_5_plane.json``), breaks one
thing, and runs ``truss-audit check`` with a report to write: exit code 2, the place and the problem on
stderr, no traceback, no report written, the input untouched.  The expected behaviour is the tables
contract (``TABLES.md``: numbers and errors).
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import pytest

from audit.cli import main
from audit.tables.write import write_tables
from tests.table_forms import tables_of

ROOT = Path(__file__).resolve().parent.parent
CASE = ROOT / "reference_cases" / "published" / "logan_ex3_5_plane.json"


def _folder(tmp_path: Path) -> Path:
    folder = tmp_path / "tables"
    write_tables(folder, tables_of(CASE))
    return folder


def _edit(path: Path, old: str, new: str) -> None:
    text = path.read_text()
    assert old in text, (old, text)
    path.write_text(text.replace(old, new, 1))


def _refused(argv: list[str], tmp_path: Path) -> str:
    report = tmp_path / "report.json"
    err = io.StringIO()
    inputs = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()}
    code = main([*argv, "--json", str(report)], out=io.StringIO(), err=err)
    assert code == 2, err.getvalue()
    assert not report.exists()
    assert "Traceback" not in err.getvalue()
    assert {p: p.read_bytes() for p in inputs} == inputs
    return err.getvalue()


def test_a_member_naming_a_missing_node(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "members.csv", "3,1,4,", "3,1,N7,")
    err = _refused(["check", str(folder)], tmp_path)
    assert "members.csv: row 4, column \"end\": unknown node 'N7'" in err


def test_a_cell_that_is_not_a_number(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "nodes.csv", "3,120,120", "3,12O,120")
    err = _refused(["check", str(folder)], tmp_path)
    assert "nodes.csv: row 4, column \"x\": '12O' is not a number" in err


def test_an_unknown_unit(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "nodes.csv", "id,x,y", "id,x [furlong],y")
    err = _refused(["check", str(folder)], tmp_path)
    assert 'nodes.csv: row 1, column "x [furlong]": unknown unit' in err


def test_a_unit_of_the_wrong_kind(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "sections.csv", "name,A", "name,A [kN/m]")
    err = _refused(["check", str(folder)], tmp_path)
    assert "sections.csv: row 1, column \"A [kN/m]\": unit 'kN/m' does not fit this column" in err


def test_a_bad_restraint_flag(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "supports.csv", "3,1,1", "3,maybe,1")
    err = _refused(["check", str(folder)], tmp_path)
    assert "supports.csv: row 3, column \"x\": 'maybe' is not a restraint flag" in err


def test_a_mapping_naming_a_missing_column(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    mapping = tmp_path / "map.toml"
    mapping.write_text('[columns.members]\nstart = "From Node"\n')
    err = _refused(["check", str(folder), "--map", str(mapping)], tmp_path)
    assert 'members.csv: row 1, column "From Node": no such column' in err


def test_a_mapping_key_outside_the_contract(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    mapping = tmp_path / "map.toml"
    mapping.write_text('[columns.forces]\nNx = "Axial"\n')
    err = _refused(["check", str(folder), "--map", str(mapping)], tmp_path)
    assert "map.toml: [columns.forces] Nx: 'Nx' is not a column of forces" in err


def test_a_duplicate_id(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "nodes.csv", "3,120,120", "2,120,120")
    err = _refused(["check", str(folder)], tmp_path)
    assert "nodes.csv: row 4, column \"id\": duplicate node id '2' (first at nodes.csv, row 3)" in err


def test_an_empty_required_cell(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "members.csv", "2,1,3,", "2,,3,")
    err = _refused(["check", str(folder)], tmp_path)
    assert "members.csv: row 3, column \"start\": empty cell: 'start' is required" in err


def test_a_missing_members_table_in_a_workbook(tmp_path: Path) -> None:
    tables = tables_of(CASE)
    del tables["members"]
    book = tmp_path / "handoff.xlsx"
    write_tables(book, tables)
    err = _refused(["check", str(book)], tmp_path)
    assert "no 'members' table (a sheet 'members'); it is required" in err


def test_a_missing_members_table_in_a_folder(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    (folder / "members.csv").unlink()
    err = _refused(["check", str(folder)], tmp_path)
    assert "no 'members' table (a file members.csv); it is required" in err


def test_a_workbook_problem_names_its_sheet(tmp_path: Path) -> None:
    tables = tables_of(CASE)
    tables["members"][3][2] = "N7"
    book = tmp_path / "handoff.ods"
    write_tables(book, tables)
    err = _refused(["check", str(book)], tmp_path)
    assert 'handoff.ods: sheet "members": row 4, column "end": unknown node \'N7\'' in err


def test_every_problem_is_listed_together(tmp_path: Path) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "members.csv", "3,1,4,", "3,1,N7,")
    _edit(folder / "nodes.csv", "3,120,120", "3,12O,120")
    _edit(folder / "supports.csv", "4,1,1", "4,1,often")
    err = _refused(["check", str(folder)], tmp_path)
    assert 'nodes.csv: row 4, column "x"' in err
    assert 'members.csv: row 4, column "end"' in err
    assert 'supports.csv: row 4, column "y"' in err


def test_a_decimal_comma_needs_the_mapping(tmp_path: Path) -> None:
    folder = tmp_path / "tables"
    write_tables(folder, tables_of(CASE), delimiter=";")
    for f in folder.glob("*.csv"):
        if f.stem != "about":
            f.write_text(re.sub(r"(?<=\d)\.(?=\d)", ",", f.read_text()))
    err = _refused(["check", str(folder)], tmp_path)
    assert "materials.csv: row 2, column \"E\": '30000000,0' is not a number" in err
    mapping = tmp_path / "map.toml"
    mapping.write_text('decimal = ","\n')
    out = io.StringIO()
    code = main(["check", str(folder), "--map", str(mapping), "--quiet"], out=out, err=io.StringIO())
    ref = io.StringIO()
    assert main(["check", str(CASE), "--quiet"], out=ref, err=io.StringIO()) == code
    assert out.getvalue().split(": ")[-1] == ref.getvalue().split(": ")[-1]


@pytest.mark.parametrize("flag", ["1", "yes", "TRUE", "Fixed"])
def test_restraint_flag_words(tmp_path: Path, flag: str) -> None:
    folder = _folder(tmp_path)
    _edit(folder / "supports.csv", "3,1,1", f"3,{flag},1")
    code = main(["check", str(folder), "--quiet"], out=io.StringIO(), err=io.StringIO())
    assert code in (0, 1)


def test_results_tables_name_their_place(tmp_path: Path) -> None:
    """Results tables given after a JSON model: an unknown node and a node given twice, by place."""
    folder = tmp_path / "results"
    folder.mkdir()
    (folder / "displacements.csv").write_text("case,node,ux [in],uy [in]\nP,1,0.00414,-0.0159\nP,Q,0,0\nP,1,0,0\n")
    err = _refused(["check", str(CASE), str(folder)], tmp_path)
    assert "displacements.csv: row 3, column \"node\": unknown node 'Q'" in err
    assert "displacements.csv: row 4, column \"node\": node '1' is given twice for case 'P' (first in row 2)" in err
