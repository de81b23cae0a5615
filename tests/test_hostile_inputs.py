"""Hostile input: everything that is not a valid model or results file is refused cleanly.

For each input below, ``check`` and ``solve`` must exit with code 2, print one
message per problem that names the file and the place in it (a JSON path such
as ``members[3].end``, ``$`` for the whole document, or ``line 4, column 7``),
print no traceback, write no output, and leave the input files byte for byte
and modification time as they were.  The valid base model is the example of
the exchange contract (``shared/FORMAT.md``), kept in ``fuzz/corpus``.

The cases are the classic ways a JSON reader is broken (common practice for
robust parsers; see also RFC 8259, *The JavaScript Object Notation (JSON)
Data Interchange Format*, §6 on numbers that JSON cannot represent and §8.1 on
UTF-8 and the byte-order mark) plus the ways a truss model can refer to
nothing or contradict itself (ids, references, dimensions: the exchange
contract).
"""

from __future__ import annotations

import copy
import io
import json
import os
import re
import subprocess
import sys
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

from audit import cli

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT / "fuzz" / "corpus"

#: a place in an input file, as the reader names it: ``$``, ``line 4, column 7`` or a JSON path such as
#: ``members[3].end``, ``cases.snow.axial_forces["99"]`` or ``["odd key"].x``
PLACE = re.compile(
    r'^(\$|line \d+(, column \d+)?|([A-Za-z_][\w-]*|\["(\\.|[^"\\])*"\])(\[\d+\]|\.[\w-]+|\["(\\.|[^"\\])*"\])*)'
    r"( \([a-z ]+ .*\))?(?=: )"
)  # a JSON path, then the item it points at by id when it has one: members[3] (member '9')


# --------------------------------------------------------------------------- helpers
def base_model() -> dict[str, Any]:
    """The contract's example model (plane truss, 2 load cases, 1 combination)."""
    return json.loads((CORPUS / "boathouse.model.json").read_text(encoding="utf-8"))


def base_results() -> dict[str, Any]:
    """Correct results for the base model's ``snow`` case, derived by the method of joints.

    Nodes A(0,0), B(4,0), C(8,0), D(4,3), load 12.5 kN down at D.  By symmetry
    the reactions are 6.25 kN up at A and C; joint B gives N5 = 0; joint D gives
    N3 = N4 = -12.5 / (2 * 3/5) = -10.4167 kN; joint A gives N1 = -N3 * 4/5 =
    8.3333 kN (common practice: the method of joints, e.g. Hibbeler,
    *Structural Analysis*, 8th ed., §3.4).
    """
    return {
        "format": "truss-audit-results",
        "version": 1,
        "source": "method of joints, by hand",
        "cases": {
            "snow": {
                "axial_forces": {"1": 8.3333, "2": 8.3333, "3": -10.4167, "4": -10.4167, "5": 0.0},
                "reactions": {"A": {"x": 0.0, "y": 6.25}, "C": {"y": 6.25}},
            }
        },
    }


def dumps(doc: Any) -> bytes:
    return json.dumps(doc, indent=1).encode("utf-8")


def with_raw(doc: dict[str, Any], setter: Callable[[dict[str, Any]], None], raw: str) -> bytes:
    """``doc`` serialised with the JSON text ``raw`` (possibly not valid JSON) where ``setter`` put a hole."""
    d = copy.deepcopy(doc)
    setter(d)
    text = json.dumps(d, indent=1)
    assert text.count('"@HOLE@"') == 1
    return text.replace('"@HOLE@"', raw).encode("utf-8")


def mutated(change: Callable[[dict[str, Any]], object], base: Callable[[], dict[str, Any]] = base_model) -> bytes:
    doc = base()
    change(doc)
    return dumps(doc)


def snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    """Every file under ``folder``: its bytes and modification time in ns."""
    return {
        str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_mtime_ns)
        for p in sorted(folder.rglob("*"))
        if p.is_file() and not p.is_symlink()
    }


def run_cli(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv, out=out, err=err)
    return code, out.getvalue(), err.getvalue()


def assert_refused(code: int, out: str, err: str, files: list[str]) -> list[str]:
    """Exit 2, no traceback, and every stderr line names one of ``files`` and a place in it."""
    assert code == 2, f"exit code {code}, stderr:\n{err}\nstdout:\n{out}"
    assert "Traceback" not in err
    assert "Traceback" not in out
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert lines, "no message on stderr"
    for line in lines:
        named = [f for f in files if line.startswith(f + ": ")]
        assert named, f"message does not start with the file it is about ({files}): {line!r}"
        rest = line[len(named[0]) + 2 :]
        assert PLACE.match(rest), f"message does not name a place (JSON path, $ or line/column): {line!r}"
    return lines


def refused_both_ways(tmp_path: Path, model: bytes, expect: tuple[str, ...]) -> None:
    """Run ``check`` and ``solve`` on ``model``; both must refuse it cleanly and name ``expect``."""
    model_path = tmp_path / "model.json"
    model_path.write_bytes(model)
    before = snapshot(tmp_path)
    for argv in (
        ["check", str(model_path), "--quiet"],
        ["solve", str(model_path), "-o", str(tmp_path / "solved.json")],
    ):
        code, out, err = run_cli(argv)
        assert_refused(code, out, err, [str(model_path)])
        for fragment in expect:
            assert any(alt in err for alt in fragment.split("|")), f"{argv[0]}: expected {fragment!r} in:\n{err}"
        assert snapshot(tmp_path) == before, f"{argv[0]} changed or wrote a file"


def _set(path: tuple[Any, ...], value: Any) -> Callable[[dict[str, Any]], None]:
    def change(doc: dict[str, Any]) -> None:
        target: Any = doc
        for key in path[:-1]:
            target = target[key]
        target[path[-1]] = value

    return change


def _delete(path: tuple[Any, ...]) -> Callable[[dict[str, Any]], None]:
    def change(doc: dict[str, Any]) -> None:
        target: Any = doc
        for key in path[:-1]:
            target = target[key]
        del target[path[-1]]

    return change


def _nested(depth: int, open_: str = "[", close: str = "]") -> str:
    return open_ * depth + close * depth


# --------------------------------------------------------------------------- text-level cases
@dataclass(frozen=True)
class Case:
    id: str
    data: bytes
    #: fragments the message must contain (the JSON path of the problem, usually)
    expect: tuple[str, ...] = ()


VALID = dumps(base_model())

TEXT_CASES = [
    Case("not-json", b"this is not JSON at all\n"),
    Case("truncated-half", VALID[: len(VALID) // 2]),
    Case("truncated-last-brace", VALID.rstrip()[:-1]),
    Case("empty", b""),
    Case("whitespace-only", b" \n\t\r\n "),
    Case("binary", bytes(range(256)) * 8),
    Case("nul-bytes", b"\x00" * 100),
    Case("gzip-magic", b"\x1f\x8b\x08\x00" + bytes(60)),
    Case("invalid-utf8-in-title", VALID.replace(b"Boathouse", b"Boat\xff\xfehouse")),
    Case("utf16-with-bom", "\ufeff".encode("utf-16-le") + VALID.decode().encode("utf-16-le")),
    Case("two-documents", VALID + VALID),
    Case("trailing-garbage", VALID + b" ]"),
    Case("top-level-array", b"[1, 2, 3]"),
    Case("top-level-string", b'"truss-audit-model"'),
    Case("top-level-null", b"null"),
    Case("top-level-number", b"42"),
    Case(
        "nan-literal-coordinate",
        with_raw(base_model(), _set(("nodes", 1, "x"), "@HOLE@"), "NaN"),
        ("nodes[1].x",),
    ),
    Case(
        "infinity-literal-modulus",
        with_raw(base_model(), _set(("members", 4, "E"), "@HOLE@"), "Infinity"),
        ("members[4].E",),
    ),
    Case(
        "minus-infinity-load",
        with_raw(base_model(), _set(("load_cases", 0, "loads", 0, "fy"), "@HOLE@"), "-Infinity"),
        ("load_cases[0].loads[0].fy",),
    ),
    Case(
        "overflowing-float",
        with_raw(base_model(), _set(("nodes", 3, "y"), "@HOLE@"), "1e999"),
        ("nodes[3].y",),
    ),
    Case(
        "overflowing-negative-float",
        with_raw(base_model(), _set(("members", 4, "A"), "@HOLE@"), "-2.5e400"),
        ("members[4].A",),
    ),
    Case(
        "integer-of-5000-digits",
        with_raw(base_model(), _set(("nodes", 2, "x"), "@HOLE@"), "8" + "0" * 5000),
        ("nodes[2].x",),
    ),
    Case(
        "integer-of-500000-digits",
        with_raw(base_model(), _set(("nodes", 2, "x"), "@HOLE@"), "9" * 500_000),
    ),
    Case(
        "underflow-to-zero-modulus",
        with_raw(base_model(), _set(("members", 4, "E"), "@HOLE@"), "1e-400"),
        ("members[4].E",),
    ),
    Case("deep-arrays-100000", with_raw(base_model(), _set(("x-deep",), "@HOLE@"), _nested(100_000))),
    Case(
        "deep-objects-100000",
        with_raw(base_model(), _set(("x-deep",), "@HOLE@"), '{"a":' * 100_000 + "1" + "}" * 100_000),
    ),
    Case("deep-arrays-in-title", with_raw(base_model(), _set(("title",), "@HOLE@"), _nested(5000))),
    Case(
        "duplicate-key-in-node",
        VALID.replace(b'"x": 4,', b'"x": 4, "x": 40,', 1),
        ("nodes[1]",),
    ),
]


@pytest.mark.parametrize("case", TEXT_CASES, ids=[c.id for c in TEXT_CASES])
def test_text_level_input_is_refused(tmp_path: Path, case: Case) -> None:
    refused_both_ways(tmp_path, case.data, case.expect)


# --------------------------------------------------------------------------- structure-level cases
def _two(
    first: Callable[[dict[str, Any]], None], second: Callable[[dict[str, Any]], None]
) -> Callable[[dict[str, Any]], None]:
    def change(doc: dict[str, Any]) -> None:
        first(doc)
        second(doc)

    return change


def _append(path: tuple[Any, ...], value: Any) -> Callable[[dict[str, Any]], None]:
    def change(doc: dict[str, Any]) -> None:
        target: Any = doc
        for key in path:
            target = target[key]
        target.append(value)

    return change


STRUCTURE_CASES: list[tuple[str, Callable[[dict[str, Any]], None], tuple[str, ...]]] = [
    # header
    ("format-missing", _delete(("format",)), ("format",)),
    ("format-is-results", _set(("format",), "truss-audit-results"), ("format",)),
    ("format-misspelt", _set(("format",), "truss-audit-modle"), ("format",)),
    ("version-2", _set(("version",), 2), ("version",)),
    ("version-string", _set(("version",), "1"), ("version",)),
    ("version-true", _set(("version",), True), ("version",)),
    ("dimensions-4", _set(("dimensions",), 4), ("dimensions",)),
    ("dimensions-string", _set(("dimensions",), "2"), ("dimensions",)),
    ("dimensions-missing", _delete(("dimensions",)), ("dimensions",)),
    ("title-number", _set(("title",), 12), ("title",)),
    ("unknown-top-level-key", _set(("nodse",), []), ("nodse",)),
    # units
    ("units-missing", _delete(("units",)), ("units",)),
    ("length-unit-unknown", _set(("units", "length"), "furlong"), ("units.length",)),
    ("force-unit-number", _set(("units", "force"), 1000), ("units.force",)),
    ("temperature-unit-missing-with-temperature-changes", _delete(("units", "temperature")), ("units|temperature",)),
    ("unknown-key-in-units", _set(("units", "time"), "s"), ("units",)),
    # nodes
    ("nodes-not-a-list", _set(("nodes",), {"A": [0, 0]}), ("nodes",)),
    ("node-not-an-object", _set(("nodes", 0), [0, 0]), ("nodes[0]",)),
    ("node-id-missing", _delete(("nodes", 0, "id")), ("nodes[0]",)),
    ("node-id-list", _set(("nodes", 0, "id"), ["A"]), ("nodes[0].id",)),
    ("node-id-null", _set(("nodes", 0, "id"), None), ("nodes[0].id",)),
    ("node-id-float", _set(("nodes", 0, "id"), 1.5), ("nodes[0].id",)),
    ("node-id-boolean", _set(("nodes", 0, "id"), True), ("nodes[0].id",)),
    ("node-x-string", _set(("nodes", 1, "x"), "4"), ("nodes[1].x",)),
    ("node-x-boolean", _set(("nodes", 1, "x"), True), ("nodes[1].x",)),
    ("node-x-null", _set(("nodes", 1, "x"), None), ("nodes[1].x",)),
    ("node-y-missing", _delete(("nodes", 2, "y")), ("nodes[2]",)),
    ("node-z-in-a-plane-truss", _set(("nodes", 2, "z"), 0), ("nodes[2]",)),
    ("unknown-key-in-node", _set(("nodes", 2, "X"), 1), ("nodes[2]",)),
    # ids
    (
        "node-ids-collide-int-and-string",
        _two(_set(("nodes", 0, "id"), 7), _set(("nodes", 1, "id"), "7")),
        ("nodes[1]",),
    ),
    ("node-ids-duplicate", _set(("nodes", 1, "id"), "A"), ("nodes[1]",)),
    ("member-ids-collide-int-and-string", _set(("members", 1, "id"), 1), ("members[1]",)),
    ("case-and-combination-ids-collide", _set(("combinations", 0, "id"), "snow"), ("combinations[0]",)),
    (
        "case-ids-collide-int-and-string",
        _two(_set(("load_cases", 0, "id"), 3), _set(("load_cases", 1, "id"), "3")),
        ("load_cases[1]",),
    ),
    # members
    ("members-missing", _delete(("members",)), ("members",)),
    ("member-start-to-nothing", _set(("members", 0, "start"), "Z"), ("members[0].start",)),
    ("member-end-missing", _delete(("members", 2, "end")), ("members[2]",)),
    ("member-end-is-a-list", _set(("members", 2, "end"), ["D"]), ("members[2].end",)),
    ("member-material-to-nothing", _set(("members", 0, "material"), "oak"), ("members[0].material",)),
    ("member-section-to-nothing", _set(("members", 0, "section"), "pipe"), ("members[0].section",)),
    ("member-without-modulus", _delete(("members", 4, "E")), ("members[4]",)),
    ("member-modulus-string", _set(("members", 4, "E"), "2e8"), ("members[4].E",)),
    ("member-area-negative", _set(("members", 4, "A"), -8.0e-4), ("members[4].A",)),
    ("member-area-zero", _set(("members", 4, "A"), 0), ("members[4].A",)),
    ("member-modulus-zero", _set(("materials", "steel", "E"), 0), ("materials",)),
    ("member-to-itself", _set(("members", 4, "end"), "B"), ("members[4]",)),
    ("member-of-zero-length", _two(_set(("nodes", 3, "x"), 4), _set(("nodes", 3, "y"), 0)), ("members[4]|nodes[3]",)),
    ("unknown-key-in-member", _set(("members", 0, "Area"), 1), ("members[0]",)),
    ("materials-is-a-list", _set(("materials",), [{"E": 2e8}]), ("materials",)),
    ("section-area-string", _set(("sections", "tube", "A"), "big"), ("sections",)),
    # supports
    ("support-node-to-nothing", _set(("supports", 0, "node"), "Q"), ("supports[0].node",)),
    ("restrain-is-a-string", _set(("supports", 0, "restrain"), "xy"), ("supports[0].restrain",)),
    ("restrain-unknown-axis", _set(("supports", 0, "restrain"), ["x", "w"]), ("supports[0].restrain[1]",)),
    ("restrain-z-in-a-plane-truss", _set(("supports", 0, "restrain"), ["x", "z"]), ("supports[0].restrain[1]",)),
    (
        "restrain-zero-direction",
        _set(("supports", 1, "restrain"), [{"direction": [0, 0]}]),
        ("supports[1].restrain[0]",),
    ),
    (
        "restrain-direction-of-three-in-2d",
        _set(("supports", 1, "restrain"), [{"direction": [0, 1, 0]}]),
        ("supports[1].restrain[0]",),
    ),
    (
        "restrain-direction-nan-text",
        _set(("supports", 1, "restrain"), [{"direction": ["NaN", 1]}]),
        ("supports[1].restrain[0]",),
    ),
    (
        "spring-negative",
        _append(("supports",), {"node": "D", "springs": [{"axis": "x", "stiffness": -5}]}),
        ("supports[2]",),
    ),
    ("support-node-twice", _append(("supports",), {"node": "A", "restrain": ["x"]}), ("supports[2]",)),
    # load cases
    ("load-on-nothing", _set(("load_cases", 0, "loads", 0, "node"), "Q"), ("load_cases[0].loads[0].node",)),
    ("load-component-string", _set(("load_cases", 0, "loads", 0, "fy"), "-12.5"), ("load_cases[0].loads[0].fy",)),
    ("load-fz-in-a-plane-truss", _set(("load_cases", 0, "loads", 0, "fz"), 1.0), ("load_cases[0].loads[0]",)),
    ("loads-is-an-object", _set(("load_cases", 0, "loads"), {"node": "D"}), ("load_cases[0].loads",)),
    (
        "temperature-change-on-nothing",
        _set(("load_cases", 1, "temperature_changes", 0, "member"), "99"),
        ("load_cases[1].temperature_changes[0].member",),
    ),
    (
        "temperature-delta-null",
        _set(("load_cases", 1, "temperature_changes", 0, "delta"), None),
        ("load_cases[1].temperature_changes[0].delta",),
    ),
    (
        "length-error-on-nothing",
        _set(("load_cases", 1, "length_errors"), [{"member": "nine", "value": 0.001}]),
        ("load_cases[1].length_errors[0].member",),
    ),
    (
        "settlement-on-a-free-node",
        _set(("load_cases", 1, "support_displacements"), [{"node": "D", "y": -0.01}]),
        ("load_cases[1].support_displacements[0]",),
    ),
    (
        "settlement-on-a-free-direction",
        _set(("load_cases", 1, "support_displacements"), [{"node": "C", "x": -0.01}]),
        ("load_cases[1].support_displacements[0]",),
    ),
    ("unknown-key-in-load-case", _set(("load_cases", 0, "wind"), []), ("load_cases[0]",)),
    # combinations
    (
        "combination-of-nothing",
        _set(("combinations", 0, "factors"), {"snow": 1.5, "wind": 1.0}),
        ("combinations[0].factors",),
    ),
    (
        "combination-of-a-combination",
        _append(("combinations",), {"id": "outer", "factors": {"design": 1.0}}),
        ("combinations[1].factors",),
    ),
    ("combination-factors-list", _set(("combinations", 0, "factors"), [["snow", 1.5]]), ("combinations[0].factors",)),
    ("combination-factor-string", _set(("combinations", 0, "factors", "snow"), "1.5"), ("combinations[0].factors",)),
    # embedded results and source stiffness
    ("results-not-an-object", _set(("results",), [1, 2]), ("results",)),
    ("results-case-to-nothing", _set(("results",), {"cases": {"wind": {"axial_forces": {"1": 1.0}}}}), ("results",)),
    (
        "stiffness-dof-to-nothing",
        _set(("stiffness",), {"dofs": [["Q", "x"]], "storage": "full", "entries": [[0, 0, 1.0]]}),
        ("stiffness",),
    ),
    (
        "stiffness-entry-out-of-range",
        _set(("stiffness",), {"dofs": [["D", "x"]], "storage": "full", "entries": [[0, 3, 1.0]]}),
        ("stiffness",),
    ),
    (
        "stiffness-storage-unknown",
        _set(("stiffness",), {"dofs": [["D", "x"]], "storage": "lower", "entries": [[0, 0, 1.0]]}),
        ("stiffness",),
    ),
]


@pytest.mark.parametrize(("change", "expect"), [c[1:] for c in STRUCTURE_CASES], ids=[c[0] for c in STRUCTURE_CASES])
def test_invalid_model_is_refused(
    tmp_path: Path, change: Callable[[dict[str, Any]], None], expect: tuple[str, ...]
) -> None:
    refused_both_ways(tmp_path, mutated(change), expect)


@pytest.mark.parametrize(
    "mistakes",
    [
        ((("nodes", 1, "x"), "four"), (("members", 2, "E"), "big"), (("load_cases", 0, "loads", 0, "fy"), None)),
        ((("members", 0, "start"), "Z"), (("supports", 0, "node"), "Q"), (("load_cases", 0, "loads", 0, "node"), "P")),
    ],
    ids=["three-wrong-types", "three-references-to-nothing"],
)
def test_every_problem_gets_its_own_message(tmp_path: Path, mistakes: tuple[tuple[tuple[Any, ...], Any], ...]) -> None:
    """Three independent mistakes of one kind: three messages, each naming its own place.

    (The reader checks shape before meaning, so mistakes of both kinds at once are reported shape first.)
    """
    doc = base_model()
    for where, value in mistakes:
        _set(where, value)(doc)
    path = tmp_path / "model.json"
    path.write_bytes(dumps(doc))
    code, out, err = run_cli(["check", str(path), "--quiet"])
    lines = assert_refused(code, out, err, [str(path)])
    for where, _value in mistakes:
        place = "".join(f"[{k}]" if isinstance(k, int) else f".{k}" for k in where).lstrip(".")
        assert sum(f": {place}: " in ln or f": {place} (" in ln for ln in lines) == 1, f"{place} not named once:\n{err}"


# --------------------------------------------------------------------------- files that are not files
def test_missing_model_file(tmp_path: Path) -> None:
    missing = str(tmp_path / "nowhere.json")
    for argv in (["check", missing], ["solve", missing, "-o", str(tmp_path / "o.json")]):
        code, out, err = run_cli(argv)
        assert_refused(code, out, err, [missing])
    assert list(tmp_path.iterdir()) == []


def test_folder_given_to_solve(tmp_path: Path) -> None:
    folder = tmp_path / "models.json"
    folder.mkdir()
    code, out, err = run_cli(["solve", str(folder), "-o", str(tmp_path / "o.json")])
    assert_refused(code, out, err, [str(folder)])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["models.json"]


def test_folder_given_as_results(tmp_path: Path) -> None:
    model = tmp_path / "model.json"
    model.write_bytes(VALID)
    folder = tmp_path / "results"
    folder.mkdir()
    before = snapshot(tmp_path)
    code, out, err = run_cli(["check", str(model), "--results", str(folder)])
    assert_refused(code, out, err, [str(folder)])
    assert snapshot(tmp_path) == before


def test_empty_folder_given_to_check(tmp_path: Path) -> None:
    """A folder with no model in it is a usage error (exit 2), with a message and no traceback."""
    code, _out, err = run_cli(["check", str(tmp_path)])
    assert code == 2
    assert err.strip()
    assert "Traceback" not in err


def test_byte_order_mark_is_accepted(tmp_path: Path) -> None:
    """A UTF-8 byte-order mark is not part of the text (RFC 8259 §8.1 allows a reader to ignore it)."""
    model = tmp_path / "model.json"
    model.write_bytes(b"\xef\xbb\xbf" + VALID)
    results = tmp_path / "model.results.json"
    results.write_bytes(b"\xef\xbb\xbf" + dumps(base_results()))
    before = snapshot(tmp_path)
    code, _out, err = run_cli(["check", str(model), "--results", str(results), "--quiet"])
    assert code == 0, err
    assert snapshot(tmp_path) == before
    solved = tmp_path / "solved.json"
    code, _out, err = run_cli(["solve", str(model), "-o", str(solved)])
    assert code == 0, err
    assert json.loads(solved.read_text(encoding="utf-8"))["format"] == "truss-audit-results"


# --------------------------------------------------------------------------- results files
def _results_change(change: Callable[[dict[str, Any]], None]) -> bytes:
    return mutated(change, base_results)


RESULTS_CASES: list[tuple[str, bytes, tuple[str, ...]]] = [
    ("not-json", b"{'cases': {}}", ()),
    ("empty", b"", ()),
    ("truncated", dumps(base_results())[:60], ()),
    ("binary", bytes(range(255, -1, -1)) * 4, ()),
    ("a-model-not-results", VALID, ("format",)),
    ("cases-missing", _results_change(_delete(("cases",))), ("cases",)),
    ("cases-list", _results_change(_set(("cases",), [{"snow": {}}])), ("cases",)),
    ("case-to-nothing", _results_change(_set(("cases", "wind"), {"axial_forces": {"1": 1.0}})), ("cases",)),
    (
        "axial-force-of-nothing",
        _results_change(_set(("cases", "snow", "axial_forces", "99"), 1.0)),
        ("cases.snow.axial_forces",),
    ),
    (
        "axial-force-string",
        _results_change(_set(("cases", "snow", "axial_forces", "1"), "8.3")),
        ("cases.snow.axial_forces",),
    ),
    (
        "axial-force-nan-literal",
        with_raw(base_results(), _set(("cases", "snow", "axial_forces", "2"), "@HOLE@"), "NaN"),
        ("cases.snow.axial_forces",),
    ),
    (
        "reaction-at-nothing",
        _results_change(_set(("cases", "snow", "reactions", "Q"), {"y": 1.0})),
        ("cases.snow.reactions",),
    ),
    (
        "reaction-z-in-a-plane-truss",
        _results_change(_set(("cases", "snow", "reactions", "A", "z"), 0.0)),
        ("cases.snow.reactions",),
    ),
    (
        "displacement-of-nothing",
        _results_change(_set(("cases", "snow", "displacements"), {"Q": {"x": 0.0}})),
        ("cases.snow.displacements",),
    ),
    (
        "displacement-not-an-object",
        _results_change(_set(("cases", "snow", "displacements"), {"D": [0.0, -0.001]})),
        ("cases.snow.displacements",),
    ),
    ("sign-convention-unknown", _results_change(_set(("sign_convention",), "compression")), ("sign_convention",)),
    ("results-unit-unknown", _results_change(_set(("units",), {"length": "yard", "force": "kN"})), ("units",)),
    ("unknown-key", _results_change(_set(("casse",), {})), ("casse",)),
    ("version-0", _results_change(_set(("version",), 0)), ("version",)),
    (
        "results-of-another-model",
        dumps(
            {
                "format": "truss-audit-results",
                "version": 1,
                "cases": {
                    "head": {
                        "displacements": {"T": {"x": 0.27, "y": 0.0, "z": -0.4}},
                        "axial_forces": {"11": -410.0, "12": -405.0, "13": -480.0},
                    }
                },
            }
        ),
        ("cases",),
    ),
]


@pytest.mark.parametrize(("data", "expect"), [c[1:] for c in RESULTS_CASES], ids=[c[0] for c in RESULTS_CASES])
def test_invalid_results_are_refused(tmp_path: Path, data: bytes, expect: tuple[str, ...]) -> None:
    model = tmp_path / "model.json"
    model.write_bytes(VALID)
    results = tmp_path / "reported.json"
    results.write_bytes(data)
    report = tmp_path / "report.json"
    before = snapshot(tmp_path)
    code, out, err = run_cli(["check", str(model), "--results", str(results), "--json", str(report), "--quiet"])
    assert_refused(code, out, err, [str(results), str(model)])
    for fragment in expect:
        assert fragment in err, f"expected {fragment!r} in the message:\n{err}"
    assert snapshot(tmp_path) == before


def test_the_base_results_pass(tmp_path: Path) -> None:
    """Guard for the cases above: the unmutated results are accepted and pass."""
    model = tmp_path / "model.json"
    model.write_bytes(VALID)
    results = tmp_path / "reported.json"
    results.write_bytes(dumps(base_results()))
    code, _out, err = run_cli(["check", str(model), "--results", str(results), "--quiet"])
    assert code == 0, err


# --------------------------------------------------------------------------- the limits
def test_file_size_limit(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from audit import exchange

    monkeypatch.setattr(exchange, "MAX_BYTES", 200)
    model = tmp_path / "model.json"
    model.write_bytes(VALID)
    assert len(VALID) > 200
    before = snapshot(tmp_path)
    for argv in (["check", str(model)], ["solve", str(model), "-o", str(tmp_path / "o.json")]):
        code, out, err = run_cli(argv)
        assert_refused(code, out, err, [str(model)])
        assert "200" in err, err
        assert snapshot(tmp_path) == before


def test_file_size_limit_applies_to_results(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from audit import exchange

    model = tmp_path / "model.json"
    model.write_bytes(VALID)
    results = tmp_path / "reported.json"
    results.write_bytes(dumps(base_results()))
    monkeypatch.setattr(exchange, "MAX_BYTES", len(VALID) + 1)
    assert len(dumps(base_results())) < len(VALID)
    code, _out, err = run_cli(["check", str(model), "--results", str(results), "--quiet"])
    assert code == 0, err
    monkeypatch.setattr(exchange, "MAX_BYTES", len(dumps(base_results())) - 1)
    code, out, err = run_cli(["check", str(model), "--results", str(results), "--quiet"])
    assert_refused(code, out, err, [str(model), str(results)])


def test_nesting_depth_limit(tmp_path: Path) -> None:
    """Nesting beyond MAX_DEPTH is refused, even inside a source's own ``x-`` data."""
    from audit import exchange

    ok = with_raw(base_model(), _set(("x-deep",), "@HOLE@"), _nested(exchange.MAX_DEPTH - 3))
    model = tmp_path / "model.json"
    model.write_bytes(ok)
    code, _out, err = run_cli(["solve", str(model), "-o", str(tmp_path / "o.json")])
    assert code == 0, err
    deep = with_raw(base_model(), _set(("x-deep",), "@HOLE@"), _nested(exchange.MAX_DEPTH + 1))
    refused = tmp_path / "deep"
    refused.mkdir()
    refused_both_ways(refused, deep, (str(exchange.MAX_DEPTH),))


def test_number_of_items_limit(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """More members than MAX_ITEMS is refused with a message that states the limit."""
    from audit import exchange

    monkeypatch.setattr(exchange, "MAX_ITEMS", 4)
    refused_both_ways(tmp_path, VALID, ("members", "4"))


def test_number_of_problems_listed_is_limited(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Past MAX_PROBLEMS, one last line counts the problems not listed."""
    from audit import exchange

    monkeypatch.setattr(exchange, "MAX_PROBLEMS", 3)
    doc = base_model()
    for node in doc["nodes"]:
        node["x"] = "wrong"  # four problems
    doc["members"][0]["E"] = "wrong"  # and a fifth
    path = tmp_path / "model.json"
    path.write_bytes(dumps(doc))
    code, out, err = run_cli(["check", str(path), "--quiet"])
    lines = assert_refused(code, out, err, [str(path)])
    assert len(lines) == 4
    assert lines[-1] == f"{path}: $: ... and 2 more problems not listed"


def test_limits_are_stated_in_the_docs() -> None:
    """docs/limits.md states each limit with the value the reader enforces."""
    from audit import exchange

    text = (ROOT / "docs" / "limits.md").read_text(encoding="utf-8")
    for name in ("MAX_BYTES", "MAX_DEPTH", "MAX_ITEMS", "MAX_PROBLEMS"):
        value = getattr(exchange, name)
        assert name in text
        assert f"{value:,}" in text or str(value) in text, f"{name} = {value} not stated in docs/limits.md"


# --------------------------------------------------------------------------- end to end, real processes
@pytest.mark.parametrize(
    "data",
    [b'{"format": ', with_raw(base_model(), _set(("x-deep",), "@HOLE@"), _nested(200_000))],
    ids=["truncated", "deep-200000"],
)
def test_no_traceback_reaches_stderr(tmp_path: Path, data: bytes) -> None:
    model = tmp_path / "model.json"
    model.write_bytes(data)
    before = snapshot(tmp_path)
    proc = subprocess.run(
        [sys.executable, "-m", "audit", "check", str(model)],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=tmp_path,
        env={**os.environ, "PYTHONWARNINGS": "ignore"},
        check=False,
    )
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr
    assert_refused(proc.returncode, proc.stdout, proc.stderr, [str(model)])
    assert snapshot(tmp_path) == before


@pytest.mark.parametrize(
    "data",
    [b"", b"\x00\x01\x02", dumps(base_results())[:80]],
    ids=["empty", "binary", "truncated"],
)
def test_unreadable_second_positional_file_is_refused(tmp_path: Path, data: bytes) -> None:
    """``check MODEL BROKEN``: the broken file cannot be told apart from a model; either way, exit 2."""
    model = tmp_path / "model.json"
    model.write_bytes(VALID)
    broken = tmp_path / "broken.json"
    broken.write_bytes(data)
    before = snapshot(tmp_path)
    code, out, err = run_cli(["check", str(model), str(broken), "--quiet"])
    assert code == 2, out + err
    assert "Traceback" not in out + err
    assert str(broken) in out + err
    assert snapshot(tmp_path) == before


# --------------------------------------------------------------------------- valid but degenerate
DEGENERATE = [
    ("subnormal-coordinate", _set(("nodes", 0, "y"), -2.225073858507e-311)),
    ("tiny-load", _append(("load_cases", 0, "loads"), {"node": "B", "fx": 1e-225})),
    ("huge-modulus", _set(("members", 4, "E"), 1e300)),
    ("tiny-area", _set(("members", 4, "A"), 1e-300)),
    ("zero-stiffness-spring", _append(("supports",), {"node": "D", "springs": [{"axis": "x", "stiffness": 0}]})),
    ("negative-zero-everywhere", _set(("load_cases", 0, "loads", 0), {"node": "D", "fx": -0.0, "fy": -12.5})),
]


@pytest.mark.parametrize("change", [c[1] for c in DEGENERATE], ids=[c[0] for c in DEGENERATE])
def test_degenerate_but_valid_model_is_audited_cleanly(
    tmp_path: Path, change: Callable[[dict[str, Any]], None]
) -> None:
    """Extreme but finite numbers are valid input: the audit passes or fails (0 or 1), says nothing on stderr
    (no numpy warning either), and leaves the file alone."""
    import warnings

    model = tmp_path / "model.json"
    model.write_bytes(mutated(change))
    before = snapshot(tmp_path)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        code, out, err = run_cli(["check", str(model), "--quiet"])
    assert code in (0, 1), err
    assert err == ""
    assert [str(w.message) for w in caught] == []
    assert out == f"{model}: {'pass' if code == 0 else 'fail'}\n"
    assert snapshot(tmp_path) == before
