"""Every problem in an input file is reported, with a JSON path and plain words.

Each case starts from the contract's own example (``shared/FORMAT.md``, kept in
``tests/data/exchange/format_example_model.json``), breaks one rule, and names
the rule's source: FORMAT.md for the format, RFC 8259 for JSON, IEEE 754 for
the float64 range, or common practice.  The test asserts the path and a key
phrase, never the whole wording.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from audit import exchange
from audit.errors import InputError
from audit.exchange import load_model, parse_model, parse_results

DATA = Path(__file__).parent / "data" / "exchange"
Doc = dict[str, Any]


def example_doc() -> Doc:
    result: Doc = json.loads((DATA / "format_example_model.json").read_text())
    return result


def problems_of(call: Callable[[], object]) -> list[tuple[str, str]]:
    with pytest.raises(InputError) as exc:
        call()
    return [(p.path, p.message) for p in exc.value.problems]


def assert_reported(found: list[tuple[str, str]], expected: list[tuple[str, str]]) -> None:
    """Exactly the expected problems: same paths in the same (document) order, each message with its phrase."""
    assert [p for p, _ in found] == [p for p, _ in expected], found
    for (_, message), (_, phrase) in zip(found, expected, strict=True):
        assert phrase in message, (message, phrase)


# --- mutations of the example: (id, change, expected [(path, phrase)], source) -----------------------------
def _set(path: list[Any], value: Any) -> Callable[[Doc], None]:
    def change(doc: Doc) -> None:
        cur = doc
        for p in path[:-1]:
            cur = cur[p]
        cur[path[-1]] = value

    return change


def _del(path: list[Any]) -> Callable[[Doc], None]:
    def change(doc: Doc) -> None:
        cur = doc
        for p in path[:-1]:
            cur = cur[p]
        del cur[path[-1]]

    return change


def _all(*changes: Callable[[Doc], None]) -> Callable[[Doc], None]:
    def change(doc: Doc) -> None:
        for c in changes:
            c(doc)

    return change


CASES: list[tuple[str, Callable[[Doc], None], list[tuple[str, str]]]] = [
    # ----- shape (FORMAT.md tables; JSON Schema 2020-12 keywords type/required/additionalProperties/enum)
    ("misspelt-key", _set(["members", 3, "sectoin"], "tube"), [("members[3].sectoin", "unknown key 'sectoin'")]),
    ("missing-key", _del(["members", 2, "end"]), [("members[2].end", "required key 'end' is missing")]),
    ("string-for-number", _set(["nodes", 1, "x"], "4"), [("nodes[1].x", "expected a number, got a string")]),
    ("bool-for-number", _set(["members", 4, "E"], True), [("members[4].E", "expected a number, got true")]),
    ("wrong-format", _set(["format"], "truss-model"), [("format", 'must be "truss-audit-model"')]),
    ("wrong-version", _set(["version"], 2), [("version", "must be 1")]),
    ("version-as-float", _set(["version"], 1.0), [("version", "must be 1")]),
    ("bad-dimensions", _set(["dimensions"], 4), [("dimensions", "use one of 2, 3")]),
    ("unknown-length-unit", _set(["units", "length"], "metre"), [("units.length", "unknown length unit 'metre'")]),
    ("unknown-force-unit", _set(["units", "force"], "kgf"), [("units.force", "unknown force unit 'kgf'")]),
    ("missing-force-unit", _del(["units", "force"]), [("units.force", "required key 'force' is missing")]),
    ("bad-axis-name", _set(["supports", 0, "restrain", 1], "q"), [("supports[0].restrain[1]", "'q' is not allowed")]),
    (
        "short-direction",
        _set(["supports", 1, "restrain", 0, "direction"], [1]),
        [("supports[1].restrain[0].direction", "too few items")],
    ),
    ("empty-id", _set(["nodes", 0, "id"], ""), [("nodes[0].id", "must not be empty")]),
    ("float-id", _set(["nodes", 0, "id"], 1.5), [("nodes[0].id", "expected a string or an integer, got a number")]),
    ("nodes-not-array", _set(["nodes"], {}), [("nodes", "expected an array, got an object")]),
    # ----- ids and references (FORMAT.md: ids unique; integer id = its decimal string)
    ("duplicate-node-id", _set(["nodes", 1, "id"], "A"), None),  # expected built below
    (
        "integer-and-string-id-collide",
        _all(_set(["nodes", 0, "id"], 7), _set(["nodes", 1, "id"], "7")),
        None,
    ),
    ("duplicate-member-id", _set(["members", 4, "id"], 1), [("members[4].id", "duplicate member id '1'")]),
    (
        "case-and-combination-id-collide",
        _set(["combinations", 0, "id"], "snow"),
        [("combinations[0].id", "duplicate load case or combination id 'snow'")],
    ),
    ("unknown-end-node", _set(["members", 4, "end"], "Q"), [("members[4].end", "unknown node 'Q'")]),
    ("unknown-material", _set(["members", 0, "material"], "stel"), [("members[0].material", "unknown material")]),
    ("unknown-section", _set(["members", 1, "section"], "pipe"), [("members[1].section", "unknown section 'pipe'")]),
    ("unknown-support-node", _set(["supports", 1, "node"], "Z"), [("supports[1].node", "unknown node 'Z'")]),
    (
        "unknown-load-node",
        _set(["load_cases", 0, "loads", 0, "node"], "Z"),
        [("load_cases[0].loads[0].node", "unknown node")],
    ),
    (
        "unknown-temperature-member",
        _set(["load_cases", 1, "temperature_changes", 0, "member"], 9),
        [("load_cases[1].temperature_changes[0].member", "unknown member '9'")],
    ),
    (
        "combination-of-combination",
        lambda d: d["combinations"].append({"id": "c2", "factors": {"design": 1, "snow": 1}}),
        [("combinations[1].factors.design", "combinations of combinations are not allowed")],
    ),
    (
        "combination-unknown-case",
        _set(["combinations", 0, "factors", "wind"], 0.5),
        [("combinations[0].factors.wind", "unknown load case 'wind'")],
    ),
    # ----- geometry and properties (FORMAT.md; N = EA/L ... needs L > 0, E > 0, A > 0)
    (
        "start-equals-end",
        _set(["members", 4, "end"], "B"),
        [("members[4].end", "starts and ends at the same node 'B'")],
    ),
    ("coincident-nodes", _set(["nodes", 3, "y"], 0), None),
    ("negative-inline-E", _set(["members", 4, "E"], -2e8), [("members[4].E", "E must be positive")]),
    ("zero-inline-A", _set(["members", 4, "A"], 0), [("members[4].A", "A must be positive")]),
    ("zero-material-E", _set(["materials", "steel", "E"], 0), [("materials.steel.E", "E must be positive")]),
    ("negative-section-A", _set(["sections", "tube", "A"], -1e-3), [("sections.tube.A", "A must be positive")]),
    ("no-E-at-all", _del(["members", 4, "E"]), [("members[4]", "no E")]),
    ("no-A-at-all", _del(["members", 4, "A"]), [("members[4]", "no A")]),
    ("overflowing-number", _set(["nodes", 1, "x"], "@1e400"), [("nodes[1].x", "too large for a 64-bit float")]),
    ("overflowing-integer", _set(["materials", "steel", "E"], 10**400), [("materials.steel.E", "too large")]),
    # ----- dimensions (FORMAT.md: z exactly when dimensions is 3)
    ("z-in-2d", _set(["nodes", 0, "z"], 0), [("nodes[0].z", "not allowed in a 2D model")]),
    ("fz-in-2d", _set(["load_cases", 0, "loads", 0, "fz"], 1), [("load_cases[0].loads[0].fz", "not allowed in a 2D")]),
    (
        "axis-z-in-2d",
        _set(["supports", 0, "restrain", 1], "z"),
        [("supports[0].restrain[1]", "does not exist in a 2D")],
    ),
    (
        "direction-wrong-length",
        _set(["supports", 1, "restrain", 0, "direction"], [0, 1, 0]),
        [("supports[1].restrain[0].direction", "needs 2 components in a 2D model, got 3")],
    ),
    (
        "zero-direction",
        _set(["supports", 1, "restrain", 0, "direction"], [0, 0.0]),
        [("supports[1].restrain[0].direction", "zero vector")],
    ),
    # ----- supports (FORMAT.md: a node appears in at most one entry; springs have k)
    (
        "node-in-two-supports",
        _set(["supports", 1, "node"], "A"),
        [("supports[1].node", "already has a support entry (supports[0])")],
    ),
    (
        "same-axis-twice",
        _set(["supports", 0, "restrain"], ["x", "x"]),
        [("supports[0].restrain", "linearly dependent (x, x)")],
    ),
    (
        "axis-and-parallel-direction",
        _set(["supports", 0, "restrain"], ["y", {"direction": [0, -2]}]),
        [("supports[0].restrain", "linearly dependent")],
    ),
    (
        "three-restraints-in-2d",
        _set(["supports", 0, "restrain"], ["x", "y", {"direction": [1, 1]}]),
        [("supports[0].restrain", "linearly dependent")],
    ),
    (
        "negative-spring",
        _set(["supports", 1, "springs"], [{"axis": "x", "stiffness": -5}]),
        [("supports[1].springs[0].stiffness", "must not be negative")],
    ),
    (
        "spring-axis-and-direction",
        _set(["supports", 1, "springs"], [{"axis": "x", "direction": [1, 0], "stiffness": 5}]),
        [("supports[1].springs[0]", "exactly one of 'axis' and 'direction'")],
    ),
    (
        "support-without-restraint",
        _del(["supports", 1, "restrain"]),
        [("supports[1]", "needs 'restrain' or 'springs'")],
    ),
    # ----- temperature (FORMAT.md: units.temperature needed; alpha per temperature degree)
    (
        "temperature-without-unit",
        _del(["units", "temperature"]),
        [("load_cases[1].temperature_changes", "units.temperature")],
    ),
    (
        "temperature-without-alpha",
        _set(["load_cases", 1, "temperature_changes", 0, "member"], "5"),
        [("load_cases[1].temperature_changes[0].member", "no alpha")],
    ),
    # ----- support displacements (FORMAT.md: only on restrained directions)
    (
        "settlement-on-free-direction",
        _set(["load_cases", 0, "support_displacements"], [{"node": "C", "x": 0.01}]),
        [("load_cases[0].support_displacements[0].x", "not restrained along x")],
    ),
    (
        "settlement-on-free-node",
        _set(["load_cases", 0, "support_displacements"], [{"node": "D", "y": 0.01}]),
        [("load_cases[0].support_displacements[0].y", "not restrained along y")],
    ),
    (
        "settlement-direction-not-parallel",
        _set(["load_cases", 0, "support_displacements"], [{"node": "C", "direction": [1, 1], "value": 0.01}]),
        [("load_cases[0].support_displacements[0].value", "not restrained along dir(1,1)")],
    ),
    (
        "settlement-direction-without-value",
        _set(["load_cases", 0, "support_displacements"], [{"node": "C", "direction": [0, 1]}]),
        [("load_cases[0].support_displacements[0].value", "required key 'value' is missing")],
    ),
    (
        "settlement-given-twice",
        _set(["load_cases", 0, "support_displacements"], [{"node": "A", "y": 0.01}, {"node": "A", "y": 0.02}]),
        [("load_cases[0].support_displacements[1].y", "given twice")],
    ),
    # ----- source stiffness (FORMAT.md: dofs of known nodes, zero-based indices, full or upper)
    (
        "stiffness-problems",
        _set(
            ["stiffness"],
            {"dofs": [["B", "x"], ["Q", "y"], ["B", "x"]], "storage": "upper", "entries": [[0, 3, 1.0], [1, 0, 2.0]]},
        ),
        [
            ("stiffness.dofs[1][0]", "unknown node 'Q'"),
            ("stiffness.dofs[2]", "listed twice"),
            ("stiffness.entries[0][1]", "out of range"),
            ("stiffness.entries[1]", "below the diagonal"),
        ],
    ),
    (
        "stiffness-bad-storage",
        _set(["stiffness"], {"dofs": [], "storage": "lower", "entries": []}),
        [("stiffness.storage", "'lower' is not allowed")],
    ),
    (
        "stiffness-entry-too-long",
        _set(["stiffness"], {"dofs": [["B", "x"]], "storage": "full", "entries": [[0, 0, 1.0, 2.0]]}),
        [("stiffness.entries[0]", "exactly 3 expected")],
    ),
]


def _expected(case_id: str, expected: list[tuple[str, str]] | None) -> list[tuple[str, str]]:
    if expected is not None:
        return expected
    if case_id == "duplicate-node-id":
        # B renamed A: its members now meet an unknown node B as well
        return [
            ("nodes[1].id", "duplicate node id 'A' (first at nodes[0])"),
            ("members[0].end", "unknown node 'B'"),
            ("members[1].start", "unknown node 'B'"),
            ("members[4].start", "unknown node 'B'"),
        ]
    if case_id == "integer-and-string-id-collide":
        return [
            ("nodes[1].id", "duplicate node id '7'"),
            ("members[0].start", "unknown node 'A'"),
            ("members[0].end", "unknown node 'B'"),
            ("members[1].start", "unknown node 'B'"),
            ("members[2].start", "unknown node 'A'"),
            ("members[4].start", "unknown node 'B'"),
            ("supports[0].node", "unknown node 'A'"),
        ]
    if case_id == "coincident-nodes":
        # D moved onto B: members 3 (A-D) and 4 (D-C) lie along the chord, 5 (B-D) has zero length
        return [("members[4]", "zero length: its end nodes 'B' and 'D' are at the same point")]
    raise AssertionError(case_id)


def _dumps(doc: Doc) -> str:
    # "@text" marks a number to be written with exactly that text (e.g. 1e400, which json cannot emit)
    text = json.dumps(doc)
    return text.replace('"@', "").replace('00"', "00") if '"@' in text else text


@pytest.mark.parametrize(("case_id", "change", "expected"), CASES, ids=[c[0] for c in CASES])
def test_broken_example_reports_path_and_phrase(
    case_id: str, change: Callable[[Doc], None], expected: list[tuple[str, str]] | None
) -> None:
    doc = example_doc()
    change(doc)
    found = problems_of(lambda: parse_model(_dumps(doc), "m.json"))
    assert_reported(found, _expected(case_id, expected))


def test_every_problem_in_a_file_is_reported() -> None:
    # one misspelt key (shape) + one unknown node + one negative E (meaning): three problems, in file order
    found = problems_of(lambda: load_model(DATA / "three_errors.json"))
    assert_reported(
        found,
        [
            ("members[0].sectoin", "unknown key 'sectoin'"),
            ("members[1].end", "unknown node 'Q'"),
            ("members[2].E", "E must be positive"),
        ],
    )


def test_many_shape_problems_all_reported() -> None:
    doc = example_doc()
    doc["members"][3]["sectoin"] = "tube"
    del doc["members"][2]["end"]
    doc["nodes"][1]["x"] = "4"
    doc["units"]["length"] = "metre"
    found = problems_of(lambda: parse_model(json.dumps(doc)))
    assert [p for p, _ in found] == ["units.length", "nodes[1].x", "members[2].end", "members[3].sectoin"]


def test_error_text_names_file_path_and_message() -> None:
    with pytest.raises(InputError) as exc:
        load_model(DATA / "three_errors.json")
    lines = str(exc.value).splitlines()
    assert len(lines) == 3
    assert lines[1] == f"{DATA / 'three_errors.json'}: members[1].end (member '2'): unknown node 'Q'"
    assert exc.value.file == str(DATA / "three_errors.json")


# ------------------------------------------------------------------------------- JSON level (RFC 8259)
def test_duplicate_keys_nan_and_overflow_reported_together() -> None:
    # RFC 8259 section 4: names within an object SHOULD be unique; section 6: NaN/Infinity are not permitted;
    # IEEE 754 binary64 tops out near 1.8e308, so 1e400 cannot be represented
    found = problems_of(lambda: load_model(DATA / "duplicate_key_nan_overflow.json"))
    assert_reported(
        found,
        [
            ("nodes[1].y", "duplicate key 'y'"),
            ("members[0].E", "NaN is not a JSON number"),
            ("members[0].A", "too large for a 64-bit float"),
        ],
    )


@pytest.mark.parametrize("word", ["NaN", "Infinity", "-Infinity"])
def test_non_finite_literals_rejected_even_in_x_data(word: str) -> None:
    text = json.dumps(example_doc())[:-1] + f', "x-extra": [{word}]}}'
    assert_reported(problems_of(lambda: parse_model(text)), [("x-extra[0]", "not a JSON number")])


def test_syntax_error_has_line_and_column() -> None:
    found = problems_of(lambda: load_model(DATA / "syntax_error.json"))
    assert_reported(found, [("line 4, column 3", "invalid JSON")])


def test_not_utf8() -> None:
    # RFC 8259 section 8.1: JSON exchanged between systems is UTF-8
    found = problems_of(lambda: load_model(DATA / "not_utf8.json"))
    assert_reported(found, [("line 1, column 46", "not UTF-8")])


def test_deep_nesting_beyond_the_stack() -> None:
    # common practice: hostile nesting fails cleanly instead of overflowing the stack
    found = problems_of(lambda: parse_model("[" * 200_000 + "]" * 200_000))
    assert_reported(found, [("$", "nested too deeply")])


def test_nesting_beyond_the_stated_limit() -> None:
    depth = exchange.MAX_DEPTH + 5
    text = json.dumps(example_doc())[:-1] + ', "x-deep": ' + "[" * depth + "]" * depth + "}"
    found = problems_of(lambda: parse_model(text))
    assert len(found) == 1
    assert found[0][0].startswith("x-deep[0][0]")
    assert "the limit is 64 levels" in found[0][1]


def test_nesting_within_the_limit_is_accepted() -> None:
    depth = exchange.MAX_DEPTH - 2  # the document object and x-deep's own array count too
    text = json.dumps(example_doc())[:-1] + ', "x-deep": ' + "[" * depth + "]" * depth + "}"
    assert parse_model(text).n_members == 5


def test_too_many_members(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(exchange, "MAX_ITEMS", 4)
    found = problems_of(lambda: parse_model(json.dumps(example_doc())))
    assert_reported(found, [("members", "too many members: 5, the limit is 4")])


def test_file_too_large(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(exchange, "MAX_BYTES", 100)
    found = problems_of(lambda: load_model(DATA / "format_example_model.json"))
    assert_reported(found, [("$", "too large")])
    found = problems_of(lambda: parse_model(json.dumps(example_doc())))
    assert_reported(found, [("$", "too large")])


def test_top_level_not_an_object() -> None:
    assert_reported(problems_of(lambda: parse_model("[1, 2]")), [("$", "expected an object, got an array")])


def test_missing_file() -> None:
    assert_reported(problems_of(lambda: load_model(DATA / "absent.json")), [("$", "not found")])


# --------------------------------------------------------------------------------------- results
@pytest.fixture
def model() -> Any:
    return load_model(DATA / "format_example_model.json")


def _results(cases: Doc, **extra: Any) -> str:
    return json.dumps({"format": "truss-audit-results", "version": 1, **extra, "cases": cases})


def test_results_unknown_case_node_member_axis(model: Any) -> None:
    # FORMAT.md: cases name load cases or combinations; components are the model's axes
    text = _results(
        {
            "snow": {"displacements": {"Q": {"x": 1}, "B": {"z": 1}}, "axial_forces": {"9": 1}},
            "wind": {"reactions": {"A": {"y": 1}}},
        }
    )
    found = problems_of(lambda: parse_results(text, model))
    assert_reported(
        found,
        [
            ("cases.snow.displacements.Q", "unknown node 'Q'"),
            ("cases.snow.displacements.B.z", "axis 'z' does not exist in a 2D model"),
            ('cases.snow.axial_forces["9"]', "unknown member '9'"),
            ("cases.wind", "unknown load case or combination 'wind'"),
        ],
    )


def test_results_shape_problems(model: Any) -> None:
    text = _results(
        {"snow": {"axial_forces": {"1": "8.3"}, "reactions": {"A": {"w": 1}}, "moments": {}}},
        sign_convention="compression",
        units={"length": "yard"},
    )
    found = problems_of(lambda: parse_results(text, model))
    assert_reported(
        found,
        [
            ("sign_convention", "'compression' is not allowed"),
            ("units.length", "unknown length unit 'yard'"),
            ('cases.snow.axial_forces["1"]', "expected a number, got a string"),
            ("cases.snow.reactions.A.w", "unknown key 'w'"),
            ("cases.snow.moments", "unknown key 'moments'"),
        ],
    )


def test_results_file_needs_format_and_version(model: Any) -> None:
    found = problems_of(lambda: parse_results(json.dumps({"cases": {}}), model))
    assert_reported(found, [("format", "required key 'format'"), ("version", "required key 'version'")])


def test_results_inside_model_must_not_carry_format(model: Any) -> None:
    # FORMAT.md: results inside the model are "as in the results file below without format/version"
    doc = example_doc()
    doc["results"] = {"format": "truss-audit-results", "cases": {"snow": {"axial_forces": {"1": 1, "7": 2}}}}
    found = problems_of(lambda: parse_model(json.dumps(doc)))
    assert_reported(
        found,
        [("results.format", "unknown key 'format'"), ('results.cases.snow.axial_forces["7"]', "unknown member '7'")],
    )


def test_large_member_list_with_one_bad_item_reports_it() -> None:
    # the bulk path for big arrays must still find the one bad item, by its index
    doc = example_doc()
    nodes = [{"id": i, "x": i, "y": i % 3} for i in range(3000)]
    members = [{"id": i, "start": i, "end": i + 1, "E": 1, "A": 1} for i in range(2999)]
    members[2500]["E"] = "1"
    members[2600]["x-note"] = {"deep": [1]}
    doc.update(nodes=nodes, members=members, supports=[], load_cases=[], combinations=[])
    found = problems_of(lambda: parse_model(json.dumps(doc)))
    assert_reported(found, [("members[2500].E", "expected a number, got a string")])


# ------------------------------------------------------ the bulk shape check never lets a bad item through
_json_scalars = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(-(10**20), 10**20),
    st.floats(allow_nan=False, allow_infinity=False),
    st.sampled_from(["", "A", "x", "y", "z", "steel", "7"]),
)
_json_values = st.recursive(_json_scalars, lambda inner: st.lists(inner, max_size=3), max_leaves=6)
_keys = st.sampled_from(
    [
        *("id", "x", "y", "z", "start", "end", "E", "A", "alpha", "material", "section", "node", "fx", "fy", "fz"),
        *("member", "delta", "value", "restrain", "x-note", "X", "direction"),
    ]
)

# (definition, bulk check, a valid item that random keys then change)
BULK_CHECKS: list[tuple[str, Any, Doc]] = [
    ("model#node", exchange._bulk_node, {"id": "A", "x": 1, "y": 2.5}),
    ("model#member", exchange._bulk_member, {"id": 1, "start": "A", "end": "B"}),
    ("model#load", exchange._bulk_load, {"node": "A"}),
    ("model#temperature_change", exchange._bulk_temperature, {"member": 1, "delta": 1}),
    ("model#length_error", exchange._bulk_length_error, {"member": 1, "value": 1}),
    ("model#support_displacement", exchange._bulk_support_displacement, {"node": "A"}),
    ("model#support", exchange._bulk_supports, {"node": "A"}),
    ("results#components", exchange._bulk_components, {}),
]


@settings(max_examples=300, deadline=None)
@given(item=st.dictionaries(_keys, _json_values, max_size=6), which=st.sampled_from(range(len(BULK_CHECKS))))
def test_bulk_check_implies_schema_valid(item: Doc, which: int) -> None:
    # the schema (JSON Schema 2020-12) is the authority; the bulk check may only be stricter
    ref, bulk, valid = BULK_CHECKS[which]
    parsed = exchange._read_json(json.dumps({**valid, **item}), "t").doc  # numbers as the reader holds them
    if bulk([parsed], None):
        assert list(exchange._validator(ref).iter_errors(parsed)) == []


@settings(max_examples=200, deadline=None)
@given(st.lists(st.lists(_json_scalars, max_size=4), max_size=4))
def test_bulk_check_of_stiffness_entries_implies_schema_valid(entries: list[Any]) -> None:
    parsed = exchange._read_json(json.dumps(entries), "t").doc
    if exchange._bulk_entries(parsed, None):
        for e in parsed:
            assert list(exchange._validator("model#entry").iter_errors(e)) == []
    if exchange._bulk_dofs(parsed, None):
        for e in parsed:
            assert list(exchange._validator("model#dof").iter_errors(e)) == []


# ------------------------------------------------------------------------ items named by id as well as position
def _zero_length(doc: Doc) -> None:
    doc["nodes"][3]["x"], doc["nodes"][3]["y"] = 4, 0  # D onto B: member 5 (B-D) has no length


def _nodes_duplicate(doc: Doc) -> None:
    doc["nodes"][2]["id"] = "A"


@pytest.mark.parametrize(
    ("change", "line"),
    [
        (_zero_length, "members[4] (member '5'): zero length: its end nodes 'B' and 'D' are at the same point"),
        (_set(["members", 1, "end"], "Q"), "members[1].end (member '2'): unknown node 'Q'"),
        (_set(["nodes", 1, "x"], "four"), "nodes[1].x (node 'B'): "),
        (_set(["supports", 1, "restrain"], ["w"]), "supports[1].restrain[0] (support at node 'C'): "),
        (
            _set(["load_cases", 0, "loads", 0, "fy"], "x"),
            "load_cases[0].loads[0].fy (load case 'snow', load at node 'D'): ",
        ),
        (
            _set(["load_cases", 1, "temperature_changes", 0, "member"], "9"),
            "load_cases[1].temperature_changes[0].member (load case 'heat', temperature change of member '9'): ",
        ),
        (_set(["combinations", 0, "factors", "snow"], "x"), "combinations[0].factors.snow (combination 'design'): "),
    ],
    ids=["member-zero-length", "member-unknown-node", "node", "support", "load", "temperature-change", "combination"],
)
def test_an_item_found_by_position_is_also_named_by_its_id(change: Callable[[Doc], None], line: str) -> None:
    """The issue's wording: ``members[3] (member '9'): zero length ...``; the JSON path itself stays a pure path."""
    doc = example_doc()
    change(doc)
    with pytest.raises(InputError) as exc:
        parse_model(json.dumps(doc), "m.json")
    lines = str(exc.value).splitlines()
    assert any(ln.startswith(f"m.json: {line}") for ln in lines), lines
    assert all("(" not in p.path for p in exc.value.problems)


def test_an_item_without_a_usable_id_is_named_by_position_only() -> None:
    doc = example_doc()
    del doc["nodes"][1]["id"]
    with pytest.raises(InputError) as exc:
        parse_model(json.dumps(doc), "m.json")
    assert [(p.path, p.item) for p in exc.value.problems][:1] == [("nodes[1].id", "")]


def test_results_entries_are_named_by_their_ids_in_the_path() -> None:
    """Results are maps keyed by case, node and member id (FORMAT.md), so their paths already name the item."""
    model = parse_model(json.dumps(example_doc()), "m.json")
    results = {"format": "truss-audit-results", "version": 1, "cases": {"snow": {"axial_forces": {"3": "x"}}}}
    found = problems_of(lambda: parse_results(json.dumps(results), model, "r.json"))
    assert found[0][0] == 'cases.snow.axial_forces["3"]'
