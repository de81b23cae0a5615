"""The IFC form through the command line: `check model.ifc`, `import model.ifc -o m.json`, `solve model.ifc`.

The demo footbridge (invented, ``reference_cases/demo/README.md``) is written as IFC4 in mm/kN with its
consultant's results (``footbridge.results.json``) as result groups; auditing the IFC file must give the
verdict and findings of auditing the JSON pair, importing it must write a model that audits the same,
and a broken file must exit 2 with the entity named and nothing written.
"""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any

import pytest

pytest.importorskip("ifcopenshell")
from ifc_writer import write_ifc

from audit import cli

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "reference_cases" / "demo"


def run(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv, out=out, err=err)
    return code, out.getvalue(), err.getvalue()


def demo_doc() -> dict[str, Any]:
    doc = json.loads((DEMO / "footbridge.json").read_text(encoding="utf-8"))
    doc["results"] = json.loads((DEMO / "footbridge.results.json").read_text(encoding="utf-8"))
    del doc["results"]["format"], doc["results"]["version"]
    return doc


@pytest.fixture
def demo_ifc(tmp_path: Path) -> Path:
    path = tmp_path / "footbridge.ifc"
    write_ifc(demo_doc(), "mm_kN").write(str(path))
    return path


def _report(path: Path) -> dict[str, Any]:
    report: dict[str, Any] = json.loads(path.read_text(encoding="utf-8"))
    return report


def _codes(report: dict[str, Any]) -> list[tuple[str, str | None]]:
    return sorted((f["code"], f.get("case")) for f in report["findings"] if not f["code"].startswith("SR"))


def test_check_ifc_gives_the_json_audit(demo_ifc: Path, tmp_path: Path) -> None:
    code, _out, _ = run(["check", str(demo_ifc), "--json", str(tmp_path / "ifc.json"), "--quiet"])
    code_j, _, _ = run(
        ["check", str(DEMO / "footbridge.json"), str(DEMO / "footbridge.results.json"), "--quiet",
         "--json", str(tmp_path / "json.json")]
    )  # fmt: skip
    assert code == code_j == 1  # the demo's planted mistake fails the audit either way
    ifc, js = _report(tmp_path / "ifc.json"), _report(tmp_path / "json.json")
    assert ifc["verdict"] == js["verdict"] == "fail"
    assert _codes(ifc) == _codes(js)
    # the reader's notes are reported: read as a plane truss (SR002)
    notes = [f for f in ifc["findings"] if f["code"].startswith("SR")]
    assert any("plane truss" in f["message"] for f in notes)


def test_import_round_trips(demo_ifc: Path, tmp_path: Path) -> None:
    model, results = tmp_path / "m.json", tmp_path / "r.json"
    code, out, _ = run(["import", str(demo_ifc), "-o", str(model), "--results-out", str(results)])
    assert code == 0, out
    doc = json.loads(model.read_text(encoding="utf-8"))
    assert doc["units"]["length"] == "mm"
    assert doc["units"]["force"] == "kN"
    run(["check", str(demo_ifc), "--quiet", "--json", str(tmp_path / "a.json")])
    run(["check", str(model), str(results), "--quiet", "--json", str(tmp_path / "b.json")])
    a, b = _report(tmp_path / "a.json"), _report(tmp_path / "b.json")
    assert a["verdict"] == b["verdict"]
    assert _codes(a) == _codes(b)


def test_solve_writes_the_files_units(demo_ifc: Path, tmp_path: Path) -> None:
    out_path = tmp_path / "solved.json"
    code, _, _ = run(["solve", str(demo_ifc), "-o", str(out_path)])
    assert code == 0
    assert json.loads(out_path.read_text(encoding="utf-8"))["units"] == {"length": "mm", "force": "kN"}


def test_broken_ifc_exits_2_naming_the_entity(tmp_path: Path) -> None:
    f = write_ifc(demo_doc(), "si")
    (member,) = [m for m in f.by_type("IfcStructuralCurveMember") if m.Name == "T2"]
    for rel in list(member.ConnectedBy):
        f.remove(rel)
    path = tmp_path / "broken.ifc"
    f.write(str(path))
    before = path.read_bytes()
    outputs = [tmp_path / "m.json", tmp_path / "report.json"]
    code, _, err = run(["import", str(path), "-o", str(outputs[0])])
    assert code == 2
    assert f"#{member.id()} IfcStructuralCurveMember 'T2'" in err
    code, _out, err = run(["check", str(path), "--json", str(outputs[1])])
    assert code == 2
    assert "names no point connection" in err
    assert not any(p.exists() for p in outputs)
    assert path.read_bytes() == before


def test_several_models_need_a_choice(tmp_path: Path) -> None:
    import ifcopenshell.guid

    f = write_ifc(demo_doc(), "si")
    f.create_entity(
        "IfcStructuralAnalysisModel", GlobalId=ifcopenshell.guid.new(), Name="second", PredefinedType="LOADING_3D"
    )
    path = tmp_path / "two.ifc"
    f.write(str(path))
    code, _, err = run(["check", str(path), "--quiet"])
    assert code == 2
    assert "--ifc-model" in err
    assert "'second'" in err
    title = demo_doc()["title"]
    code, out, _ = run(["check", str(path), "--quiet", "--ifc-model", title])
    assert code == 1  # the demo's audit, which fails on its planted mistake
    assert "fail" in out
