"""Ids written as 0, 1, 2, ... (their index without a dict) and member properties looked up by reference.

Expectations: ``FORMAT.md`` (ids are strings or integers, an integer id is its
decimal string, so ``7`` and ``"7"`` are one id; ids unique; a member's E, A,
alpha inline win over its material's or section's) and, for the index, common
practice: it answers exactly as the dict ``{str(i): i}`` it stands for.  The
general path (a dict of ids, properties member by member) is the reference
each shortcut is compared against, bit for bit, besides the standard-library
path (:func:`_assert_equivalent`).
"""

from __future__ import annotations

import json
from typing import Any

import numpy as np
import pytest
from test_exchange_fastpath_equivalence import _assert_equivalent, _assert_same

from audit.exchange import build, parse_model
from audit.exchange.build import _RangeIndex

NO_ALPHA = "member '0' has a temperature change but no alpha (give 'alpha' on the member or its material)"
KEYS = ["0", "1", "9", "10", "11", "05", "00", "-0", "+1", " 1", "1 ", "", "1.0", "1e0", "٣", "３", "²", "x", "99999"]


@pytest.mark.parametrize("n", [0, 1, 10, 11])
def test_range_index_is_the_dict_it_stands_for(n: int) -> None:
    ids = [str(i) for i in range(n)]
    index, reference = _RangeIndex(ids), dict(zip(ids, range(n), strict=True))
    assert list(index) == list(reference)
    assert len(index) == len(reference)
    for key in KEYS:
        assert (key in index) == (key in reference), key
        assert index.get(key) == reference.get(key), key
        assert index.get(key, -1) == reference.get(key, -1), key


def _doc(node_ids: list[Any], member_ids: list[Any], **extra: Any) -> dict[str, Any]:
    n = len(node_ids)
    members = [
        {"id": m, "start": node_ids[i % n], "end": node_ids[(i + 1) % n], "material": "s", "section": "a"}
        for i, m in enumerate(member_ids)
    ]
    doc = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 2,
        "units": {"length": "m", "force": "kN", "temperature": "K"},
        "materials": {"s": {"E": 2.1e8, "alpha": 1.2e-5}, "t": {"E": 7e7}},
        "sections": {"a": {"A": 0.004}, "b": {"A": 25}},
        "nodes": [{"id": v, "x": i * 1.5, "y": (i % 2) * 2.0} for i, v in enumerate(node_ids)],
        "members": members,
        "supports": [{"node": node_ids[0], "restrain": ["x", "y"]}, {"node": node_ids[1], "restrain": ["y"]}],
        "load_cases": [{"id": "c", "loads": [{"node": node_ids[2], "fy": -10.0}]}],
    }
    doc.update(extra)
    return doc


def _problems(doc: dict[str, Any]) -> list[tuple[Any, str]]:
    outcome = _assert_equivalent(json.dumps(doc).encode())
    assert outcome[0] == "problems"
    return [(p, m) for p, m, _item in outcome[1]]


def test_integer_ids_in_order_read_with_their_strings() -> None:
    model = _assert_equivalent(json.dumps(_doc(list(range(4)), list(range(5)))).encode())[1]
    assert model.node_ids == ("0", "1", "2", "3")
    assert model.member_ids == ("0", "1", "2", "3", "4")
    assert model.conn.tolist() == [[0, 1], [1, 2], [2, 3], [3, 0], [0, 1]]


@pytest.mark.parametrize(
    ("node_ids", "expected"),
    [
        ([0, 1, 1, 3], [("nodes[2].id", "duplicate node id '1' (first at nodes[1])")]),
        ([0, 1, "1", 3], [("nodes[2].id", "duplicate node id '1' (first at nodes[1])")]),  # 1 is "1"
        (["0", 1, 2, 3], []),  # mixed types, all distinct: the dict path
        ([1, 0, 2, 3], []),  # integers out of order: the dict path
        (["a", "b", "c", "d"], []),
    ],
)
def test_node_ids_duplicates_and_types(node_ids: list[Any], expected: list[Any]) -> None:
    doc = _doc(node_ids, ["m0", "m1", "m2", "m3"])
    if expected:
        assert [p for p in _problems(doc) if p[1].startswith("duplicate")] == expected
    else:
        model = _assert_equivalent(json.dumps(doc).encode())[1]
        assert model.node_ids == tuple(map(str, node_ids))


def test_duplicate_member_ids_across_types() -> None:
    found = _problems(_doc(list(range(4)), [0, 1, 2, "2"]))
    assert found == [("members[3].id", "duplicate member id '2' (first at members[2])")]


@pytest.mark.parametrize(
    ("written", "message"), [("01", "unknown node '01'"), ("-0", "unknown node '-0'"), (4, "unknown node '4'")]
)
def test_reference_to_integer_ids_only_by_their_decimal_string(written: Any, message: str) -> None:
    doc = _doc(list(range(4)), list(range(4)))
    doc["load_cases"][0]["loads"].append({"node": written, "fx": 1})
    assert _problems(doc) == [("load_cases[0].loads[1].node", message)]


def test_string_reference_to_an_integer_id() -> None:
    doc = _doc(list(range(4)), list(range(4)))
    doc["load_cases"][0]["loads"].append({"node": "3", "fx": 1})
    doc["load_cases"][0]["temperature_changes"] = [{"member": "2", "delta": 5}]
    model = _assert_equivalent(json.dumps(doc).encode())[1]
    assert model.load_cases[0].loads[3].tolist() == [1.0, 0.0]
    assert model.load_cases[0].temperature.tolist() == [0.0, 0.0, 5.0, 0.0]


def _general(doc: dict[str, Any], monkeypatch: pytest.MonkeyPatch) -> Any:
    with monkeypatch.context() as m:
        m.setattr(build, "_by_reference", lambda *_args: None)
        try:
            return parse_model(json.dumps(doc).encode())
        except Exception as exc:
            return [(p.path, p.message) for p in getattr(exc, "problems", [])]


def _varied(doc: dict[str, Any]) -> dict[str, Any]:
    for i, mem in enumerate(doc["members"]):
        mem["material"], mem["section"] = ("s", "a") if i % 3 else ("t", "b")
    return doc


def test_properties_by_reference_equal_the_general_path(monkeypatch: pytest.MonkeyPatch) -> None:
    doc = _varied(_doc(list(range(5)), list(range(7))))
    doc["load_cases"][0]["temperature_changes"] = [{"member": 1, "delta": 5}]
    taken: list[Any] = []
    by_reference = build._by_reference
    monkeypatch.setattr(build, "_by_reference", lambda *args: taken.append(by_reference(*args)) or taken[-1])
    model = _assert_equivalent(json.dumps(doc).encode())[1]
    assert taken[0] is not None  # the shortcut was taken, so the comparison means something
    _assert_same(model, _general(doc, monkeypatch))
    assert model.E.tolist() == [7e7, 2.1e8, 2.1e8] * 2 + [7e7]
    assert model.A_text == ("25", "0.004", "0.004") * 2 + ("25",)
    assert model.alpha_text == ("0", "1.2e-05", "1.2e-05") * 2 + ("0",)
    assert np.array_equal(model.alpha, [0, 1.2e-5, 1.2e-5] * 2 + [0])


@pytest.mark.parametrize(
    ("change", "expected"),
    [
        ("no material", [("members[2]", "no E: give 'E' or a 'material'")]),
        ("unknown section", [("members[2].section", "unknown section 'zz'")]),
        ("alpha missing", [("load_cases[0].temperature_changes[0].member", NO_ALPHA)]),
        ("inline E", []),
        ("E too large", [("materials.t.E", "number 1e400 is too large for a 64-bit float")]),
    ],
)
def test_properties_by_reference_problems(change: str, expected: list[Any], monkeypatch: pytest.MonkeyPatch) -> None:
    doc = _varied(_doc(list(range(5)), list(range(5))))
    if change == "no material":
        del doc["members"][2]["material"]
    elif change == "unknown section":
        doc["members"][2]["section"] = "zz"
    elif change == "alpha missing":
        doc["load_cases"][0]["temperature_changes"] = [{"member": 0, "delta": 5}]
    elif change == "inline E":
        doc["members"][2]["E"] = 5
    raw = json.dumps(doc).replace('"E": 70000000.0', '"E": 1e400').encode() if change == "E too large" else None
    outcome = _assert_equivalent(raw or json.dumps(doc).encode())
    general = _general(doc, monkeypatch) if raw is None else None
    if expected:
        assert outcome[0] == "problems"
        assert [(p, m) for p, m, _item in outcome[1]] == expected
        if general is not None:
            assert general == expected
    else:
        _assert_same(outcome[1], general)
        assert outcome[1].E.tolist() == [7e7, 2.1e8, 5.0, 7e7, 2.1e8]
