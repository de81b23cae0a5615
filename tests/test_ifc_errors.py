"""Broken IFC files are refused by entity: each problem names ``#id IfcType 'Name'`` and what is missing.

Each file is a valid IFC4 model of the demo footbridge (``tests/ifc_writer.py``) with one thing broken
through ifcopenshell's API; the refusal is an :class:`~audit.errors.InputError` (the CLI's exit 2) and
the input file is left as it was.  The expected messages follow the IFC4 entity definitions
(ISO 16739-1:2018) for what each entity must carry.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

pytest.importorskip("ifcopenshell")
import ifcopenshell
from ifc_writer import write_ifc

from audit.errors import InputError
from audit.ifc import read_ifc

ROOT = Path(__file__).resolve().parents[1]
DEMO = json.loads((ROOT / "reference_cases/demo/footbridge.json").read_text(encoding="utf-8"))


def _by_name(f: Any, kind: str, name: str) -> Any:
    (hit,) = [e for e in f.by_type(kind) if e.Name == name]
    return hit


def _refused(tmp_path: Path, breaker: Callable[[Any], Any], **kw: Any) -> tuple[list[str], Any]:
    f = write_ifc(DEMO, "mm_kN")
    target = breaker(f)
    path = tmp_path / "broken.ifc"
    f.write(str(path))
    before = path.read_bytes()
    with pytest.raises(InputError) as err:
        read_ifc(path, **kw)
    assert path.read_bytes() == before
    assert err.value.file == str(path)
    return [str(p) for p in err.value.problems], target


def _no_area(f: Any) -> Any:
    prof = next(p for p in f.by_type("IfcProfileDef") if p.ProfileName == "web")
    for pp in f.by_type("IfcProfileProperties"):
        if pp.ProfileDefinition == prof:
            f.remove(pp)
    return prof


def test_member_with_no_section_area(tmp_path: Path) -> None:
    problems, prof = _refused(tmp_path, _no_area)
    assert len(problems) == 1
    assert problems[0].startswith(f"#{prof.id()} IfcProfileDef 'web'")
    assert "CrossSectionArea" in problems[0]
    assert "IfcStructuralCurveMember 'V1'" in problems[0]  # a member that needs it is named too


def _no_geometry(f: Any) -> Any:
    conn = _by_name(f, "IfcStructuralPointConnection", "U3")
    conn.Representation = None
    return conn


def test_connection_with_no_geometry(tmp_path: Path) -> None:
    problems, conn = _refused(tmp_path, _no_geometry)
    assert problems == [f"#{conn.id()} IfcStructuralPointConnection 'U3': has no vertex geometry "
                        "(an IfcVertexPoint with an IfcCartesianPoint in its Representation)"]  # fmt: skip


def _unconnected(f: Any) -> Any:
    member = _by_name(f, "IfcStructuralCurveMember", "T2")
    for rel in list(member.ConnectedBy):
        f.remove(rel)
    return member


def test_member_naming_no_connection(tmp_path: Path) -> None:
    problems, member = _refused(tmp_path, _unconnected)
    assert problems == [f"#{member.id()} IfcStructuralCurveMember 'T2': names no point connection "
                        "(no IfcRelConnectsStructuralMember)"]  # fmt: skip


def _one_end(f: Any) -> Any:
    member = _by_name(f, "IfcStructuralCurveMember", "B3")
    f.remove(member.ConnectedBy[0])
    return member


def test_member_with_one_end(tmp_path: Path) -> None:
    problems, member = _refused(tmp_path, _one_end)
    assert len(problems) == 1
    assert problems[0].startswith(f"#{member.id()} IfcStructuralCurveMember 'B3': is connected to 1 point connections")


def _unknown_unit(f: Any) -> Any:
    (assignment,) = f.by_type("IfcUnitAssignment")
    dims = f.create_entity("IfcDimensionalExponents", 1, 0, 0, 0, 0, 0, 0)
    cubit = f.create_entity("IfcContextDependentUnit", Dimensions=dims, UnitType="LENGTHUNIT", Name="cubit")
    assignment.Units = [cubit, *[u for u in assignment.Units if getattr(u, "UnitType", None) != "LENGTHUNIT"]]
    return cubit


def test_unknown_unit(tmp_path: Path) -> None:
    problems, cubit = _refused(tmp_path, _unknown_unit)
    assert any(p.startswith(f"#{cubit.id()} IfcContextDependentUnit 'cubit'") for p in problems), problems


def _wrong_kind_of_unit(f: Any) -> Any:
    (assignment,) = f.by_type("IfcUnitAssignment")
    second = f.create_entity("IfcSIUnit", UnitType="FORCEUNIT", Name="SECOND")
    assignment.Units = [second, *[u for u in assignment.Units if getattr(u, "UnitType", None) != "FORCEUNIT"]]
    return second


def test_force_unit_that_is_not_a_force(tmp_path: Path) -> None:
    problems, unit = _refused(tmp_path, _wrong_kind_of_unit)
    assert problems == [f"#{unit.id()} IfcSIUnit 'SECOND': is assigned as the FORCEUNIT but is not a unit of that kind"]


def _second_model(f: Any) -> Any:
    f.create_entity(
        "IfcStructuralAnalysisModel", GlobalId=ifcopenshell.guid.new(), Name="alternative", PredefinedType="LOADING_3D"
    )
    return None


def test_several_models_without_a_choice(tmp_path: Path) -> None:
    problems, _ = _refused(tmp_path, _second_model)
    assert len(problems) == 1
    assert "--ifc-model" in problems[0]
    assert repr(DEMO["title"]) in problems[0]
    assert "'alternative'" in problems[0]


def test_several_models_unknown_choice(tmp_path: Path) -> None:
    problems, _ = _refused(tmp_path, _second_model, model_name="third")
    assert problems[0].startswith("$: no analysis model is named 'third'; the file holds")


def test_several_models_chosen(tmp_path: Path) -> None:
    f = write_ifc(DEMO, "si")
    _second_model(f)
    path = tmp_path / "two.ifc"
    f.write(str(path))
    read = read_ifc(path, model_name=DEMO["title"])
    assert read.model.n_members == len(DEMO["members"])
    assert any(n.code == "SR002" and "also holds 'alternative'" in n.message for n in read.notes)
    with pytest.raises(InputError, match="alternative"):
        read_ifc(path, model_name="alternative")  # an empty model: no nodes, no members


def _duplicate_member(f: Any) -> Any:
    member = _by_name(f, "IfcStructuralCurveMember", "D2")
    member.Name = "D1"
    return member


def test_duplicate_member_name(tmp_path: Path) -> None:
    """The format's own duplicate-id rule, reported at the entity, not at a JSON path."""
    problems, member = _refused(tmp_path, _duplicate_member)
    assert len(problems) == 1
    assert problems[0].startswith(f"#{member.id()} IfcStructuralCurveMember 'D1': duplicate member id 'D1'")


def _zero_modulus(f: Any) -> Any:
    (prop,) = [p for p in f.by_type("IfcPropertySingleValue") if p.Name == "YoungModulus"]
    prop.NominalValue = f.create_entity("IfcModulusOfElasticityMeasure", 0.0)
    return f.by_type("IfcMaterial")[0]


def test_zero_modulus(tmp_path: Path) -> None:
    problems, material = _refused(tmp_path, _zero_modulus)
    assert problems == [f"#{material.id()} IfcMaterial 'S355': E must be positive, got 0"]


def _no_name(f: Any) -> Any:
    conn = _by_name(f, "IfcStructuralPointConnection", "L3")
    conn.Name = None
    return conn


def test_connection_without_name(tmp_path: Path) -> None:
    problems, conn = _refused(tmp_path, _no_name)
    assert f"#{conn.id()} IfcStructuralPointConnection: has no Name (the joint's id)" in problems


def test_everything_at_once(tmp_path: Path) -> None:
    """All problems are listed together, each at its own entity."""

    def many(f: Any) -> Any:
        return (_no_area(f), _no_geometry(f), _unconnected(f))

    problems, (prof, conn, member) = _refused(tmp_path, many)
    for e in (prof, conn, member):
        assert any(p.startswith(f"#{e.id()} ") for p in problems), (e, problems)


def test_not_an_ifc_file(tmp_path: Path) -> None:
    path = tmp_path / "junk.ifc"
    path.write_text("this is not a STEP file\n", encoding="utf-8")
    with pytest.raises(InputError, match="not a readable IFC file"):
        read_ifc(path)


def test_no_analysis_model(tmp_path: Path) -> None:
    f = ifcopenshell.file(schema="IFC4")
    f.create_entity("IfcProject", GlobalId=ifcopenshell.guid.new(), Name="empty")
    path = tmp_path / "empty.ifc"
    f.write(str(path))
    with pytest.raises(InputError, match="no IfcStructuralAnalysisModel"):
        read_ifc(path)


# ------------------------------------------------------------------ hostile files: never a traceback
# A valid file with one entity removed or one attribute emptied (a deterministic sample of both) must be
# read or refused with an InputError, never crash the reader (the refusal contract, common practice).

_SAMPLE = 48


@pytest.fixture(scope="module")
def base_ifc(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("hostile") / "base.ifc"
    write_ifc(DEMO, "mm_kN").write(str(path))
    return path


@pytest.mark.parametrize("mode", ["remove", "empty"])
@pytest.mark.parametrize("k", range(_SAMPLE))
def test_damaged_file_is_read_or_refused(base_ifc: Path, tmp_path: Path, k: int, mode: str) -> None:
    import random

    f = ifcopenshell.open(str(base_ifc))
    entities = sorted(f, key=lambda e: e.id())
    rng = random.Random(k)
    entity = entities[rng.randrange(len(entities))]
    if mode == "remove":
        f.remove(entity)
    else:
        names = entity.get_attribute_names()
        if not names:
            pytest.skip("an entity without attributes")
        try:
            setattr(entity, rng.choice(names), None)
        except Exception:
            pytest.skip("ifcopenshell refuses to empty this attribute")
    path = tmp_path / "damaged.ifc"
    f.write(str(path))
    outcome: Any
    try:
        outcome = read_ifc(path)
    except InputError as err:  # refused: every problem listed with its place
        outcome = err
    if isinstance(outcome, InputError):
        assert all(p.path and p.message for p in outcome.problems)
        assert outcome.problems
    else:
        assert outcome.model.n_members > 0
