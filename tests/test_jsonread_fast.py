"""The compiled-decoder path of the reader gives exactly the standard-library path's tree, or steps aside.

Reference: Python's own ``json`` module (RFC 8259 parser of the standard
library) with the same hooks, which the reader used alone before.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from audit.errors import InputError
from audit.exchange import jsonread, parse_model

ROOT = Path(__file__).resolve().parents[1]


def _stdlib(raw: bytes) -> object:
    return json.loads(raw.decode("utf-8"), parse_float=str.encode)


@pytest.mark.parametrize(
    "raw",
    [
        b'{"a":1.50,"b":[1,2.0,-0,1e5,1E-400,123456789012345678901234567890]}',
        b'{"a":{"b":{"c":[{"d":1},{"e":2.25}]}},"f":null,"g":true,"h":"t:x"}',
        b"[]",
        b"null",
        b"1.5",
        b'"s"',
        b'{"nodes":[{"id":1,"x":0,"y":0.0},{"id":"n2","x":1.25e3,"y":-4}]}',
    ],
)
def test_fast_tree_equals_the_standard_library(raw: bytes) -> None:
    fast = jsonread._fast_tree(raw)
    assert fast is not None
    assert fast[0] == _stdlib(raw)
    assert repr(fast[0]) == repr(_stdlib(raw))  # bytes stay bytes, ints stay ints


@pytest.mark.parametrize(
    "raw",
    [
        b'{"a":1,"a":2}',  # duplicate key: msgspec would keep the last silently
        b'{"a":[{"b":1},{"b":1,"b":2}]}',  # duplicate deep in a list of objects
        b'{"a" :1}',  # space before the colon: the key count cannot vouch
        b'{"k":"x\\":y","a":1}',  # an escape: a string may then hold `":`
        b'{"a":NaN}',
        b'{"a":1,}',
        b'{"a":"\xff"}',
        b"[" * 900 + b"]" * 900,
    ],
)
def test_fast_tree_steps_aside(raw: bytes) -> None:
    assert jsonread._fast_tree(raw) is None


def test_duplicate_key_still_named_with_its_path() -> None:
    doc = json.loads((ROOT / "reference_cases" / "demo" / "footbridge.json").read_text(encoding="utf-8"))
    text = json.dumps(doc, separators=(",", ":"))
    text = text.replace('"members":[{', '"members":[{"id":"dup",', 1)
    with pytest.raises(InputError) as info:
        parse_model(text.encode("utf-8"), "m.json")
    assert any("duplicate key 'id'" in p.message and "members[0]" in str(p.path) for p in info.value.problems)


def test_demo_model_takes_the_fast_path() -> None:
    raw = (ROOT / "reference_cases" / "demo" / "footbridge.json").read_bytes()
    fast = jsonread._fast_tree(raw)
    assert fast is not None
    assert fast[0] == _stdlib(raw)
