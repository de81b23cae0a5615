"""The optional additions to version 1 (``shared/FORMAT.md``, "Additions to version 1"): unit_weight,
self_weight and behaviour are read, refused with a JSON path when wrong, and written back unchanged."""

from __future__ import annotations

import copy
import json
from typing import Any

import numpy as np
import pytest

from audit import exchange
from audit.errors import InputError
from audit.model import BEHAVIOURS

BASE: dict[str, Any] = {
    "format": "truss-audit-model",
    "version": 1,
    "dimensions": 2,
    "units": {"length": "m", "force": "kN"},
    "nodes": [{"id": "A", "x": 0, "y": 0}, {"id": "B", "x": 4, "y": 0}, {"id": "C", "x": 2, "y": 3}],
    "materials": {"steel": {"E": 2.0e8, "unit_weight": 77}},
    "members": [
        {"id": 1, "start": "A", "end": "B", "material": "steel", "A": 1e-3},
        {"id": 2, "start": "B", "end": "C", "material": "steel", "A": 1e-3, "behaviour": "tension_only"},
        {"id": 3, "start": "A", "end": "C", "E": 2e8, "A": 1e-3, "unit_weight": 78.5, "behaviour": "compression_only"},
    ],
    "supports": [{"node": "A", "restrain": ["x", "y"]}, {"node": "B", "restrain": ["y"]}],
    "load_cases": [{"id": "dead", "self_weight": {"factor": 1.35, "direction": [0, -2]}}, {"id": "w"}],
}


def _doc(**changes: Any) -> dict[str, Any]:
    doc = copy.deepcopy(BASE)
    doc.update(changes)
    return doc


def _problems(doc: dict[str, Any]) -> list[tuple[str, str]]:
    with pytest.raises(InputError) as exc:
        exchange.parse_model(json.dumps(doc))
    return [(p.path, p.message) for p in exc.value.problems]


def test_additions_are_read() -> None:
    m = exchange.parse_model(json.dumps(BASE))
    assert m.behaviour.tolist() == [0, BEHAVIOURS["tension_only"], BEHAVIOURS["compression_only"]]
    assert m.unit_weight.tolist() == [77.0, 77.0, 78.5]  # inline wins over the material
    lc = m.load_cases[0]
    assert lc.self_weight == 1.35
    assert lc.self_weight_direction == (0.0, -1.0)
    assert not m.load_cases[1].has_self_weight
    assert m.is_nonlinear


def test_a_file_without_additions_reads_as_before() -> None:
    doc = _doc()
    del doc["materials"]["steel"]["unit_weight"]
    for mem in doc["members"]:
        mem.pop("unit_weight", None)
        mem.pop("behaviour", None)
    doc["load_cases"] = [{"id": "w"}]
    m = exchange.parse_model(json.dumps(doc))
    assert m.behaviour.size == 0
    assert m.unit_weight.size == 0
    assert not m.is_nonlinear
    assert "unit_weight" not in exchange.dump_model(m)
    assert "behaviour" not in exchange.dump_model(m)


def test_round_trip() -> None:
    m = exchange.parse_model(json.dumps(BASE))
    text = exchange.dump_model(m)
    again = exchange.parse_model(text)
    assert exchange.dump_model(again) == text
    assert np.array_equal(again.behaviour, m.behaviour)
    assert np.array_equal(again.unit_weight, m.unit_weight)
    assert again.load_cases[0].self_weight_direction_text == ("0", "-2")


def test_unknown_behaviour_names_the_allowed_ones() -> None:
    doc = _doc()
    doc["members"][1]["behaviour"] = "tension"
    found = _problems(doc)
    assert [p for p, _ in found] == ["members[1].behaviour"]
    assert all(name in found[0][1] for name in ("linear", "tension_only", "compression_only"))


def test_self_weight_without_unit_weight_names_the_members() -> None:
    doc = _doc()
    del doc["materials"]["steel"]["unit_weight"]
    found = _problems(doc)
    assert [p for p, _ in found] == ["load_cases[0].self_weight"]
    assert "'1'" in found[0][1]
    assert "'2'" in found[0][1]
    assert "'3'" not in found[0][1]


def test_zero_direction_is_refused() -> None:
    doc = _doc()
    doc["load_cases"][0]["self_weight"]["direction"] = [0, 0]
    found = _problems(doc)
    assert [p for p, _ in found] == ["load_cases[0].self_weight.direction"]
    assert "zero" in found[0][1]


def test_negative_unit_weight_and_missing_factor() -> None:
    doc = _doc()
    doc["members"][2]["unit_weight"] = -1
    assert [p for p, _ in _problems(doc)] == ["members[2].unit_weight"]
    doc = _doc()
    doc["load_cases"][0]["self_weight"] = {"direction": [0, 1]}
    assert [p for p, _ in _problems(doc)] == ["load_cases[0].self_weight.factor"]


def test_cli_exit_2_for_bad_behaviour(tmp_path: Any) -> None:
    from audit.cli import main

    doc = _doc()
    doc["members"][0]["behaviour"] = "cable"
    path = tmp_path / "m.json"
    path.write_text(json.dumps(doc))
    import io

    err = io.StringIO()
    assert main(["solve", str(path), "-o", str(tmp_path / "r.json")], io.StringIO(), err) == 2
    assert "members[0].behaviour" in err.getvalue()
