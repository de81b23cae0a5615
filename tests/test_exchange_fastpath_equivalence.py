"""The reader's fast path gives what its standard-library path gives: the same Model and Results, or the same problems.

Reference implementation: Python's own ``json`` module (an RFC 8259 parser;
numbers per RFC 8259 §6, each kept as its written text), which the reader
takes when :data:`audit.exchange.jsonread.USE_COMPILED` is False.  Compared:
every array bit for bit (NaN where nothing was reported included), every
decimal text, every other field; or, for a bad document, every problem (JSON
path, message and item name) in order.  Besides, every float of a model
must be ``float()`` of its kept decimal text (correctly rounded, the standard
library's own conversion), and every reported value ``float()`` of the text in
the file times its unit factor, with half a unit of its last written digit
(from :mod:`decimal`) as its quantum.

Documents: small generated models (``benchmarks/generate.py``), the bundled
reference cases, and Hypothesis documents made hostile on purpose: duplicate
keys, ``-0``, ``1e400``, huge integers, odd white space (before colons too),
unicode ids, missing keys and values of the wrong type.
"""

from __future__ import annotations

import contextlib
import dataclasses
import json
from collections.abc import Iterator
from decimal import Decimal
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from bench_generator import generator
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from audit.errors import InputError
from audit.exchange import jsonread, parse_model, parse_results

ROOT = Path(__file__).resolve().parents[1]
REFERENCE_CASES = sorted((ROOT / "reference_cases").rglob("*.json"))


@contextlib.contextmanager
def _compiled(on: bool) -> Iterator[None]:
    """The fast path (compiled decoder, results maps scanned at any size) or the standard-library path."""
    was = jsonread.USE_COMPILED, jsonread.SCAN_MIN_BYTES
    jsonread.USE_COMPILED, jsonread.SCAN_MIN_BYTES = on, 0
    try:
        yield
    finally:
        jsonread.USE_COMPILED, jsonread.SCAN_MIN_BYTES = was


def _outcome(read: Any, *args: Any) -> tuple[str, Any]:
    try:
        return "value", read(*args)
    except InputError as exc:
        return "problems", [(p.path, p.message, p.item) for p in exc.problems]


def _both(read: Any, *args: Any) -> tuple[tuple[str, Any], tuple[str, Any]]:
    with _compiled(True):
        fast = _outcome(read, *args)
    with _compiled(False):
        slow = _outcome(read, *args)
    return fast, slow


def _assert_same(a: Any, b: Any, where: str = "") -> None:
    """Equal field by field; arrays (and floats) bit for bit, with their dtypes and shapes."""
    assert type(a) is type(b), where
    if isinstance(a, np.ndarray):
        assert (a.dtype, a.shape) == (b.dtype, b.shape), where
        assert a.tobytes() == b.tobytes(), where
    elif dataclasses.is_dataclass(a):
        for f in dataclasses.fields(a):
            _assert_same(getattr(a, f.name), getattr(b, f.name), f"{where}.{f.name}")
    elif isinstance(a, (tuple, list)):
        assert len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _assert_same(x, y, f"{where}[{i}]")
    elif isinstance(a, dict):
        assert list(a) == list(b), where
        for k in a:
            _assert_same(a[k], b[k], f"{where}[{k!r}]")
    elif isinstance(a, float):
        assert np.float64(a).tobytes() == np.float64(b).tobytes(), where
    else:
        assert a == b, where


def _assert_equivalent(raw: bytes) -> tuple[str, Any]:
    fast, slow = _both(parse_model, raw, "m.json")
    assert fast[0] == slow[0], (fast, slow)
    _assert_same(fast[1], slow[1])
    if fast[0] == "value":
        _assert_floats_of_texts(fast[1])
        _assert_results_of_file(fast[1], raw)
    return fast


def _assert_floats_of_texts(model: Any) -> None:
    texts = np.array([[float(t) for t in row] for row in model.coords_text]).reshape(model.coords.shape)
    assert texts.tobytes() == model.coords.tobytes()
    for key in ("E", "A", "alpha"):
        ref = np.array([float(t) for t in getattr(model, f"{key}_text")], dtype=np.float64)
        assert ref.tobytes() == getattr(model, key).tobytes(), key


def _quantum(text: str) -> float:
    exponent = Decimal(text).as_tuple().exponent
    assert isinstance(exponent, int)
    return float(f"5e{exponent - 1}")


def _assert_results_of_file(model: Any, raw: bytes) -> None:
    """Reported values: float() of the written text times the unit factor (stdlib tree as the reference)."""
    doc = json.loads(raw.decode("utf-8"), parse_float=str, parse_int=str)
    if model.results is None or "results" not in doc:
        return
    res = model.results
    nodes, members = model.node_index(), model.member_index()
    sign = -1.0 if res.sign_convention == "compression_positive" else 1.0
    for case in res.cases:
        written = doc["results"]["cases"][case.case_id]
        for name, text in written.get("axial_forces", {}).items():
            i = members[name]
            assert case.axial_forces[i] == float(text) * (res.force_factor * sign)
            assert case.axial_force_quantum[i] == _quantum(text) * res.force_factor
        for key, factor, values, quanta in (
            ("displacements", res.length_factor, case.displacements, case.displacement_quantum),
            ("reactions", res.force_factor, case.reactions, case.reaction_quantum),
        ):
            seen = np.zeros(values.shape, dtype=bool)
            for name, comps in written.get(key, {}).items():
                for a, text in comps.items():
                    axis = "xyz".index(a)
                    seen[nodes[name], axis] = True
                    assert values[nodes[name], axis] == float(text) * factor
                    assert quanta[nodes[name], axis] == _quantum(text) * factor
            assert np.isnan(values[~seen]).all()
            assert np.isnan(quanta[~seen]).all()


@pytest.mark.parametrize(("kind", "members", "digits"), [("grid2d", 60, 10), ("lattice3d", 80, 6), ("grid2d", 300, 17)])
def test_generated_models(tmp_path: Path, kind: str, members: int, digits: int) -> None:
    path = tmp_path / "model.json"
    generator().write(str(path), kind, members, digits=digits)
    raw = path.read_bytes()
    assert jsonread._fast_tree(raw) is not None  # the fast path is taken, so the comparison means something
    with _compiled(True):
        assert jsonread._read_json(raw, "m.json", "model").scanned
    outcome = _assert_equivalent(raw)
    assert outcome[0] == "value"
    assert outcome[1].results is not None


@pytest.mark.parametrize("path", REFERENCE_CASES, ids=lambda p: p.name)
def test_reference_cases(path: Path) -> None:
    raw = path.read_bytes()
    if path.name.endswith(".results.json"):
        model_raw = path.with_name(path.name.replace(".results.json", ".json")).read_bytes()
        with _compiled(False):
            model = parse_model(model_raw)
        fast, slow = _both(parse_results, raw, model, "r.json")
        assert fast[0] == slow[0] == "value"
        _assert_same(fast[1], slow[1])
    else:
        assert _assert_equivalent(raw)[0] == "value"


# --------------------------------------------------------------------------- Hypothesis documents
class Num:
    """A number written exactly as its text."""

    def __init__(self, text: str) -> None:
        self.text = text


class Dup:
    """An object written with its (key, value) pairs as given, a key possibly twice."""

    def __init__(self, pairs: list[tuple[str, Any]]) -> None:
        self.pairs = pairs


def _write(v: Any, ws: list[str], spaced_keys: bool) -> str:
    """JSON text of ``v``, drawing white space from ``ws`` (cyclically) between the tokens."""
    pad = ws.pop(0) if ws else ""
    if ws:
        ws.append(pad)
    if isinstance(v, Num):
        return v.text
    if isinstance(v, bool) or v is None or isinstance(v, (int, float, str)):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list):
        return "[" + pad + ("," + pad).join(_write(x, ws, spaced_keys) for x in v) + pad + "]"
    pairs = v.pairs if isinstance(v, Dup) else list(v.items())
    before = pad if spaced_keys else ""
    items = (f"{json.dumps(k, ensure_ascii=False)}{before}:{pad}{_write(x, ws, spaced_keys)}" for k, x in pairs)
    return "{" + pad + ("," + pad).join(items) + pad + "}"


NUMBER_TEXTS = [
    "0", "-0", "-0.0", "1e400", "-1e400", "1E-400", "4.9e-324", "2.4e-324", "1.7976931348623157e308",
    "1.7976931348623159e308", "123456789012345678901234567890", "1" + "0" * 400, "0.1", "2.50", "1.5e3",
    "5E+2", "9007199254740993", "0.30000000000000004", "1e-7", "-12.5",
]  # fmt: skip


def _hostile_numbers() -> st.SearchStrategy[Any]:
    decimals = st.decimals(allow_nan=False, allow_infinity=False, places=None).map(lambda d: Num(str(d)))
    return st.one_of(
        st.sampled_from(NUMBER_TEXTS).map(Num),
        st.integers(-(10**20), 10**20),
        st.floats(allow_nan=False, allow_infinity=False).map(lambda f: Num(repr(f))),
        decimals,
    )


def _numbers() -> st.SearchStrategy[Any]:
    """Finite numbers in many spellings (exponents, trailing zeros, -0), mostly of a modest size."""
    spelled = st.decimals(-(10**6), 10**6, allow_nan=False, allow_infinity=False).map(lambda d: Num(str(d)))
    floats = st.floats(-1e6, 1e6).map(lambda f: Num(repr(f)))
    written = st.tuples(st.integers(-999, 999), st.integers(-30, 30), st.sampled_from(["e", "E", "e+"]))
    exponents = written.map(lambda t: Num(f"{t[0] / 8}{t[2]}{t[1]}" if t[1] >= 0 else f"{t[0]}{t[2][0]}{t[1]}"))
    return st.one_of(st.integers(-1000, 1000), spelled, floats, exponents, st.sampled_from(NUMBER_TEXTS[:3]).map(Num))


def _positive() -> st.SearchStrategy[Any]:
    return st.one_of(st.sampled_from(["2.1e8", "200000000", "7.0E7", "1", "0.5"]).map(Num), st.integers(1, 10**9))


def _ids() -> st.SearchStrategy[Any]:
    return st.one_of(st.integers(0, 50), st.text(min_size=0, max_size=4), st.sampled_from(["Ä", "節点", 'a"b', "x-1"]))


def _wrong() -> st.SearchStrategy[Any]:
    return st.sampled_from([None, True, "s", [], {}, Num("1.5"), -3, ""])


def _base(draw: st.DrawFn) -> dict[str, Any]:
    n = draw(st.integers(3, 6))
    dim = draw(st.sampled_from([2, 3]))
    axes = "xyz"[:dim]
    fractions = st.decimals(0, "0.499", places=draw(st.integers(0, 4)))  # node i at (i + f, 2i + 1 + f, ...): distinct
    nodes = [
        {"id": i, **{a: Num(str(i * (k + 1) + k + draw(fractions))) for k, a in enumerate(axes)}} for i in range(n)
    ]
    members = [
        {"id": f"m{i}", "start": i, "end": (i + 1) % n, "E": draw(_positive()), "A": draw(_positive())}
        for i in range(n)
    ]
    results = {
        "cases": {
            "c": {
                "displacements": {str(i): {a: draw(_numbers()) for a in axes} for i in range(n)},
                "axial_forces": {f"m{i}": draw(_numbers()) for i in range(n)},
                "reactions": {"0": {a: draw(_numbers()) for a in axes}},
            }
        }
    }
    return {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": dim,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "members": members,
        "supports": [{"node": 0, "restrain": list(axes)}, {"node": 1, "restrain": list(axes[1:])}],
        "load_cases": [{"id": "c", "loads": [{"node": 2, "fx": draw(_numbers())}]}],
        "results": results,
    }


def _places(doc: Any, path: tuple[Any, ...] = ()) -> Iterator[tuple[tuple[Any, ...], Any]]:
    yield path, doc
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield from _places(v, (*path, k))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield from _places(v, (*path, i))


@st.composite
def documents(draw: st.DrawFn) -> bytes:
    doc = _base(draw)
    for _ in range(draw(st.sampled_from([0, 0, 1, 2, 3]))):
        places = [p for p in _places(doc) if p[0]]
        path, _old = draw(st.sampled_from(places))
        parent = doc
        for p in path[:-1]:
            parent = parent[p]
        key = path[-1]
        action = draw(st.sampled_from(["number", "wrong", "delete", "id", "duplicate"]))
        if action == "number":
            parent[key] = draw(_hostile_numbers())
        elif action == "wrong":
            parent[key] = draw(_wrong())
        elif action == "delete":
            del parent[key]
        elif action == "id" and isinstance(parent, dict) and key in ("id", "start", "end", "node"):
            parent[key] = draw(_ids())
        elif action == "duplicate" and isinstance(parent, dict):
            pairs = list(parent.items())
            k = draw(st.sampled_from(pairs))
            pairs.insert(draw(st.integers(0, len(pairs))), (k[0], draw(st.one_of(_hostile_numbers(), _wrong()))))
            parent_of = doc
            for p in path[:-2]:
                parent_of = parent_of[p]
            if len(path) >= 2:
                parent_of[path[-2]] = Dup(pairs)
            break  # a Dup is written, not walked again
    ws = draw(st.lists(st.sampled_from(["", "", " ", "\n", "\t", "\r\n ", "  "]), min_size=1, max_size=5))
    return _write(doc, ws, draw(st.integers(0, 4)) == 0).encode("utf-8")


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(documents())
def test_hypothesis_documents(raw: bytes) -> None:
    _assert_equivalent(raw)


@settings(max_examples=80, deadline=None)
@given(documents())
def test_hypothesis_results_documents(raw: bytes) -> None:
    """The same documents' results as a results file of their own, against a small well-formed model."""
    text = raw.decode("utf-8")
    start = text.rfind('"results"')  # the last key of every document drawn (unless deleted)
    colon = text.find(":", start)
    body = text[colon + 1 : text.rindex("}")].strip() if start >= 0 and colon >= 0 else ""
    if not body.startswith("{"):
        return
    rest = body[1:]
    comma = "" if rest.lstrip().startswith("}") else ","
    results_raw = ('{"format": "truss-audit-results", "version": 1' + comma + rest).encode("utf-8")
    model = _small_model(json.loads(text, parse_float=str))
    fast, slow = _both(parse_results, results_raw, model, "r.json")
    assert fast[0] == slow[0], (fast, slow)
    _assert_same(fast[1], slow[1])


def _small_model(doc: Any) -> Any:
    dim = doc.get("dimensions") if isinstance(doc, dict) and doc.get("dimensions") in (2, 3) else 2
    axes = "xyz"[:dim]
    n = 6
    model = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": dim,
        "units": {"length": "m", "force": "kN"},
        "nodes": [{"id": i, **{a: i * (k + 2) for k, a in enumerate(axes)}} for i in range(n)],
        "members": [{"id": f"m{i}", "start": i, "end": (i + 1) % n, "E": 1, "A": 1} for i in range(n)],
        "load_cases": [{"id": "c"}],
    }
    with _compiled(False):
        return parse_model(json.dumps(model).encode("utf-8"))
