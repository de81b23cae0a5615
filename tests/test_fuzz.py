"""Fuzzing with Hypothesis: mutated valid files never crash the reader or the command line.

Each example takes a valid seed (the models of ``fuzz/corpus``, and a results
file for the contract's example roof), applies one to three mutations
(deleted keys, values of the wrong type, swapped or colliding ids, duplicated
entries, extreme numbers, random bytes, truncation) and runs ``check`` and
``solve``.  Whatever the input, the exit code is 0, 1, 2 or 4 (never 3, a
crashed check, and never an uncaught exception); exit 2 comes with a message
on stderr whose every line names the file and a place in it; and the input
files are left byte for byte as they were.

The budget is fixed (``derandomize=True``: the same examples on every run,
a few seconds in CI).  The coverage-guided harness ``fuzz/fuzz_reader.py``
is the long-running counterpart.
"""

from __future__ import annotations

import copy
import io
import json
import re
import tempfile
import warnings
from pathlib import Path
from typing import Any

from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from audit import cli

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT / "fuzz" / "corpus"

#: a place in an input file, as the reader names it: ``$``, ``line 4, column 7`` or a JSON path such as
#: ``members[3].end``, ``cases.snow.axial_forces["99"]`` or ``["odd key"].x``, then the item it points at by id
#: when it has one (``members[3] (member '9')``)
PLACE = re.compile(
    r'^(\$|line \d+(, column \d+)?|([A-Za-z_][\w-]*|\["(\\.|[^"\\])*"\])(\[\d+\]|\.[\w-]+|\["(\\.|[^"\\])*"\])*)'
    r"( \([a-z ]+ .*\))?(?=: )"
)

BUDGET = settings(
    max_examples=40,
    deadline=None,
    derandomize=True,
    database=None,
    # no shrinking: each example is a whole audit, and a bounded CI time matters more than a minimal example
    phases=(Phase.explicit, Phase.generate),
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)

#: results for the roof's snow case, by the method of joints (see tests/test_hostile_inputs.py)
ROOF_RESULTS: dict[str, Any] = {
    "format": "truss-audit-results",
    "version": 1,
    "cases": {
        "snow": {
            "displacements": {
                "B": {"x": 1.38889e-4, "y": -5.46875e-4},
                "C": {"x": 2.77778e-4, "y": 0.0},
                "D": {"x": 1.38889e-4, "y": -5.46875e-4},
            },
            "axial_forces": {"1": 8.3333, "2": 8.3333, "3": -10.4167, "4": -10.4167, "5": 0.0},
            "reactions": {"A": {"x": 0.0, "y": 6.25}, "C": {"y": 6.25}},
        }
    },
}


def _seeds() -> list[tuple[str, dict[str, Any], dict[str, Any] | None]]:
    out: list[tuple[str, dict[str, Any], dict[str, Any] | None]] = []
    for path in sorted(CORPUS.glob("*.model.json")):
        doc = json.loads(path.read_text(encoding="utf-8"))
        out.append((path.name, doc, ROOF_RESULTS if path.name.startswith("boathouse") else None))
    return out


SEEDS = _seeds()

ODD_VALUES = st.sampled_from(
    [
        None,
        True,
        False,
        0,
        -1,
        7,
        1.5,
        -0.0,
        1e308,
        -1e308,
        5e-324,
        "",
        "A",
        "1",
        "x",
        "NaN",
        [],
        {},
        [1, 2],
        {"id": "A"},
    ]
)
ID_KEYS = ("id", "node", "member", "start", "end")


def _paths(doc: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    """Every path to a value inside ``doc`` (keys and list indices)."""
    found: list[tuple[Any, ...]] = []
    if isinstance(doc, dict):
        for k, v in doc.items():
            found.append((*prefix, k))
            found.extend(_paths(v, (*prefix, k)))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            found.append((*prefix, i))
            found.extend(_paths(v, (*prefix, i)))
    return found


def _parent(doc: Any, path: tuple[Any, ...]) -> Any:
    for key in path[:-1]:
        doc = doc[key]
    return doc


@st.composite
def tree_mutation(draw: st.DrawFn, doc: dict[str, Any]) -> dict[str, Any]:
    """One structural mutation of a JSON document (a copy)."""
    doc = copy.deepcopy(doc)
    paths = _paths(doc)
    kind = draw(st.sampled_from(["delete", "retype", "number", "swap-ids", "collide-ids", "duplicate", "rename-key"]))
    id_paths = [p for p in paths if p and p[-1] in ID_KEYS]
    if kind == "rename-key" or (kind in ("swap-ids", "collide-ids") and not id_paths):
        # map keys are ids too (results: case, node and member ids; materials, factors)
        key_paths = [p for p in paths if p and isinstance(p[-1], str)]
        path = draw(st.sampled_from(key_paths))
        parent = _parent(doc, path)
        names = sorted({str(p[-1]) for p in key_paths})
        new = draw(st.sampled_from([*names, path[-1] + "x", path[-1].upper(), " " + path[-1]]))
        value = parent.pop(path[-1])
        parent[new] = value
        return doc
    if kind in ("swap-ids", "collide-ids"):
        a = draw(st.sampled_from(id_paths))
        b = draw(st.sampled_from(id_paths))
        pa, pb = _parent(doc, a), _parent(doc, b)
        if kind == "swap-ids":
            pa[a[-1]], pb[b[-1]] = pb[b[-1]], pa[a[-1]]
        else:
            value = pb[b[-1]]
            pa[a[-1]] = draw(st.sampled_from([value, str(value), int(value) if str(value).isdigit() else value]))
        return doc
    path = draw(st.sampled_from(paths))
    parent = _parent(doc, path)
    key = path[-1]
    if kind == "delete":
        del parent[key]
    elif kind == "retype":
        parent[key] = draw(ODD_VALUES)
    elif kind == "number":
        old = parent[key]
        numbers = [0, -1, 10**30, -(10**30), 1e-300, 12345678901234567890, 2**63, 0.1]
        if isinstance(old, int | float) and not isinstance(old, bool):
            numbers += [-old, old * 1e12, old + 1]
        parent[key] = draw(st.sampled_from(numbers))
    elif isinstance(parent, list):
        parent.insert(key, copy.deepcopy(parent[key]))
    else:
        parent[key] = [parent[key], copy.deepcopy(parent[key])]
    return doc


@st.composite
def byte_mutation(draw: st.DrawFn, text: bytes) -> bytes:
    """Random bytes spliced in, a stretch deleted, or the text cut short."""
    kind = draw(st.sampled_from(["insert", "overwrite", "delete", "truncate"]))
    at = draw(st.integers(0, len(text)))
    if kind == "truncate":
        return text[:at]
    if kind == "delete":
        return text[:at] + text[at + draw(st.integers(1, 40)) :]
    junk = draw(
        st.binary(min_size=1, max_size=12) | st.sampled_from([b"NaN", b"1e999", b"-", b"\xef\xbb\xbf", b"[[[["])
    )
    if kind == "insert":
        return text[:at] + junk + text[at:]
    return text[:at] + junk + text[at + len(junk) :]


def _run(argv: list[str]) -> tuple[int, str, str]:
    """Run the command line; a Python warning counts as text on stderr (a real process would print it)."""
    out, err = io.StringIO(), io.StringIO()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        code = cli.main(argv, out=out, err=err)
    noise = "".join(f"{w.filename}:{w.lineno}: {w.category.__name__}: {w.message}\n" for w in caught)
    return code, out.getvalue(), err.getvalue() + noise


def _snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    return {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in sorted(folder.iterdir()) if p.is_file()}


def _assert_clean(code: int, out: str, err: str, allowed: set[int], files: list[str]) -> None:
    assert code in allowed, f"exit {code}\n{out}\n{err}"
    assert "Traceback" not in err + out
    if code == 2:
        lines = [ln for ln in err.splitlines() if ln.strip()]
        assert lines, "exit 2 without a message"
        for line in lines:
            named = [f for f in files if line.startswith(f + ": ")]
            assert named, f"message names no input file: {line!r}"
            assert PLACE.match(line[len(named[0]) + 2 :]), f"message names no place: {line!r}"


def _exercise(model: bytes, results: bytes | None) -> None:
    """Run check (and solve) on the files; assert the contract above."""
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        model_path = folder / "model.json"
        model_path.write_bytes(model)
        files = [str(model_path)]
        argv = ["check", str(model_path), "--quiet", "--digits", "16"]
        if results is not None:
            results_path = folder / "reported.json"
            results_path.write_bytes(results)
            files.append(str(results_path))
            argv += ["--results", str(results_path)]
        before = _snapshot(folder)
        code, out, err = _run(argv)
        _assert_clean(code, out, err, {0, 1, 2}, files)
        assert _snapshot(folder) == before
        if results is None:
            solved = folder / "solved.json"
            code, out, err = _run(["solve", str(model_path), "-o", str(solved)])
            _assert_clean(code, out, err, {0, 2, 4}, files)
            assert solved.exists() == (code == 0)
            if solved.exists():
                solved.unlink()
            assert _snapshot(folder) == before


@st.composite
def mutated_model(draw: st.DrawFn) -> bytes:
    _name, doc, _res = draw(st.sampled_from(SEEDS))
    for _ in range(draw(st.integers(1, 3))):
        doc = draw(tree_mutation(doc))
    return json.dumps(doc).encode("utf-8")


@st.composite
def mutated_results(draw: st.DrawFn) -> tuple[bytes, bytes]:
    doc = ROOF_RESULTS
    for _ in range(draw(st.integers(1, 3))):
        doc = draw(tree_mutation(doc))
    model = (CORPUS / "boathouse.model.json").read_bytes()
    return model, json.dumps(doc).encode("utf-8")


@st.composite
def byte_mutated(draw: st.DrawFn) -> tuple[bytes, bytes | None]:
    _name, doc, res = draw(st.sampled_from(SEEDS))
    model = json.dumps(doc, indent=1).encode("utf-8")
    results = json.dumps(res, indent=1).encode("utf-8") if res is not None else None
    if results is not None and draw(st.booleans()):
        return model, draw(byte_mutation(results))
    return draw(byte_mutation(model)), results


@BUDGET
@given(model=mutated_model())
def test_mutated_model_is_handled_cleanly(model: bytes) -> None:
    _exercise(model, None)


@BUDGET
@given(pair=mutated_results())
def test_mutated_results_are_handled_cleanly(pair: tuple[bytes, bytes]) -> None:
    _exercise(*pair)


@BUDGET
@given(pair=byte_mutated())
def test_byte_mutated_files_are_handled_cleanly(pair: tuple[bytes, bytes | None]) -> None:
    _exercise(*pair)


def test_seeds_are_valid() -> None:
    """Guard: every unmutated seed is read, audited and solved (exit 0 or 1 for check, 0 for solve)."""
    for name, doc, res in SEEDS:
        with tempfile.TemporaryDirectory() as tmp:
            path = Path(tmp) / name
            path.write_text(json.dumps(doc), encoding="utf-8")
            code, _out, err = _run(["solve", str(path), "-o", str(Path(tmp) / "solved.json")])
            assert code == 0, f"{name}: {err}"
            if res is not None:
                rpath = Path(tmp) / "reported.json"
                rpath.write_text(json.dumps(res), encoding="utf-8")
                code, _out, err = _run(["check", str(path), "--results", str(rpath), "--quiet"])
                assert code in (0, 1), f"{name}: {err}"
