"""Stage 1 of reading: bytes or text -> a JSON tree that keeps every number's decimal text.

UTF-8 (a byte-order mark is accepted), no duplicate keys, no
``NaN``/``Infinity``, nesting no deeper than :data:`audit.exchange.MAX_DEPTH`,
input no larger than :data:`audit.exchange.MAX_BYTES` (both read from the
package at call time, so that a change there takes effect).

Every number keeps its decimal text as written: integers as Python ``int``
(whose decimal form is the written text; the one exception is ``-0``, kept as
``0``), other numbers as the written ``bytes`` (``parse_float=str.encode``, a
C-level hook: a Python class per number would make reading four times slower)
until they are converted.  An integer may not have more than 4300 digits
(Python's own guard).  Keys starting with ``x-`` are kept and otherwise
ignored: ``NaN``/``Infinity`` and nesting are checked inside them, but their
numbers are not converted, so an overflow there is not an error.

Three ways to the same tree, the first that can vouch for its answer wins:
:func:`_scanned_tree` (a large document whose results maps are left to
:mod:`audit.exchange.fastread`, asked for by the caller), :func:`_fast_tree`
(msgspec) and the standard library's :func:`json.loads`, the reference, which
alone words problems.  ``USE_COMPILED = False`` leaves only the last.
"""

from __future__ import annotations

import functools
import itertools
import json
import re
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Any

from .. import exchange as _limits  # the package: MAX_* are read from it at call time
from .problems import Path_, _fail, _Problems
from .values import _JSON_CONSTANTS


@dataclass
class _Json:
    doc: Any
    duplicates: list[tuple[dict[str, Any], list[str]]]
    constants: int
    scanned: bool = False  #: results maps in the tree are :class:`~audit.exchange.fastread.ScannedMap`


def _read_json(data: bytes | bytearray | memoryview | str, name: str, scan: str | None = None) -> _Json:
    """Parse JSON text keeping every number's decimal text; syntax errors raise at once."""
    max_bytes = _limits.MAX_BYTES
    if isinstance(data, str):
        if len(data) > max_bytes:
            raise _fail(name, "$", f"input is too large: more than {max_bytes} characters")
        text = data[1:] if data.startswith("\ufeff") else data
    else:
        raw = bytes(data)
        if len(raw) > max_bytes:
            raise _fail(name, "$", f"input is too large: {len(raw)} bytes, the limit is {max_bytes} bytes")
        if raw.startswith(b"\xef\xbb\xbf"):
            raw = raw[3:]
        if scan is not None:
            scanned = _scanned_tree(raw, scan)
            if scanned is not None:
                return _Json(scanned, [], 0, scanned=True)
        fast = _fast_tree(raw)
        if fast:
            return _Json(fast[0], [], 0)
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = raw.count(b"\n", 0, exc.start) + 1
            column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
            raise _fail(name, f"line {line}, column {column}", "the file is not UTF-8 text") from None

    if isinstance(data, str):
        fast = _fast_tree(text)
        if fast:
            return _Json(fast[0], [], 0)
    duplicates: list[tuple[dict[str, Any], list[str]]] = []
    constants = [0]

    def pairs_hook(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
        d = dict(pairs)
        if len(d) != len(pairs):
            seen: set[str] = set()
            dup = [k for k, _ in pairs if k in seen or seen.add(k)]  # type: ignore[func-returns-value]
            duplicates.append((d, dup))
        return d

    def constant_hook(word: str) -> bytes:
        constants[0] += 1
        return word.encode("ascii")

    try:
        doc = json.loads(text, parse_float=str.encode, parse_constant=constant_hook, object_pairs_hook=pairs_hook)
    except json.JSONDecodeError as exc:
        raise _fail(name, f"line {exc.lineno}, column {exc.colno}", f"invalid JSON: {exc.msg}") from None
    except RecursionError:
        raise _fail(
            name, "$", f"arrays and objects are nested too deeply (the limit is {_limits.MAX_DEPTH} levels)"
        ) from None
    except ValueError:
        # an integer with more digits than Python converts: read again keeping such integers as their
        # text, so that the value checks name the place (far beyond float64's range either way)
        duplicates.clear()
        constants[0] = 0

        def int_hook(t: str) -> int | bytes:
            return int(t) if len(t) <= 4000 else t.encode("ascii")

        try:
            doc = json.loads(
                text,
                parse_float=str.encode,
                parse_int=int_hook,
                parse_constant=constant_hook,
                object_pairs_hook=pairs_hook,
            )
        except ValueError as exc:
            raise _fail(name, "$", f"a number has too many digits: {exc}") from None
    return _Json(doc, duplicates, constants[0])


#: a key followed by white space before its colon: the key count below would miss it
_SPACED_KEY = re.compile(rb'"[ \t\r\n]+:')

#: the compiled decoder is tried first; False makes every read take the standard-library path (the reference
#: implementation, which tests compare the fast path against)
USE_COMPILED = True


@functools.cache
def _fast_decoder() -> Any:
    """msgspec's JSON decoder keeping every non-integer number as its written ``bytes`` (None without msgspec)."""
    try:
        import msgspec
    except ImportError:  # optional at run time: the standard-library path below always works
        return None
    return msgspec.json.Decoder(float_hook=str.encode)


def _fast_tree(data: bytes | str) -> tuple[Any] | None:
    """(the same tree as the standard-library path,) from a compiled decoder; None when it cannot vouch for it.

    The tree is that of :func:`_read_json` (``int`` for integers, the written ``bytes``
    for other numbers), built by msgspec (C) instead of :func:`json.loads` with
    Python hooks: about 3x faster on a 10⁶-member model.  It is used only when
    it certainly equals the other path's: no backslash anywhere (so that no
    string holds a quote, and ``":`` ends a key and nothing else), no white space
    between a key and its colon, and as many keys in the tree as ``":`` in the
    text (msgspec keeps the last of duplicate keys; the count then differs).
    Anything msgspec refuses (syntax, ``NaN``, invalid UTF-8, too deep, an integer
    out of range) goes the other way too, which then finds the place and words it.
    """
    decoder = _fast_decoder() if USE_COMPILED else None
    if decoder is None:
        return None
    try:
        raw = data.encode("utf-8") if isinstance(data, str) else data
    except UnicodeEncodeError:
        return None
    if b"\\" in raw:
        return None
    key_ends = raw.count(b'":')
    if raw.count(b":") != key_ends and _SPACED_KEY.search(raw):  # only a ":" after no quote can be one
        return None
    try:
        doc = decoder.decode(raw)
    except Exception:  # any refusal: the standard-library path reports it with its place
        return None
    if _count_keys(doc) != key_ends:
        return None
    return (doc,)


#: inputs smaller than this are not worth scanning (the tree of a small file is quick to build)
SCAN_MIN_BYTES = 1 << 20


def _scanned_tree(raw: bytes, kind: str) -> Any | None:
    """The tree of a ``"model"`` or ``"results"`` document with its large results maps as ScannedMap; None if unsure.

    As :func:`_fast_tree`, and only for ASCII input (so that the scanned names are valid text): the levels
    above the maps are decoded as maps of ``Raw`` (msgspec checks the syntax of what it skips), everything
    else as :func:`_fast_tree` does; the keys of the whole tree, scanned maps included, must be as many as
    ``":`` in the text.
    """
    if not USE_COMPILED or len(raw) < SCAN_MIN_BYTES or not raw.isascii() or b"\\" in raw:
        return None
    key_ends = raw.count(b'":')
    if raw.count(b":") != key_ends and _SPACED_KEY.search(raw):
        return None
    decoder = _fast_decoder()
    if decoder is None:
        return None
    import msgspec

    from .fastread import scan_components, scan_numbers

    scanned_keys = 0

    def plain(v: Any) -> Any:
        return decoder.decode(v)

    def cases_of(v: Any) -> dict[str, Any]:
        nonlocal scanned_keys
        cases: dict[str, dict[str, Any]] = {}
        for cid, case in msgspec.json.decode(v, type=dict[str, dict[str, msgspec.Raw]]).items():
            cases[cid] = {}
            for key, part in case.items():
                scan = scan_numbers if key == "axial_forces" else scan_components
                found = scan(bytes(part)) if key in ("axial_forces", "displacements", "reactions") else None
                cases[cid][key] = plain(part) if found is None else found
                scanned_keys += 0 if found is None else found.keys
        return cases

    def body_of(body: dict[str, Any]) -> dict[str, Any]:
        return {k: cases_of(v) if k == "cases" else plain(v) for k, v in body.items()}

    try:
        top = msgspec.json.decode(raw, type=dict[str, msgspec.Raw])
        if kind == "results":
            doc = body_of(top)
        elif "results" in top:
            results = msgspec.json.decode(top["results"], type=dict[str, msgspec.Raw])
            doc = {k: body_of(results) if k == "results" else plain(v) for k, v in top.items()}
        else:
            return None
    except Exception:  # not objects where the format has them, a syntax error...: the tree, which words it
        return None
    if not scanned_keys or _count_keys(doc) + scanned_keys != key_ends:
        return None
    return doc


_SCALARS = frozenset((str, int, bytes, bool, float, type(None)))


def _count_keys(root: Any) -> int:
    """Keys of every object in the tree; a list of flat objects is counted in C-level passes (no call per object).

    -1 when the tree is nested too deeply to count (the caller then takes the other path).
    """
    try:
        return _count(root)
    except RecursionError:
        return -1


def _count(x: Any) -> int:
    if type(x) is not dict and type(x) is not list:
        return 0
    values = x.values() if type(x) is dict else x
    n = len(x) if type(x) is dict else 0
    types = set(map(type, values))
    if types <= _SCALARS:
        return n
    if types == {dict}:
        # e.g. nodes or members: every key of every item at once, then whether any item holds a container
        n += sum(map(len, values))
        inner = set(map(type, itertools.chain.from_iterable(map(dict.values, values))))
        if inner <= _SCALARS:
            return n
        for item in values:
            n += sum(_count(v) for v in item.values() if type(v) is dict or type(v) is list)
        return n
    return n + sum(_count(v) for v in values if type(v) is dict or type(v) is list)


def _walk(root: Any, base: Path_ = ()) -> Iterator[tuple[Path_, Any]]:
    """Every value under ``root`` with its path, without recursion, stopping below :data:`~audit.exchange.MAX_DEPTH`."""
    max_depth = _limits.MAX_DEPTH
    stack: list[tuple[Path_, Any]] = [(base, root)]
    while stack:
        path, value = stack.pop()
        yield path, value
        if len(path) >= max_depth:
            continue
        if isinstance(value, dict):
            stack.extend(((*path, k), v) for k, v in reversed(value.items()))
        elif isinstance(value, list):
            stack.extend(((*path, i), v) for i, v in reversed(list(enumerate(value))))


def _json_problems(parsed: _Json, roots: Iterable[tuple[Path_, Any]], probs: _Problems) -> None:
    """Duplicate keys, NaN/Infinity, nesting deeper than the limit."""
    if parsed.duplicates or parsed.constants:
        dup_of = {id(d): keys for d, keys in parsed.duplicates}
        for path, value in _walk(parsed.doc):
            if isinstance(value, dict) and id(value) in dup_of:
                for k in dict.fromkeys(dup_of[id(value)]):
                    probs.add((*path, k), f"duplicate key {k!r} in one object")
            elif type(value) is bytes and value.decode("ascii") in _JSON_CONSTANTS:
                probs.add(path, f"{value.decode('ascii')} is not a JSON number; numbers must be finite")
    max_depth = _limits.MAX_DEPTH
    for base, root in roots:
        for path, value in _walk(root, base):
            if len(path) >= max_depth and isinstance(value, (dict, list)):
                probs.add(
                    path, f"arrays and objects are nested too deeply (the limit is {max_depth} levels)", blocking=True
                )
