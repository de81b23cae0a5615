"""audit.fastread must give exactly what audit.exchange gives: the same Model, or the same InputError.

The reference is the exchange reader itself (the project's implementation of
``FORMAT.md``); every model file shipped with the tests and the reference
cases, some generated lattices, and hand-made variants that must leave the
fast path, are read both ways and compared field by field (arrays bit for bit,
NaN where unreported included, decimal texts as strings).
"""

from __future__ import annotations

import dataclasses
import importlib.util
import json
import sys
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from audit import exchange, fastread
from audit.errors import InputError

ROOT = Path(__file__).resolve().parent.parent
CORPUS = sorted(
    p
    for folder in (ROOT / "tests" / "cases", ROOT / "tests" / "data", ROOT / "reference_cases")
    for p in folder.rglob("*.json")
    if p.is_file() and b'"truss-audit-model"' in p.read_bytes()[:4096]
)


def same(a: Any, b: Any, path: str = "model") -> None:
    """Field-by-field equality of two read models (dataclasses, arrays, tuples, scalars)."""
    if dataclasses.is_dataclass(a):
        assert type(a) is type(b), path
        for f in dataclasses.fields(a):
            same(getattr(a, f.name), getattr(b, f.name), f"{path}.{f.name}")
    elif isinstance(a, np.ndarray):
        assert isinstance(b, np.ndarray), path
        assert (a.dtype, a.shape) == (b.dtype, b.shape), path
        assert np.array_equal(a, b, equal_nan=True), path
    elif isinstance(a, tuple):
        assert isinstance(b, tuple), path
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            same(x, y, f"{path}[{i}]")
    else:
        assert a == b, f"{path}: {a!r} != {b!r}"


def both(data: bytes) -> tuple[Any, Any]:
    """(fastread result, exchange result), each a Model or the InputError's problems."""
    out = []
    for reader in (fastread.parse_model, exchange.parse_model):
        try:
            out.append(reader(data, "m.json"))
        except InputError as exc:
            out.append(exc.problems)
    return out[0], out[1]


@pytest.mark.parametrize("path", CORPUS, ids=[str(p.relative_to(ROOT)) for p in CORPUS])
def test_corpus_file_reads_the_same(path: Path) -> None:
    fast, slow = both(path.read_bytes())
    same(fast, slow)


def _generator() -> Any:
    spec = importlib.util.spec_from_file_location("bench_generate", ROOT / "benchmarks" / "generate.py")
    assert spec is not None
    assert spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules["bench_generate"] = module
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def generated(tmp_path_factory: pytest.TempPathFactory) -> dict[str, bytes]:
    gen = _generator()
    d = tmp_path_factory.mktemp("fastread")
    out = {}
    for kind, members, cases in (("grid2d", 300, 2), ("lattice3d", 300, 3)):
        p = d / f"{kind}.json"
        gen.write(str(p), kind, members, cases=cases, digits=7)
        out[kind] = p.read_bytes()
    return out


@pytest.mark.parametrize("kind", ["grid2d", "lattice3d"])
def test_generated_model_reads_the_same(generated: dict[str, bytes], kind: str) -> None:
    fast, slow = both(generated[kind])
    assert not isinstance(slow, tuple)
    same(fast, slow)


def _variant(doc: dict[str, Any], change: str) -> dict[str, Any]:
    d = json.loads(json.dumps(doc))
    members, res = d["members"], d["results"]["cases"]["dead"]
    if change == "duplicate-member-id":
        members[3]["id"] = members[2]["id"]
    elif change == "unknown-end-node":
        members[5]["end"] = 10**6
    elif change == "zero-length":
        members[1]["end"] = members[1]["start"]
    elif change == "negative-area":
        members[4]["A"] = -1.0e-3
    elif change == "unknown-section":
        members[0]["section"] = "nothing"
    elif change == "inline-properties":
        members[6].update({"E": 2.0e8, "A": 3.5e-3, "alpha": 1.2e-5})
    elif change == "x-key-in-member":
        members[2]["x-note"] = "kept aside"
    elif change == "unknown-member-in-results":
        res["axial_forces"]["no-such-member"] = 1.0
    elif change == "z-in-2d-results":
        next(iter(res["displacements"].values()))["z"] = 0.0
    elif change == "string-number":
        res["axial_forces"][next(iter(res["axial_forces"]))] = "12.5"
    elif change == "compression-positive-in-mm":
        d["results"].update({"sign_convention": "compression_positive", "units": {"length": "mm", "force": "N"}})
    elif change == "integer-and-exponent-texts":
        keys = list(res["axial_forces"])
        res["axial_forces"][keys[0]] = 12
        res["axial_forces"][keys[1]] = -3.25e2
        res["axial_forces"][keys[2]] = 1.5e-7
    elif change == "temperature-case":
        d["units"]["temperature"] = "degC"
        d["materials"]["steel"]["alpha"] = 1.2e-5
        d["load_cases"].append({"id": "heat", "temperature_changes": [{"member": members[0]["id"], "delta": 20}]})
    return d


CHANGES = [
    "duplicate-member-id",
    "unknown-end-node",
    "zero-length",
    "negative-area",
    "unknown-section",
    "inline-properties",
    "x-key-in-member",
    "unknown-member-in-results",
    "z-in-2d-results",
    "string-number",
    "compression-positive-in-mm",
    "integer-and-exponent-texts",
    "temperature-case",
]


@pytest.mark.parametrize("change", CHANGES)
def test_variant_reads_the_same(generated: dict[str, bytes], change: str) -> None:
    doc = json.loads(generated["grid2d"])
    data = json.dumps(_variant(doc, change)).encode()
    fast, slow = both(data)
    same(fast, slow)


def test_duplicate_key_goes_to_the_exchange_reader(generated: dict[str, bytes]) -> None:
    text = generated["grid2d"].decode()
    data = text.replace('"material": "steel"', '"material": "steel", "material": "steel"', 1).encode()
    fast, slow = both(data)
    assert isinstance(slow, tuple)  # the exchange reader refuses duplicate keys
    same(fast, slow)


def test_quanta_are_half_a_unit_in_the_last_written_digit() -> None:
    # the rule of audit.model.CaseResults: half a unit in the last printed digit (common practice)
    texts = [b"8.333", b"1.2e-3", 1200, b"-0.50", b"2.0E+8", b"7e5", 0, b"-1.234567e-05"]
    expected = [5e-4, 5e-5, 0.5, 5e-3, 5e6, 5e4, 0.5, 5e-12]
    np.testing.assert_array_equal(fastread._quanta(texts), expected)
