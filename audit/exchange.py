"""The neutral truss exchange format (``FORMAT.md``, version 1): reader and writer.

Reading goes in three stages, each collecting *every* problem it finds:

1. JSON: UTF-8 (a byte-order mark is accepted), no duplicate keys, no
   ``NaN``/``Infinity``, every number finite as a 64-bit float, nesting no
   deeper than :data:`MAX_DEPTH`.
2. Shape: the JSON Schemas in ``audit/schema/`` (JSON Schema 2020-12), with
   messages in plain words and JSON paths such as ``members[3].end``.
3. Meaning: ids unique and references known, lengths non-zero, E and A
   positive, supports and their displacements consistent, and so on.

All problems go into one :class:`~audit.errors.InputError`, in document order.
An unknown key does not stop the meaning stage (the rest is still well formed);
any other shape problem does.

Large arrays and maps (nodes, members, loads, results, stiffness entries) are
not handed to the schema validator item by item: a bulk check per key proves
them valid in a few passes, and only items it cannot vouch for go through the
schema, for exact messages.  A 10^6-member model therefore reads in seconds.

Limits, so that a hostile or broken file fails cleanly instead of exhausting
memory or the stack:

* :data:`MAX_BYTES` = 512 MiB: the largest input accepted;
* :data:`MAX_DEPTH` = 64: the deepest nesting of arrays and objects
  (the format itself needs 6; the rest is room for ``x-`` data);
* :data:`MAX_ITEMS` = 5,000,000: the most nodes, and the most members, in a model;
* :data:`MAX_PROBLEMS` = 10,000: problems listed in one error (a last line
  counts the rest).

Every number keeps its decimal text as written: integers as Python ``int``
(whose decimal form is the written text; the one exception is ``-0``, kept as
``0``), other numbers as the written ``bytes`` (``parse_float=str.encode``, a
C-level hook: a Python class per number would make reading four times slower)
until they are converted.  An integer may not have more than 4300 digits
(Python's own guard).  Keys starting with ``x-`` are kept by the JSON reader
and otherwise ignored: ``NaN``/``Infinity`` and nesting are checked inside
them, but their numbers are not converted, so an overflow there is not an
error.  In maps
keyed by a name or id (``materials``, ``sections``, ``factors``, ``cases``,
``displacements``, ``axial_forces``, ``reactions``) every key is a name,
including one that starts with ``x-``.

Conventions beyond ``FORMAT.md`` (all compatible): several ``loads``,
``temperature_changes`` or ``length_errors`` entries for one node or member
add up; a support displacement given twice for one restraint is an error; a
spring's stiffness may be zero but not negative; ids may not be empty strings;
``version``, ``dimensions``, ids and stiffness indices must be written as
integers (``2``, not ``2.0``).
"""

from __future__ import annotations

import contextlib
import functools
import gc
import itertools
import json
import math
import re
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from decimal import Decimal
from fractions import Fraction
from importlib import resources
from typing import Any

import jsonschema
import numpy as np
from referencing import Registry, Resource

from .errors import InputError, Problem
from .fileio import PathLike, read_input_bytes
from .model import (
    AXES,
    FORCE_UNITS,
    LENGTH_UNITS,
    CaseResults,
    Combination,
    FloatArray,
    LoadCase,
    Model,
    Results,
    SourceStiffness,
    Units,
)

__all__ = [
    "MAX_BYTES",
    "MAX_DEPTH",
    "MAX_ITEMS",
    "MAX_PROBLEMS",
    "dump_model",
    "dump_results",
    "load_model",
    "load_results",
    "parse_model",
    "parse_results",
    "schema",
]

MAX_BYTES = 512 * 1024 * 1024
MAX_DEPTH = 64
MAX_ITEMS = 5_000_000
MAX_PROBLEMS = 10_000

MODEL_FORMAT = "truss-audit-model"
RESULTS_FORMAT = "truss-audit-results"
FORMAT_VERSION = 1
_MODEL_ID = "urn:truss-audit:schema:model:1"
_RESULTS_ID = "urn:truss-audit:schema:results:1"

Path_ = tuple[str | int, ...]
#: a JSON number as read: ``int`` (exact) or ``bytes`` (the written text of any other number)
_NUMBER_TYPES = (int, bytes)
_JSON_CONSTANTS = ("NaN", "Infinity", "-Infinity")
_PARALLEL = 1.0 - 1e-9  # |cos| above which two unit directions count as parallel


# ============================================================== small helpers
def _is_num(v: object) -> bool:
    return type(v) is int or type(v) is bytes


def _text(v: object) -> str:
    """The decimal text of a number as read."""
    return v.decode("ascii") if type(v) is bytes else str(v)


def _id(v: object) -> str:
    """An id as a string: an integer id is its decimal string."""
    return v if type(v) is str else str(v)


def _texts(values: list[Any]) -> list[str]:
    """Decimal texts of many numbers as read (a repeated value is converted once)."""
    if len(values) > 64:
        distinct = set(values)
        if len(distinct) * 4 < len(values):  # mostly repeats (e.g. E from a few materials)
            table = {v: _text(v) for v in distinct}
            return list(map(table.__getitem__, values))
        types = set(map(type, values))
        if types == {bytes}:
            return list(map(bytes.decode, values))
        if types == {int}:
            return list(map(str, values))
    return [v.decode("ascii") if type(v) is bytes else str(v) for v in values]


def _float(v: object) -> float:
    try:
        return float(v)  # type: ignore[arg-type]
    except OverflowError:  # an integer beyond float64
        return math.inf if not _text(v).startswith("-") else -math.inf


def _path_str(path: Sequence[str | int]) -> str:
    if not path:
        return "$"
    out: list[str] = []
    for p in path:
        if isinstance(p, int):
            out.append(f"[{p}]")
        elif re.fullmatch(r"[A-Za-z_][A-Za-z0-9_-]*", p):
            out.append(("." if out else "") + p)
        else:
            out.append(f"[{json.dumps(p, ensure_ascii=False)}]")
    return "".join(out)


def _show(v: object) -> str:
    """A value as a user would recognise it in the file."""
    if _is_num(v):
        t = _text(v)
        return t if len(t) <= 40 else t[:37] + "..."
    if isinstance(v, str):
        return repr(v) if len(v) <= 40 else repr(v[:37] + "...")
    return _kind(v)


def _kind(v: object) -> str:
    if v is None:
        return "null"
    if isinstance(v, bool):
        return "true" if v else "false"
    if type(v) is int:
        return "an integer"
    if type(v) is bytes:
        return "a number"
    if isinstance(v, str):
        return "a string"
    if isinstance(v, list):
        return "an array"
    if isinstance(v, dict):
        return "an object"
    return type(v).__name__


def _nonfinite_message(v: object) -> str | None:
    """Message for a number that is not finite as float64; None for NaN/Infinity (reported by the JSON stage)."""
    t = _text(v)
    if t in _JSON_CONSTANTS:
        return None
    return f"number {_show(v)} is too large for a 64-bit float"


#: 0.5 * 10**k, correctly rounded, for the exponent k of a number's last written digit
_HALF_UNITS = {k: float(f"5e{k - 1}") for k in range(-400, 401)}


def _last_digit_exponent(v: object) -> int:
    """k such that the last written digit of ``v`` is in the 10**k place: "8.333" -> -3, "1.2e-3" -> -4, "12" -> 0."""
    if type(v) is not bytes:
        return 0
    i = v.find(b"e")
    if i < 0:
        i = v.find(b"E")
    if i < 0:
        mant, e = v, 0
    else:
        mant, e = v[:i], int(v[i + 1 :])
    dot = mant.find(b".")
    return e - (len(mant) - dot - 1 if dot >= 0 else 0)


_HALF_UNIT_ARRAY = np.array([_HALF_UNITS[k] for k in range(-400, 401)], dtype=np.float64)


def _quanta(values: list[Any]) -> FloatArray:
    """Half a unit in the last written digit of each number (see :func:`_quantum_text`), vectorised."""
    types = set(map(type, values))
    if types == {bytes}:
        texts = np.array(values, dtype=np.bytes_)
        dot = np.strings.find(texts, b".")
        k = np.where(dot >= 0, dot + 1 - np.strings.str_len(texts), 0).astype(np.int64)
        with_exponent = (np.strings.find(texts, b"e") >= 0) | (np.strings.find(texts, b"E") >= 0)
        for i in np.flatnonzero(with_exponent).tolist():
            k[i] = _last_digit_exponent(values[i])
    else:
        k = np.fromiter(map(_last_digit_exponent, values), dtype=np.int64, count=len(values))
    result: FloatArray = _HALF_UNIT_ARRAY[np.clip(k, -400, 400) + 400]
    return result


def _quantum_text(text: str) -> float:
    """Half a unit in the last written digit: "8.333" -> 0.0005, "1.2e-3" -> 0.00005, "1200" -> 0.5."""
    t = text.lstrip("-+")
    mant, _, exp = t.replace("E", "e").partition("e")
    e = int(exp) if exp else 0
    frac = mant.partition(".")[2]
    return float(f"5e{e - len(frac) - 1}")


class _Problems:
    """Problems found so far, each with a path into the document."""

    def __init__(self) -> None:
        self.items: list[tuple[Path_, str]] = []
        #: problems after which the meaning stage cannot run (a wrong type, a missing key)
        self.blocking = 0

    def add(self, path: Path_, message: str, *, blocking: bool = False) -> None:
        self.items.append((path, message))
        self.blocking += blocking

    def __bool__(self) -> bool:
        return bool(self.items)

    def __len__(self) -> int:
        return len(self.items)

    def error(self, doc: Any, name: str) -> InputError:
        order = _Order(doc)
        ranked = sorted(enumerate(self.items), key=lambda it: (order.key(it[1][0]), it[0]))
        problems = list(dict.fromkeys(Problem(_path_str(p), m) for _, (p, m) in ranked))
        if len(problems) > MAX_PROBLEMS:
            extra = len(problems) - MAX_PROBLEMS
            problems = [*problems[:MAX_PROBLEMS], Problem("$", f"... and {extra} more problems not listed")]
        return InputError(problems, name)


class _Order:
    """Sort key of a path by where it is in the document (a missing key sorts at the end of its object)."""

    def __init__(self, doc: Any) -> None:
        self.doc = doc
        self.positions: dict[int, dict[str, int]] = {}

    def key(self, path: Path_) -> tuple[int, ...]:
        out: list[int] = []
        cur = self.doc
        for p in path:
            if isinstance(cur, dict) and isinstance(p, str):
                pos = self.positions.get(id(cur))
                if pos is None:
                    pos = self.positions[id(cur)] = {k: i for i, k in enumerate(cur)}
                out.append(pos.get(p, len(cur)))
                cur = cur.get(p)
            elif isinstance(cur, list) and isinstance(p, int):
                out.append(p)
                cur = cur[p] if 0 <= p < len(cur) else None
            else:
                out.append(0)
                cur = None
        return tuple(out)


def _fail(name: str, path: str, message: str) -> InputError:
    return InputError((Problem(path, message),), name)


# ================================================================ JSON stage
@dataclass
class _Json:
    doc: Any
    duplicates: list[tuple[dict[str, Any], list[str]]]
    constants: int


def _read_json(data: bytes | bytearray | memoryview | str, name: str) -> _Json:
    """Parse JSON text keeping every number's decimal text; syntax errors raise at once."""
    if isinstance(data, str):
        if len(data) > MAX_BYTES:
            raise _fail(name, "$", f"input is too large: more than {MAX_BYTES} characters")
        text = data[1:] if data.startswith("\ufeff") else data
    else:
        raw = bytes(data)
        if len(raw) > MAX_BYTES:
            raise _fail(name, "$", f"input is too large: {len(raw)} bytes, the limit is {MAX_BYTES} bytes")
        if raw.startswith(b"\xef\xbb\xbf"):
            raw = raw[3:]
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = raw.count(b"\n", 0, exc.start) + 1
            column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
            raise _fail(name, f"line {line}, column {column}", "the file is not UTF-8 text") from None

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
        raise _fail(name, "$", f"arrays and objects are nested too deeply (the limit is {MAX_DEPTH} levels)") from None
    except ValueError as exc:  # an integer with more digits than Python converts
        raise _fail(name, "$", f"a number has too many digits: {exc}") from None
    return _Json(doc, duplicates, constants[0])


def _walk(root: Any, base: Path_ = ()) -> Iterator[tuple[Path_, Any]]:
    """Every value under ``root`` with its path, without recursion, stopping below :data:`MAX_DEPTH`."""
    stack: list[tuple[Path_, Any]] = [(base, root)]
    while stack:
        path, value = stack.pop()
        yield path, value
        if len(path) >= MAX_DEPTH:
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
    for base, root in roots:
        for path, value in _walk(root, base):
            if len(path) >= MAX_DEPTH and isinstance(value, (dict, list)):
                probs.add(
                    path, f"arrays and objects are nested too deeply (the limit is {MAX_DEPTH} levels)", blocking=True
                )


# =============================================================== schema stage
@functools.cache
def schema(kind: str) -> dict[str, Any]:
    """The JSON Schema of the ``"model"`` or ``"results"`` document (a fresh parse is cached)."""
    if kind not in ("model", "results"):
        raise ValueError(f"no schema {kind!r}: use 'model' or 'results'")
    text = resources.files("audit").joinpath("schema", f"{kind}.schema.json").read_text(encoding="utf-8")
    result: dict[str, Any] = json.loads(text)
    return result


def _is_number(_checker: object, v: object) -> bool:
    return type(v) is int or type(v) is bytes


def _is_integer(_checker: object, v: object) -> bool:
    return type(v) is int


_Validator = jsonschema.validators.extend(
    jsonschema.Draft202012Validator,
    type_checker=jsonschema.Draft202012Validator.TYPE_CHECKER.redefine_many(
        {"number": _is_number, "integer": _is_integer}
    ),
)


@functools.cache
def _registry() -> Registry:
    return Registry().with_resources(
        [(_MODEL_ID, Resource.from_contents(schema("model"))), (_RESULTS_ID, Resource.from_contents(schema("results")))]
    )


@functools.cache
def _validator(ref: str) -> Any:
    """A validator for a whole document (``model``/``results``) or one definition (``model#member``)."""
    kind, _, definition = ref.partition("#")
    if not definition:
        return _Validator(schema(kind), registry=_registry())
    base = _MODEL_ID if kind == "model" else _RESULTS_ID
    return _Validator({"$ref": f"{base}#/$defs/{definition}"}, registry=_registry())


_TYPE_WORDS = {
    "number": "a number",
    "integer": "an integer",
    "string": "a string",
    "object": "an object",
    "array": "an array",
    "boolean": "true or false",
    "null": "null",
}


def _def_title(sub: Any) -> str:
    if isinstance(sub, dict):
        if "title" in sub:
            return str(sub["title"])
        ref = sub.get("$ref", "")
        if "#/$defs/" in ref:
            base, _, name = ref.partition("#/$defs/")
            kind = "results" if base == _RESULTS_ID else "model"
            return _def_title(schema(kind)["$defs"].get(name, {}))
    return "a valid value"


def _wrong_kind(errors: list[Any], depth: int, instance: object) -> bool:
    """Whether a branch of anyOf failed because the value is of another kind altogether."""
    for e in errors:
        if len(e.absolute_path) != depth:
            continue
        if e.validator == "type":
            return True
        if e.validator in ("enum", "const"):
            allowed = e.validator_value if e.validator == "enum" else [e.validator_value]
            if not any(type(a) is type(instance) for a in allowed):
                return True
    return False


def _schema_messages(err: Any, prefix: Path_) -> list[tuple[Path_, str]]:
    path: Path_ = prefix + tuple(err.absolute_path)
    inst = err.instance
    kw = err.validator
    val = err.validator_value
    if kw == "additionalProperties" and isinstance(inst, dict):
        props = err.schema.get("properties", {})
        patterns = err.schema.get("patternProperties", {})
        hint = " (keys starting with 'x-' are allowed for a source's own data)" if "^x-" in patterns else ""
        extra = [k for k in inst if k not in props and not any(re.search(p, k) for p in patterns)]
        return [((*path, k), f"unknown key {k!r}{hint}") for k in extra]
    if kw == "required" and isinstance(inst, dict):
        return [((*path, k), f"required key {k!r} is missing") for k in val if k not in inst]
    if kw == "type":
        wanted = [val] if isinstance(val, str) else list(val)
        words = " or ".join(_TYPE_WORDS.get(w, w) for w in wanted)
        return [(path, f"expected {words}, got {_kind(inst)}")]
    if kw == "const":
        return [(path, f"must be {json.dumps(val)}, got {_show(inst)}")]
    if kw == "enum":
        allowed = ", ".join(json.dumps(a) for a in val)
        last = path[-2:] if len(path) >= 2 else ()
        if len(last) == 2 and last[0] == "units" and last[1] in ("length", "force", "temperature"):
            return [(path, f"unknown {last[1]} unit {_show(inst)}; use one of {allowed}")]
        return [(path, f"{_show(inst)} is not allowed here; use one of {allowed}")]
    if kw == "minItems":
        return [(path, f"too few items: at least {val} needed, got {len(inst)}")]
    if kw == "maxItems":
        return [(path, f"too many items: at most {val} allowed, got {len(inst)}")]
    if kw == "items" and val is False:
        n = len(err.schema.get("prefixItems", []))
        return [(path, f"too many items: exactly {n} expected, got {len(inst)}")]
    if kw == "minLength":
        return [(path, "must not be empty")]
    if kw in ("anyOf", "oneOf"):
        branches: dict[int, list[Any]] = {}
        for sub in err.context or ():
            branches.setdefault(int(sub.relative_schema_path[0]), []).append(sub)
        depth = len(err.absolute_path)
        fitting = [i for i, errs in branches.items() if not _wrong_kind(errs, depth, inst)]
        if len(fitting) == 1:
            out: list[tuple[Path_, str]] = []
            for sub in branches[fitting[0]]:
                out.extend(_schema_messages(sub, prefix))
            return out
        titles = " or ".join(_def_title(s) for s in val)
        return [(path, f"expected {titles}, got {_show(inst)}")]
    return [(path, str(err.message))]


def _schema_problems(ref: str, instance: Any, prefix: Path_, probs: _Problems) -> None:
    for err in _validator(ref).iter_errors(instance):
        # an unknown key leaves the rest well formed, so the meaning stage still runs and reports its findings too
        blocking = err.validator != "additionalProperties"
        for path, message in _schema_messages(err, prefix):
            probs.add(path, message, blocking=blocking)


# --- fast shape checks for the large parts of a document.  Each returns True only for an item that
# --- the schema certainly accepts; any other item is handed to the schema for a precise message.
def _ok_id(v: object) -> bool:
    return type(v) is int or (type(v) is str and v != "")


class _Missing:
    """Marks a key that an object does not have."""


_MISSING = _Missing()
_KIND_TYPES: dict[str, frozenset[type]] = {
    "id": frozenset((str, int)),
    "num": frozenset((int, bytes)),
    "str": frozenset((str,)),
    "x-": frozenset((str, int, bytes, bool, type(None))),  # a source's own scalar data
}


class _Columns:
    """Values of one key across a large list of objects, taken once and shared by the shape and meaning stages."""

    def __init__(self) -> None:
        self.cache: dict[tuple[int, str], list[Any]] = {}
        self.keys: dict[int, frozenset[str]] = {}  #: every key used in a list that passed the bulk check

    def column(self, items: list[Any], key: str) -> list[Any]:
        """``item.get(key, _MISSING)`` for every item."""
        found = self.cache.get((id(items), key))
        if found is None:
            found = self.cache[(id(items), key)] = [it.get(key, _MISSING) for it in items]
        return found

    def any_has(self, items: list[Any], key: str) -> bool:
        keys = self.keys.get(id(items))
        return key in keys if keys is not None else any(key in it for it in items)


Bulk = Callable[[list[Any], "_Columns | None"], bool]


def _bulk_flat(spec: dict[str, str], required: tuple[str, ...]) -> Bulk:
    """A check of many flat objects at once: one pass per key instead of one call per object."""
    allowed = frozenset(spec)
    req = frozenset(required)

    def bulk(items: list[Any], cols: _Columns | None) -> bool:
        if not items:
            return True
        if set(map(type, items)) != {dict}:
            return False
        present: set[str] = set()
        for layout in set(map(tuple, items)):
            keys = frozenset(layout)
            if not req <= keys or not all(k in allowed or k.startswith("x-") for k in keys):
                return False
            present |= keys
        for k in present:
            column = [it.get(k, _MISSING) for it in items]
            types = set(map(type, column))
            types.discard(_Missing)
            if not types <= _KIND_TYPES[spec.get(k, "x-")]:
                return False
            if spec.get(k) == "id" and str in types and "" in column:
                return False
            if cols is not None and k in spec:
                cols.cache[(id(items), k)] = column
        if cols is not None:
            cols.keys[id(items)] = frozenset(present)
        return True

    return bulk


_bulk_node = _bulk_flat({"id": "id", "x": "num", "y": "num", "z": "num"}, ("id", "x", "y"))
_bulk_member = _bulk_flat(
    {
        "id": "id",
        "start": "id",
        "end": "id",
        "E": "num",
        "A": "num",
        "alpha": "num",
        "material": "str",
        "section": "str",
    },
    ("id", "start", "end"),
)
_bulk_load = _bulk_flat({"node": "id", "fx": "num", "fy": "num", "fz": "num"}, ("node",))
_bulk_temperature = _bulk_flat({"member": "id", "delta": "num"}, ("member", "delta"))
_bulk_length_error = _bulk_flat({"member": "id", "value": "num"}, ("member", "value"))
_bulk_support_displacement = _bulk_flat({"node": "id", "x": "num", "y": "num", "z": "num"}, ("node",))
_bulk_components = _bulk_flat({"x": "num", "y": "num", "z": "num"}, ())
_AXIS_NAMES = frozenset(AXES)


def _ok_support(item: object) -> bool:
    if type(item) is not dict or not item.keys() <= {"node", "restrain"} or not _ok_id(item.get("node")):
        return False
    restrain = item.get("restrain", [])
    return type(restrain) is list and all(type(r) is str and r in _AXIS_NAMES for r in restrain)


def _bulk_supports(items: list[Any], _cols: _Columns | None) -> bool:
    return all(map(_ok_support, items))


def _bulk_numbers(items: list[Any], _cols: _Columns | None = None) -> bool:
    return set(map(type, items)) <= _KIND_TYPES["num"]


def _ok_dof(item: object) -> bool:
    return type(item) is list and len(item) == 2 and _ok_id(item[0]) and type(item[1]) is str and item[1] in AXES


def _bulk_dofs(items: list[Any], _cols: _Columns | None) -> bool:
    return all(map(_ok_dof, items))


def _bulk_entries(items: list[Any], _cols: _Columns | None) -> bool:
    if not items:
        return True
    if set(map(type, items)) != {list} or set(map(len, items)) != {3}:
        return False
    rows, cols, vals = zip(*items, strict=True)
    return set(map(type, rows)) == {int} and set(map(type, cols)) == {int} and _bulk_numbers(list(vals))


@dataclass
class _Hot:
    """A large array or map taken out of the document so that the schema sees a small one."""

    path: Path_
    items: list[Any] | dict[str, Any]
    ref: str
    bulk: Bulk  #: True only if the schema certainly accepts every item


def _take(parent: dict[str, Any], key: str, path: Path_, ref: str, bulk: Bulk, hot: list[_Hot]) -> None:
    value = parent.get(key)
    if type(value) is list or type(value) is dict:
        hot.append(_Hot((*path, key), value, ref, bulk))
        parent[key] = type(value)()


def _light_results(body: Any, path: Path_, hot: list[_Hot]) -> Any:
    if type(body) is not dict or type(body.get("cases")) is not dict:
        return body
    light = dict(body)
    cases: dict[str, Any] = {}
    for cid, case in body["cases"].items():
        if type(case) is dict:
            case = dict(case)
            p = (*path, "cases", cid)
            _take(case, "displacements", p, "results#components", _bulk_components, hot)
            _take(case, "axial_forces", p, "results#number", _bulk_numbers, hot)
            _take(case, "reactions", p, "results#components", _bulk_components, hot)
        cases[cid] = case
    light["cases"] = cases
    return light


def _light_model(doc: Any, hot: list[_Hot]) -> Any:
    if type(doc) is not dict:
        return doc
    light = dict(doc)
    _take(light, "nodes", (), "model#node", _bulk_node, hot)
    _take(light, "members", (), "model#member", _bulk_member, hot)
    _take(light, "supports", (), "model#support", _bulk_supports, hot)
    if type(light.get("load_cases")) is list:
        cases = []
        for i, lc in enumerate(light["load_cases"]):
            if type(lc) is dict:
                lc = dict(lc)
                p: Path_ = ("load_cases", i)
                _take(lc, "loads", p, "model#load", _bulk_load, hot)
                _take(lc, "temperature_changes", p, "model#temperature_change", _bulk_temperature, hot)
                _take(lc, "length_errors", p, "model#length_error", _bulk_length_error, hot)
                _take(lc, "support_displacements", p, "model#support_displacement", _bulk_support_displacement, hot)
            cases.append(lc)
        light["load_cases"] = cases
    if "results" in light:
        light["results"] = _light_results(light["results"], ("results",), hot)
    if type(light.get("stiffness")) is dict:
        st = dict(light["stiffness"])
        _take(st, "dofs", ("stiffness",), "model#dof", _bulk_dofs, hot)
        _take(st, "entries", ("stiffness",), "model#entry", _bulk_entries, hot)
        light["stiffness"] = st
    return light


def _check_document(parsed: _Json, kind: str, probs: _Problems, cols: _Columns) -> None:
    """JSON-level and schema problems of a whole model or results document."""
    doc = parsed.doc
    if kind == "model" and type(doc) is dict:
        for key in ("nodes", "members"):
            if type(doc.get(key)) is list and len(doc[key]) > MAX_ITEMS:
                probs.add((key,), f"too many {key}: {len(doc[key])}, the limit is {MAX_ITEMS}", blocking=True)
        if probs:
            return
    hot: list[_Hot] = []
    light = _light_model(doc, hot) if kind == "model" else _light_results(doc, (), hot)
    roots: list[tuple[Path_, Any]] = [((), light)]
    _schema_problems(kind, light, (), probs)
    for h in hot:
        if h.bulk(list(h.items.values()) if isinstance(h.items, dict) else h.items, cols):
            continue
        pairs: Iterable[tuple[str | int, Any]] = h.items.items() if isinstance(h.items, dict) else enumerate(h.items)
        for k, item in pairs:
            if not h.bulk([item], None):
                _schema_problems(h.ref, item, (*h.path, k), probs)
                roots.append(((*h.path, k), item))
    _json_problems(parsed, roots, probs)


# ============================================================== meaning stage
def _floats(values: list[Any], where: Callable[[int], Path_ | None], probs: _Problems) -> FloatArray:
    """Convert numbers as read to float64, reporting any that are not finite (where ``where`` gives a path)."""
    try:
        arr = np.fromiter(map(float, values), dtype=np.float64, count=len(values))
    except OverflowError:
        arr = np.array([_float(v) for v in values], dtype=np.float64)
    bad = np.flatnonzero(~np.isfinite(arr))
    for i in bad.tolist():
        message = _nonfinite_message(values[i])
        path = where(i)
        if message and path is not None:
            probs.add(path, message)
    return arr


def _one_float(v: Any, path: Path_, probs: _Problems) -> float:
    f = _float(v)
    if not math.isfinite(f):
        message = _nonfinite_message(v)
        if message:
            probs.add(path, message)
    return f


@dataclass
class _Frame:
    """What results and stiffness need to know about the model they belong to."""

    dim: int
    units: Units
    node_index: dict[str, int]
    member_index: dict[str, int]
    case_ids: frozenset[str]
    n_nodes: int
    n_members: int


def _index_ids(items: list[dict[str, Any]], key: str, what: str, base: Path_, probs: _Problems, cols: _Columns):
    """Ids as strings and the index of each (first occurrence wins); duplicates reported."""
    ids = list(map(str, cols.column(items, key)))
    index = dict(zip(ids, range(len(ids)), strict=True))
    if len(index) != len(ids):
        first: dict[str, int] = {}
        for i, k in enumerate(ids):
            if k in first:
                probs.add((*base, i, key), f"duplicate {what} id {k!r} (first at {_path_str((*base, first[k]))})")
            else:
                first[k] = i
        index = first
    return ids, index


def _direction(
    raw: list[Any], dim: int, path: Path_, probs: _Problems
) -> tuple[tuple[float, ...], tuple[str, ...]] | None:
    """A unit vector and the written texts of a direction, or None after reporting a problem."""
    texts = tuple(_text(c) for c in raw)
    if len(raw) != dim:
        probs.add(path, f"a direction needs {dim} components in a {dim}D model, got {len(raw)}")
        return None
    comps = [_one_float(c, (*path, i), probs) for i, c in enumerate(raw)]
    if not all(math.isfinite(c) for c in comps):
        return None
    norm = math.sqrt(sum(c * c for c in comps))
    if norm == 0.0 or not math.isfinite(norm):
        probs.add(path, "a direction must not be the zero vector")
        return None
    return tuple(c / norm for c in comps), texts


def _axis_vector(axis: int, dim: int) -> tuple[tuple[float, ...], tuple[str, ...]]:
    vec = tuple(1.0 if i == axis else 0.0 for i in range(dim))
    return vec, tuple("1" if i == axis else "0" for i in range(dim))


def _neg_text(text: str) -> str:
    return text[1:] if text.startswith("-") else "-" + text


@dataclass
class _Supports:
    node: list[int]
    dirs: list[tuple[float, ...]]
    labels: list[str]
    dir_texts: list[tuple[str, ...]]
    spring_node: list[int]
    spring_dirs: list[tuple[float, ...]]
    spring_k: list[float]
    spring_k_text: list[str]
    spring_dir_texts: list[tuple[str, ...]]
    by_node: dict[int, list[int]]  #: node index -> its restraint indices
    entry_of_node: dict[int, int]  #: node index -> support entry index


def _supports(doc: dict[str, Any], dim: int, node_index: dict[str, int], probs: _Problems) -> _Supports:
    s = _Supports([], [], [], [], [], [], [], [], [], {}, {})
    for i, sup in enumerate(doc.get("supports", [])):
        p: Path_ = ("supports", i)
        nid = _id(sup["node"])
        ni = node_index.get(nid)
        if ni is None:
            probs.add((*p, "node"), f"unknown node {nid!r}")
        elif ni in s.entry_of_node:
            probs.add(
                (*p, "node"),
                f"node {nid!r} already has a support entry ({_path_str(('supports', s.entry_of_node[ni]))})",
            )
            ni = None
        else:
            s.entry_of_node[ni] = i
        if "restrain" not in sup and "springs" not in sup:
            probs.add(p, "a support needs 'restrain' or 'springs'")
        for j, r in enumerate(sup.get("restrain", [])):
            rp = (*p, "restrain", j)
            got: tuple[tuple[float, ...], tuple[str, ...]] | None
            if isinstance(r, str):
                axis = AXES.index(r)
                if axis >= dim:
                    probs.add(rp, f"axis {r!r} does not exist in a {dim}D model")
                    continue
                got, label = _axis_vector(axis, dim), r
            else:
                got = _direction(r["direction"], dim, (*rp, "direction"), probs)
                label = "dir(" + ",".join(_text(c) for c in r["direction"]) + ")"
            if got is None or ni is None:
                continue
            s.by_node.setdefault(ni, []).append(len(s.node))
            s.node.append(ni)
            s.dirs.append(got[0])
            s.dir_texts.append(got[1])
            s.labels.append(label)
        for j, sp in enumerate(sup.get("springs", [])):
            sp_path = (*p, "springs", j)
            k = _one_float(sp["stiffness"], (*sp_path, "stiffness"), probs)
            if k < 0:
                probs.add(
                    (*sp_path, "stiffness"), f"a spring stiffness must not be negative, got {_show(sp['stiffness'])}"
                )
            if ("axis" in sp) == ("direction" in sp):
                probs.add(sp_path, "a spring needs exactly one of 'axis' and 'direction'")
                continue
            if "axis" in sp:
                axis = AXES.index(sp["axis"])
                if axis >= dim:
                    probs.add((*sp_path, "axis"), f"axis {sp['axis']!r} does not exist in a {dim}D model")
                    continue
                got = _axis_vector(axis, dim)
            else:
                got = _direction(sp["direction"], dim, (*sp_path, "direction"), probs)
            if got is None or ni is None:
                continue
            s.spring_node.append(ni)
            s.spring_dirs.append(got[0])
            s.spring_dir_texts.append(got[1])
            s.spring_k.append(k)
            s.spring_k_text.append(_text(sp["stiffness"]))
    _dependent_restraints(s, dim, doc, probs)
    return s


def _dependent_restraints(s: _Supports, dim: int, doc: dict[str, Any], probs: _Problems) -> None:
    """Report nodes whose restraint directions are linearly dependent (batched rank, no loop over nodes)."""
    by_count: dict[int, list[int]] = {}
    for ni, rows in s.by_node.items():
        if len(rows) > 1:
            by_count.setdefault(len(rows), []).append(ni)
    dirs = np.array(s.dirs, dtype=np.float64).reshape(-1, dim)
    for count, nodes in by_count.items():
        if count > dim:
            bad = nodes
        else:
            stack = dirs[np.array([s.by_node[n] for n in nodes], dtype=np.int64)]
            ranks = np.linalg.matrix_rank(stack, tol=1e-9)
            bad = [n for n, r in zip(nodes, np.atleast_1d(ranks).tolist(), strict=True) if r < count]
        for ni in bad:
            entry = s.entry_of_node[ni]
            labels = ", ".join(s.labels[r] for r in s.by_node[ni])
            nid = _id(doc["supports"][entry]["node"])
            probs.add(
                ("supports", entry, "restrain"),
                f"the restraints at node {nid!r} are linearly dependent ({labels}): one of them repeats another",
            )


def _member_properties(doc: dict[str, Any], members: list[dict[str, Any]], probs: _Problems, cols: _Columns):
    """E, A, alpha per member (inline wins over the material or section) with texts."""
    materials: dict[str, dict[str, Any]] = doc.get("materials", {})
    sections: dict[str, dict[str, Any]] = doc.get("sections", {})
    for name, mat in materials.items():
        e = _one_float(mat["E"], ("materials", name, "E"), probs)
        if not e > 0 and math.isfinite(e):
            probs.add(("materials", name, "E"), f"E must be positive, got {_show(mat['E'])}")
        if "alpha" in mat:
            _one_float(mat["alpha"], ("materials", name, "alpha"), probs)
    for name, sec in sections.items():
        a = _one_float(sec["A"], ("sections", name, "A"), probs)
        if not a > 0 and math.isfinite(a):
            probs.add(("sections", name, "A"), f"A must be positive, got {_show(sec['A'])}")

    n = len(members)
    values: dict[str, list[Any]] = {}
    inline: dict[str, list[int]] = {}
    has_alpha = [True] * n
    refs_of = {
        ref_key: [None if r is _MISSING else r for r in cols.column(members, ref_key)]
        if cols.any_has(members, ref_key)
        else [None] * n
        for ref_key in ("material", "section")
    }
    for ref_key, table in (("material", materials), ("section", sections)):
        refs = refs_of[ref_key]
        if not set(refs) <= set(table) | {None}:
            for i in (i for i, r in enumerate(refs) if r is not None and r not in table):
                probs.add(("members", i, ref_key), f"unknown {ref_key} {refs[i]!r}")
    sources = (("E", "material", materials), ("A", "section", sections), ("alpha", "material", materials))
    for key, ref_key, table in sources:
        refs = refs_of[ref_key]
        direct = (
            [None if v is _MISSING else v for v in cols.column(members, key)]
            if cols.any_has(members, key)
            else [None] * n
        )
        from_table: dict[str | None, Any] = {name: entry.get(key) for name, entry in table.items()}
        vals: list[Any] = list(map(from_table.get, refs))
        inline[key] = []
        if n - direct.count(None):
            inline[key] = [i for i, v in enumerate(direct) if v is not None]
            for i in inline[key]:
                vals[i] = direct[i]
        if None in vals:
            if key == "alpha":  # an unknown material is reported once, not again as a missing alpha
                has_alpha = [
                    v is not None or (r is not None and r not in table) for v, r in zip(vals, refs, strict=True)
                ]
            else:
                for i in (i for i, v in enumerate(vals) if v is None):
                    if refs[i] is None or refs[i] in table:
                        probs.add(("members", i), f"no {key}: give {key!r} or a {ref_key!r}")
            vals = [0 if v is None else v for v in vals]
        values[key] = vals
    arrays = {}
    for key in ("E", "A", "alpha"):
        vals = values[key]
        own = set(inline[key])

        def where(i: int, key: str = key, own: set[int] = own) -> Path_ | None:
            return ("members", i, key) if i in own else None

        arr = _floats(vals, where, probs)
        arrays[key] = arr
        if key != "alpha" and inline[key]:
            own_idx = np.array(inline[key], dtype=np.int64)
            sub = arr[own_idx]
            for i in own_idx[~(sub > 0) & np.isfinite(sub)].tolist():
                probs.add(("members", i, key), f"{key} must be positive, got {_show(vals[i])}")
    texts = {key: tuple(_texts(values[key])) for key in values}
    return arrays, texts, has_alpha


def _load_case(
    lc: dict[str, Any],
    k: int,
    dim: int,
    units: Units,
    node_index: dict[str, int],
    member_index: dict[str, int],
    has_alpha: list[bool],
    sup: _Supports,
    n_nodes: int,
    n_members: int,
    probs: _Problems,
) -> LoadCase:
    base: Path_ = ("load_cases", k)
    loads = np.zeros((n_nodes, dim), dtype=np.float64)
    load_terms: list[tuple[int, int, str]] = []
    load_vals: list[Any] = []
    load_paths: list[Path_] = []
    for j, ld in enumerate(lc.get("loads", [])):
        p = (*base, "loads", j)
        nid = _id(ld["node"])
        ni = node_index.get(nid)
        if ni is None:
            probs.add((*p, "node"), f"unknown node {nid!r}")
        for axis, key in enumerate(("fx", "fy", "fz")):
            if key not in ld:
                continue
            if axis >= dim:
                probs.add((*p, key), f"key {key!r} is not allowed in a {dim}D model")
            elif ni is not None:
                load_terms.append((ni, axis, _text(ld[key])))
                load_vals.append(ld[key])
                load_paths.append((*p, key))
    if load_terms:
        vals = _floats(load_vals, load_paths.__getitem__, probs)
        idx = np.array([(t[0], t[1]) for t in load_terms], dtype=np.int64)
        np.add.at(loads, (idx[:, 0], idx[:, 1]), vals)

    def per_member(key: str, value_key: str) -> tuple[FloatArray, tuple[tuple[int, str], ...]]:
        arr = np.zeros(n_members, dtype=np.float64)
        terms: list[tuple[int, str]] = []
        raw: list[Any] = []
        paths: list[Path_] = []
        entries = lc.get(key, [])
        if key == "temperature_changes" and entries and units.temperature is None:
            probs.add((*base, key), "temperature changes need 'units.temperature' (degC, K or degF)")
        for j, item in enumerate(entries):
            p = (*base, key, j)
            mid = _id(item["member"])
            mi = member_index.get(mid)
            if mi is None:
                probs.add((*p, "member"), f"unknown member {mid!r}")
                continue
            if key == "temperature_changes" and not has_alpha[mi]:
                probs.add(
                    (*p, "member"),
                    f"member {mid!r} has a temperature change but no alpha "
                    "(give 'alpha' on the member or its material)",
                )
            terms.append((mi, _text(item[value_key])))
            raw.append(item[value_key])
            paths.append((*p, value_key))
        if terms:
            vals = _floats(raw, paths.__getitem__, probs)
            np.add.at(arr, np.array([t[0] for t in terms], dtype=np.int64), vals)
        return arr, tuple(terms)

    temperature, temperature_text = per_member("temperature_changes", "delta")
    length_error, length_error_text = per_member("length_errors", "value")

    settle: dict[int, tuple[float, str]] = {}
    for j, sd in enumerate(lc.get("support_displacements", [])):
        p = (*base, "support_displacements", j)
        nid = _id(sd["node"])
        ni = node_index.get(nid)
        if ni is None:
            probs.add((*p, "node"), f"unknown node {nid!r}")
        comps = [a for a in AXES if a in sd]
        wanted: list[tuple[Path_, str, tuple[float, ...], Any]] = []  # path, label, unit direction, value
        if "direction" in sd:
            if comps:
                probs.add(p, "give axis components (x, y, z) or 'direction' with 'value', not both")
                continue
            if "value" not in sd:
                probs.add((*p, "value"), "required key 'value' is missing (it goes with 'direction')")
                continue
            got = _direction(sd["direction"], dim, (*p, "direction"), probs)
            if got is None:
                continue
            label = "dir(" + ",".join(got[1]) + ")"
            wanted.append(((*p, "value"), label, got[0], sd["value"]))
        else:
            if "value" in sd:
                probs.add((*p, "value"), "'value' goes with 'direction'; use x, y or z for an axis")
                continue
            if not comps:
                probs.add(p, "a support displacement needs x, y, z, or 'direction' with 'value'")
                continue
            for a in comps:
                axis = AXES.index(a)
                if axis >= dim:
                    probs.add((*p, a), f"key {a!r} is not allowed in a {dim}D model")
                    continue
                wanted.append(((*p, a), a, _axis_vector(axis, dim)[0], sd[a]))
        if ni is None:
            continue
        rows = sup.by_node.get(ni, [])
        for vpath, label, unit, value in wanted:
            match = next((r for r in rows if sup.labels[r] == label), None)
            sign = 1.0
            if match is None:
                for r in rows:
                    cos = sum(a * b for a, b in zip(unit, sup.dirs[r], strict=True))
                    if abs(cos) >= _PARALLEL:
                        match, sign = r, (1.0 if cos > 0 else -1.0)
                        break
            if match is None:
                probs.add(
                    vpath,
                    f"node {nid!r} is not restrained along {label}; a support displacement needs a restraint there",
                )
                continue
            if match in settle:
                probs.add(vpath, f"a support displacement along {sup.labels[match]} at node {nid!r} is given twice")
                continue
            f = _one_float(value, vpath, probs)
            text = _text(value)
            settle[match] = (sign * f, text if sign > 0 else _neg_text(text))
    settlement = np.zeros(len(sup.node), dtype=np.float64)
    for r, (f, _t) in settle.items():
        settlement[r] = f
    return LoadCase(
        id=_id(lc["id"]),
        title=lc.get("title", ""),
        loads=loads,
        temperature=temperature,
        length_error=length_error,
        settlement=settlement,
        load_text=tuple(load_terms),
        temperature_text=temperature_text,
        length_error_text=length_error_text,
        settlement_text=tuple((r, t) for r, (_f, t) in sorted(settle.items())),
    )


def _case_ids(doc: dict[str, Any], probs: _Problems) -> tuple[dict[str, int], dict[str, int]]:
    cases: dict[str, int] = {}
    combos: dict[str, int] = {}
    first: dict[str, Path_] = {}
    for key, table in (("load_cases", cases), ("combinations", combos)):
        for i, item in enumerate(doc.get(key, [])):
            cid = _id(item["id"])
            if cid in first:
                probs.add(
                    (key, i, "id"), f"duplicate load case or combination id {cid!r} (first at {_path_str(first[cid])})"
                )
            else:
                first[cid] = (key, i)
                table[cid] = i
    return cases, combos


def _combinations(
    doc: dict[str, Any], cases: dict[str, int], combos: dict[str, int], probs: _Problems
) -> tuple[Combination, ...]:
    out = []
    for i, comb in enumerate(doc.get("combinations", [])):
        factors = []
        for cid, factor in comb["factors"].items():
            p: Path_ = ("combinations", i, "factors", cid)
            f = _one_float(factor, p, probs)
            if cid in cases:
                factors.append((cases[cid], f, _text(factor)))
            elif cid in combos:
                probs.add(p, f"{cid!r} is a combination; combinations of combinations are not allowed")
            else:
                probs.add(p, f"unknown load case {cid!r}")
        out.append(Combination(id=_id(comb["id"]), factors=tuple(factors)))
    return tuple(out)


def _results(body: dict[str, Any], frame: _Frame, base: Path_, probs: _Problems) -> Results:
    declared = body.get("units", {})
    units = Units(
        length=declared.get("length", frame.units.length),
        force=declared.get("force", frame.units.force),
        temperature=declared.get("temperature", frame.units.temperature),
    )
    lf = float(LENGTH_UNITS[units.length] / LENGTH_UNITS[frame.units.length])
    ff = float(FORCE_UNITS[units.force] / FORCE_UNITS[frame.units.force])
    sign_convention = body.get("sign_convention", "tension_positive")
    axial_sign = -1.0 if sign_convention == "compression_positive" else 1.0
    n, m, dim = frame.n_nodes, frame.n_members, frame.dim
    out = []
    for cid, case in body["cases"].items():
        cp = (*base, "cases", cid)
        if cid not in frame.case_ids:
            probs.add(cp, f"unknown load case or combination {cid!r}")

        def components(key: str, factor: float, cp: Path_ = cp, case: dict[str, Any] = case):
            values = np.full((n, dim), np.nan)
            quantum = np.full((n, dim), np.nan)
            table: dict[str, Any] = case.get(key, {})
            names = list(table)
            comps = list(table.values())
            idx = list(map(frame.node_index.get, names))
            if None in idx:
                for i in (i for i, v in enumerate(idx) if v is None):
                    probs.add((*cp, key, names[i]), f"unknown node {names[i]!r}")
            for axis, a in enumerate(AXES):
                if axis >= dim:
                    for i in (i for i, c in enumerate(comps) if a in c):
                        probs.add((*cp, key, names[i], a), f"axis {a!r} does not exist in a {dim}D model")
                    continue
                column = [c.get(a, _MISSING) for c in comps]
                sel = [i for i, v in enumerate(column) if v is not _MISSING and idx[i] is not None]
                if not sel:
                    continue
                raw = [column[i] for i in sel]
                rows = np.array([idx[i] for i in sel], dtype=np.int64)

                def where(j: int, sel: list[int] = sel, a: str = a) -> Path_:
                    return (*cp, key, names[sel[j]], a)

                values[rows, axis] = _floats(raw, where, probs) * factor
                quantum[rows, axis] = _quanta(raw) * factor
            return values, quantum

        disp, disp_q = components("displacements", lf)
        reac, reac_q = components("reactions", ff)
        forces = np.full(m, np.nan)
        forces_q = np.full(m, np.nan)
        table_f: dict[str, Any] = case.get("axial_forces", {})
        names_f = list(table_f)
        idx_f = list(map(frame.member_index.get, names_f))
        if None in idx_f:
            for i in (i for i, v in enumerate(idx_f) if v is None):
                probs.add((*cp, "axial_forces", names_f[i]), f"unknown member {names_f[i]!r}")
            keep = [i for i, v in enumerate(idx_f) if v is not None]
        else:
            keep = list(range(len(names_f)))
        if keep:
            raw_all = list(table_f.values())
            raw_f = [raw_all[i] for i in keep]
            rows_f = np.array([idx_f[i] for i in keep], dtype=np.int64)

            def where_f(j: int, keep: list[int] = keep, cp: Path_ = cp, names_f: list[str] = names_f) -> Path_:
                return (*cp, "axial_forces", names_f[keep[j]])

            forces[rows_f] = _floats(raw_f, where_f, probs) * (ff * axial_sign)
            forces_q[rows_f] = _quanta(raw_f) * ff
        out.append(
            CaseResults(
                case_id=cid,
                displacements=disp,
                displacement_quantum=disp_q,
                axial_forces=forces,
                axial_force_quantum=forces_q,
                reactions=reac,
                reaction_quantum=reac_q,
                has_displacements="displacements" in case,
                has_axial_forces="axial_forces" in case,
                has_reactions="reactions" in case,
            )
        )
    return Results(
        source=body.get("source", ""),
        sign_convention=sign_convention,
        units=units,
        length_factor=lf,
        force_factor=ff,
        cases=tuple(out),
    )


def _stiffness(st: dict[str, Any], frame: _Frame, probs: _Problems) -> SourceStiffness:
    base: Path_ = ("stiffness",)
    dof_node: list[int] = []
    dof_axis: list[int] = []
    seen: dict[tuple[int, int], int] = {}
    for i, (nid_raw, axis_name) in enumerate(st["dofs"]):
        nid = _id(nid_raw)
        ni = frame.node_index.get(nid)
        axis = AXES.index(axis_name)
        if ni is None:
            probs.add((*base, "dofs", i, 0), f"unknown node {nid!r}")
            ni = -1
        if axis >= frame.dim:
            probs.add((*base, "dofs", i, 1), f"axis {axis_name!r} does not exist in a {frame.dim}D model")
        elif ni >= 0:
            if (ni, axis) in seen:
                probs.add((*base, "dofs", i), f"degree of freedom [{nid!r}, {axis_name!r}] is listed twice")
            seen.setdefault((ni, axis), i)
        dof_node.append(ni)
        dof_axis.append(axis)
    entries = st["entries"]
    n_dofs = len(dof_node)
    rows = np.array([e[0] for e in entries], dtype=object)
    cols = np.array([e[1] for e in entries], dtype=object)
    values = _floats([e[2] for e in entries], lambda i: (*base, "entries", i, 2), probs)
    for pos, arr in ((0, rows), (1, cols)):
        if len(arr):
            for i in np.flatnonzero((arr < 0) | (arr >= n_dofs)).tolist():
                probs.add((*base, "entries", i, pos), f"index {arr[i]} is out of range: there are {n_dofs} dofs")
    if st["storage"] == "upper" and len(entries):
        for i in np.flatnonzero(rows > cols).tolist():
            probs.add((*base, "entries", i), "an entry below the diagonal, but storage is 'upper'")
    if probs:
        rows_i = np.zeros(len(entries), dtype=np.int64)
        cols_i = np.zeros(len(entries), dtype=np.int64)
    else:
        rows_i = rows.astype(np.int64)
        cols_i = cols.astype(np.int64)
    return SourceStiffness(
        dof_node=np.array(dof_node, dtype=np.int64),
        dof_axis=np.array(dof_axis, dtype=np.int64),
        storage=st["storage"],
        rows=rows_i,
        cols=cols_i,
        values=values,
    )


def _build_model(doc: dict[str, Any], probs: _Problems, cols: _Columns) -> Model:
    dim: int = doc["dimensions"]
    u = doc["units"]
    units = Units(u["length"], u["force"], u.get("temperature"))
    nodes: list[dict[str, Any]] = doc["nodes"]
    members: list[dict[str, Any]] = doc["members"]
    if not nodes:
        probs.add(("nodes",), "a model needs at least one node")
    if not members:
        probs.add(("members",), "a model needs at least one member")

    node_ids, node_index = _index_ids(nodes, "id", "node", ("nodes",), probs, cols)
    if dim == 2:
        for i in (i for i, nd in enumerate(nodes) if "z" in nd) if cols.any_has(nodes, "z") else ():
            probs.add(("nodes", i, "z"), "key 'z' is not allowed in a 2D model")
    else:
        for i in (i for i, nd in enumerate(nodes) if "z" not in nd):
            probs.add(("nodes", i, "z"), "required key 'z' is missing (the model is 3D)")
    raw_cols = [cols.column(nodes, a) for a in AXES[:dim]]
    raw_cols = [[0 if v is _MISSING else v for v in col] if _MISSING in col else col for col in raw_cols]

    def node_path(axis: str) -> Callable[[int], Path_]:
        return lambda i: ("nodes", i, axis)

    coord_cols = [_floats(col, node_path(a), probs) for col, a in zip(raw_cols, AXES, strict=False)]
    coords = np.stack(coord_cols, axis=1) if nodes else np.zeros((0, dim))
    coords_text = tuple(zip(*(_texts(col) for col in raw_cols), strict=True))

    member_ids, member_index = _index_ids(members, "id", "member", ("members",), probs, cols)
    # look ends up by the id as written first (no string made per member), then by its string form (7 == "7")
    by_written = dict(zip(cols.column(nodes, "id"), range(len(nodes)), strict=True))
    conn = np.empty((len(members), 2), dtype=np.int64)
    for col, key in enumerate(("start", "end")):
        written = cols.column(members, key)
        conn[:, col] = np.fromiter(
            map(by_written.get, written, itertools.repeat(-1, len(written))), dtype=np.int64, count=len(written)
        )
        for i in np.flatnonzero(conn[:, col] < 0).tolist():
            name = str(written[i])
            conn[i, col] = node_index.get(name, -1)
            if conn[i, col] < 0:
                probs.add(("members", i, key), f"unknown node {name!r}")
    known = (conn >= 0).all(axis=1)
    same = known & (conn[:, 0] == conn[:, 1])
    for i in np.flatnonzero(same).tolist():
        probs.add(("members", i, "end"), f"the member starts and ends at the same node {node_ids[conn[i, 0]]!r}")
    if len(conn) and len(coords):
        safe = np.where(conn >= 0, conn, 0)
        coincident = known & ~same & np.all(coords[safe[:, 0]] == coords[safe[:, 1]], axis=1)
        for i in np.flatnonzero(coincident).tolist():
            a, b = node_ids[conn[i, 0]], node_ids[conn[i, 1]]
            probs.add(("members", i), f"zero length: its end nodes {a!r} and {b!r} are at the same point")

    arrays, texts, has_alpha = _member_properties(doc, members, probs, cols)
    sup = _supports(doc, dim, node_index, probs)
    cases, combos = _case_ids(doc, probs)
    n, m = len(nodes), len(members)
    load_cases = tuple(
        _load_case(lc, k, dim, units, node_index, member_index, has_alpha, sup, n, m, probs)
        for k, lc in enumerate(doc.get("load_cases", []))
    )
    combinations = _combinations(doc, cases, combos, probs)
    frame = _Frame(dim, units, node_index, member_index, frozenset(cases) | frozenset(combos), n, m)
    results = _results(doc["results"], frame, ("results",), probs) if "results" in doc else None
    stiffness = _stiffness(doc["stiffness"], frame, probs) if "stiffness" in doc else None
    return Model(
        title=doc.get("title", ""),
        dim=dim,
        units=units,
        node_ids=tuple(node_ids),
        coords=coords,
        member_ids=tuple(member_ids),
        conn=conn,
        E=arrays["E"],
        A=arrays["A"],
        alpha=arrays["alpha"],
        restraint_node=np.array(sup.node, dtype=np.int64),
        restraint_dir=np.array(sup.dirs, dtype=np.float64).reshape(-1, dim),
        restraint_label=tuple(sup.labels),
        spring_node=np.array(sup.spring_node, dtype=np.int64),
        spring_dir=np.array(sup.spring_dirs, dtype=np.float64).reshape(-1, dim),
        spring_k=np.array(sup.spring_k, dtype=np.float64),
        load_cases=load_cases,
        combinations=combinations,
        results=results,
        stiffness=stiffness,
        description=doc.get("description", ""),
        coords_text=coords_text,
        E_text=texts["E"],
        A_text=texts["A"],
        alpha_text=texts["alpha"],  # "0" where not given
        restraint_dir_text=tuple(sup.dir_texts),
        spring_dir_text=tuple(sup.spring_dir_texts),
        spring_k_text=tuple(sup.spring_k_text),
    )


# ================================================================= public API
@contextlib.contextmanager
def _no_cycle_collection() -> Iterator[None]:
    """Pause Python's cycle collector while a large document is read.

    Reading creates millions of small containers and no reference cycles; the
    collector would otherwise rescan the growing document again and again.
    It is switched back on (if it was on) however the block ends.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def parse_model(data: bytes | str, name: str = "<model>") -> Model:
    """Read a model document (``FORMAT.md``) from its bytes or text.

    Raises
    ------
    InputError
        listing every problem found, in document order.
    """
    with _no_cycle_collection():
        return _parse_model(data, name)


def _parse_model(data: bytes | str, name: str) -> Model:
    parsed = _read_json(data, name)
    probs = _Problems()
    cols = _Columns()
    _check_document(parsed, "model", probs, cols)
    if probs.blocking:
        raise probs.error(parsed.doc, name)
    model = _build_model(parsed.doc, probs, cols)
    if probs:
        raise probs.error(parsed.doc, name)
    return model


def load_model(path: PathLike) -> Model:
    """Read a model file; see :func:`parse_model`."""
    name = str(path)
    return parse_model(read_input_bytes(path, MAX_BYTES), name)


def _frame_of(model: Model) -> _Frame:
    return _Frame(
        model.dim,
        model.units,
        model.node_index(),
        model.member_index(),
        frozenset(model.all_case_ids()),
        model.n_nodes,
        model.n_members,
    )


def parse_results(data: bytes | str, model: Model, name: str = "<results>") -> Results:
    """Read a results document for ``model``: values in model units, axial forces tension positive."""
    with _no_cycle_collection():
        return _parse_results(data, model, name)


def _parse_results(data: bytes | str, model: Model, name: str) -> Results:
    parsed = _read_json(data, name)
    probs = _Problems()
    _check_document(parsed, "results", probs, _Columns())
    if probs.blocking:
        raise probs.error(parsed.doc, name)
    results = _results(parsed.doc, _frame_of(model), (), probs)
    if probs:
        raise probs.error(parsed.doc, name)
    return results


def load_results(path: PathLike, model: Model) -> Results:
    """Read a results file; see :func:`parse_results`."""
    return parse_results(read_input_bytes(path, MAX_BYTES), model, str(path))


# ===================================================================== writer
class _Raw(str):
    """A JSON number's text, written as it is."""

    __slots__ = ()


def _exact(v: Any) -> tuple[int, int]:
    """The exact value of a float, int, Fraction, Decimal or mpmath number as a ratio (numerator, denominator > 0)."""
    if isinstance(v, bool):
        raise TypeError("a boolean is not a number")
    if isinstance(v, Fraction):
        return v.numerator, v.denominator
    if isinstance(v, int):
        return v, 1
    if hasattr(v, "_mpf_"):  # mpmath.mpf: (sign, mantissa, exponent, bits)
        import mpmath

        if not mpmath.isfinite(v):
            raise ValueError(f"cannot write a non-finite number ({v}) in JSON")
        sign, man, exp, _bits = v._mpf_
        man = -int(man) if sign else int(man)
        return (man << int(exp), 1) if exp >= 0 else (man, 1 << -int(exp))
    if isinstance(v, Decimal):
        if not v.is_finite():
            raise ValueError(f"cannot write a non-finite number ({v}) in JSON")
        q = Fraction(v)
        return q.numerator, q.denominator
    f = float(v)
    if not math.isfinite(f):
        raise ValueError(f"cannot write a non-finite number ({f}) in JSON")
    return f.as_integer_ratio()


_LOG10_2 = math.log10(2)


def _round_ratio(p: int, q: int, digits: int) -> tuple[str, int]:
    """Significant digits and decimal exponent of p/q > 0, rounded half to even: (digit string, e) with
    p/q ~= 0.d1d2... * 10**(e+1)."""
    e = math.floor((p.bit_length() - q.bit_length()) * _LOG10_2)
    low, high = 10 ** (digits - 1), 10**digits
    while True:
        shift = digits - 1 - e
        num, den = (p * 10**shift, q) if shift >= 0 else (p, q * 10**-shift)
        n, r = divmod(num, den)
        if n >= high:
            e += 1
        elif n < low:
            e -= 1
        else:
            if 2 * r > den or (2 * r == den and n & 1):
                n += 1
            if n == high:  # rounded up into the next decade: 9.99.. -> 10.0
                return str(low), e + 1
            return str(n), e


def _layout(negative: bool, s: str, e: int) -> str:
    """A JSON number from significant digits ``s`` and exponent ``e``: positional as Python's repr would, else
    ``d.ddde-05`` style; every digit kept (trailing zeros are significant)."""
    digits = len(s)
    sign = "-" if negative else ""
    if e >= digits or e < -4:  # the same switch as Python's repr of a float
        return f"{sign}{s[0]}{'.' + s[1:] if digits > 1 else ''}e{e:+03d}"
    if e >= 0:
        return sign + s[: e + 1] + ("." + s[e + 1 :] if e + 1 < digits else "")
    return sign + "0." + "0" * (-e - 1) + s


def _significant(v: Any, digits: int) -> str:
    """``v`` rounded half to even to ``digits`` significant digits, from its exact value."""
    if type(v) is float:
        if not math.isfinite(v):
            raise ValueError(f"cannot write a non-finite number ({v}) in JSON")
        if v == 0:
            return "0"
        # float formatting is correctly rounded from the exact binary value (half to even on ties)
        mant, _, exp = format(v, f".{digits - 1}e").partition("e")
        return _layout(mant.startswith("-"), mant.lstrip("-").replace(".", ""), int(exp))
    p, q = _exact(v)
    if p == 0:
        return "0"
    s, e = _round_ratio(abs(p), q, digits)
    return _layout(p < 0, s, e)


def _number(v: Any, digits: int | None) -> _Raw:
    if digits is None:
        f = float(v)
        if not math.isfinite(f):
            raise ValueError(f"cannot write a non-finite number ({f}) in JSON")
        return _Raw("0" if f == 0 else repr(f))
    return _Raw(_significant(v, digits))


def _numbers(values: Any, digits: int | None) -> list[str]:
    """JSON texts of many numbers (see :func:`dump_results`)."""
    arr = np.asarray(values)
    if arr.dtype.kind in "fiub":
        floats = arr.astype(np.float64).ravel()
        if not np.isfinite(floats).all():
            raise ValueError("cannot write a non-finite number in JSON")
        if digits is None:
            return ["0" if f == 0 else repr(f) for f in floats.tolist()]
        return [_significant(f, digits) for f in floats.tolist()]
    return [_number(v, digits) for v in arr.ravel().tolist()]


def _flat(v: Any) -> bool:
    if isinstance(v, dict):
        return all(not isinstance(x, (dict, list)) or (isinstance(x, list) and _flat(x)) for x in v.values())
    if isinstance(v, list):
        return all(not isinstance(x, (dict, list)) for x in v)
    return True


def _emit(v: Any, indent: int, out: list[str]) -> None:
    """Append the JSON text of ``v``: containers of scalars on one line, others one item per line."""
    if isinstance(v, _Raw):
        out.append(v)
    elif isinstance(v, str):
        out.append(json.dumps(v, ensure_ascii=False))
    elif isinstance(v, bool) or v is None:
        out.append(json.dumps(v))
    elif isinstance(v, int):
        out.append(str(v))
    elif isinstance(v, dict):
        if not v:
            out.append("{}")
            return
        inline = _flat(v)
        pad = "" if inline else "\n" + "  " * (indent + 1)
        out.append("{" + pad)
        for i, (k, x) in enumerate(v.items()):
            if i:
                out.append(", " if inline else "," + pad)
            out.append(json.dumps(k, ensure_ascii=False) + ": ")
            _emit(x, indent + 1, out)
        out.append("}" if inline else "\n" + "  " * indent + "}")
    elif isinstance(v, list):
        if not v:
            out.append("[]")
            return
        inline = _flat(v)
        pad = "" if inline else "\n" + "  " * (indent + 1)
        out.append("[" + pad)
        for i, x in enumerate(v):
            if i:
                out.append(", " if inline else "," + pad)
            _emit(x, indent + 1, out)
        out.append("]" if inline else "\n" + "  " * indent + "]")
    else:
        raise TypeError(f"cannot write {type(v).__name__} in JSON")


def _to_text(doc: Any) -> str:
    out: list[str] = []
    _emit(doc, 0, out)
    out.append("\n")
    return "".join(out)


def _units_dict(units: Units, with_temperature: bool = True) -> dict[str, str]:
    d = {"length": units.length, "force": units.force}
    if with_temperature and units.temperature is not None:
        d["temperature"] = units.temperature
    return d


def dump_results(model: Model, cases: Sequence[Any], *, source: str, digits: int | None = None) -> str:
    """A results document (``FORMAT.md``) for ``model``: every displacement, axial force and support reaction.

    Parameters
    ----------
    cases
        objects with ``case_id``, ``displacements`` (n_nodes, dim), ``axial_forces`` (n_members,) and
        ``reactions`` (n_nodes, dim), in model units, tension positive.  Entries may be floats or
        exact / high-precision numbers (``fractions.Fraction``, ``mpmath.mpf``, ``decimal.Decimal``).
    source
        free text saying where the results came from.
    digits
        ``None``: each value as a float in its shortest round-trip form; ``N``: the exact value
        rounded half-to-even to N significant digits (trailing zeros kept, as they are significant).
        Zero of either sign is written ``0``.
    """
    if digits is not None and digits < 1:
        raise ValueError(f"digits must be at least 1, got {digits}")
    dim, n, m = model.dim, model.n_nodes, model.n_members
    node_keys = [json.dumps(i, ensure_ascii=False) for i in model.node_ids]
    member_keys = [json.dumps(i, ensure_ascii=False) for i in model.member_ids]
    row = "{}: {{" + ", ".join(f'"{a}": {{}}' for a in AXES[:dim]) + "}}"
    supported = sorted(set(model.restraint_node.tolist()) | set(model.spring_node.tolist()))
    out = [
        "{\n",
        f'  "format": "{RESULTS_FORMAT}",\n',
        f'  "version": {FORMAT_VERSION},\n',
        f'  "source": {json.dumps(source, ensure_ascii=False)},\n',
        '  "sign_convention": "tension_positive",\n',
        f'  "units": {json.dumps(_units_dict(model.units, with_temperature=False))},\n',
        '  "cases": {',
    ]
    for k, case in enumerate(cases):
        disp = _numbers(case.displacements, digits)
        forces = _numbers(case.axial_forces, digits)
        reac = _numbers(case.reactions, digits)
        if len(disp) != n * dim or len(reac) != n * dim or len(forces) != m:
            raise ValueError(
                f"case {case.case_id!r}: expected displacements and reactions of shape ({n}, {dim}) "
                f"and {m} axial forces"
            )
        d_rows = [row.format(node_keys[i], *disp[i * dim : (i + 1) * dim]) for i in range(n)]
        f_rows = [f"{key}: {v}" for key, v in zip(member_keys, forces, strict=True)]
        r_rows = [row.format(node_keys[i], *reac[i * dim : (i + 1) * dim]) for i in supported]
        out.append(("," if k else "") + f"\n    {json.dumps(str(case.case_id), ensure_ascii=False)}: {{\n")
        out.append(f'      "displacements": {_block(d_rows, 6)},\n')
        out.append(f'      "axial_forces": {_block(f_rows, 6)},\n')
        out.append(f'      "reactions": {_block(r_rows, 6)}\n    }}')
    out.append("\n  }\n}\n" if cases else "}\n}\n")
    return "".join(out)


def _block(rows: list[str], indent: int) -> str:
    """A JSON object from its ``key: value`` rows, one per line."""
    if not rows:
        return "{}"
    pad = " " * (indent + 2)
    return "{\n" + pad + (",\n" + pad).join(rows) + "\n" + " " * indent + "}"


def _merge_order(first: list[int], second: list[int]) -> list[int]:
    """Nodes in an order that keeps the relative order of both lists (each node once)."""
    in_first, in_second = set(first), set(second)
    out: list[int] = []
    i = j = 0
    while i < len(first) or j < len(second):
        if i < len(first) and (j >= len(second) or first[i] == second[j] or first[i] not in in_second):
            if j < len(second) and first[i] == second[j]:
                j += 1
            out.append(first[i])
            i += 1
        elif j < len(second) and (i >= len(first) or second[j] not in in_first):
            out.append(second[j])
            j += 1
        else:  # both heads wait for each other: cannot come from one file; fall back to first-list order
            out.append(first[i])
            i += 1
    seen: set[int] = set()
    return [x for x in out if not (x in seen or seen.add(x))]  # type: ignore[func-returns-value]


def _raw_results_number(v: float) -> _Raw:
    return _Raw(repr(float(v)))


def dump_model(model: Model) -> str:
    """Write ``model`` back in the model format, every input number from its kept decimal text.

    Members get inline E, A and alpha (materials and sections are resolved on reading).  Reported
    results are written in model units, tension positive, each value in its shortest round-trip form.
    """
    dim = model.dim
    axes = AXES[:dim]
    ids = model.node_ids
    doc: dict[str, Any] = {"format": MODEL_FORMAT, "version": FORMAT_VERSION}
    if model.title:
        doc["title"] = model.title
    if model.description:
        doc["description"] = model.description
    doc["dimensions"] = dim
    doc["units"] = _units_dict(model.units)
    doc["nodes"] = [
        {"id": ids[i], **{axes[a]: _Raw(model.coords_text[i][a]) for a in range(dim)}} for i in range(model.n_nodes)
    ]
    doc["members"] = [
        {
            "id": model.member_ids[j],
            "start": ids[int(model.conn[j, 0])],
            "end": ids[int(model.conn[j, 1])],
            "E": _Raw(model.E_text[j]),
            "A": _Raw(model.A_text[j]),
            "alpha": _Raw(model.alpha_text[j]),
        }
        for j in range(model.n_members)
    ]
    restrain: dict[int, list[Any]] = {}
    for r, ni in enumerate(model.restraint_node.tolist()):
        label = model.restraint_label[r]
        item = label if label in AXES else {"direction": [_Raw(t) for t in model.restraint_dir_text[r]]}
        restrain.setdefault(ni, []).append(item)
    springs: dict[int, list[Any]] = {}
    for s, ni in enumerate(model.spring_node.tolist()):
        springs.setdefault(ni, []).append(
            {"direction": [_Raw(t) for t in model.spring_dir_text[s]], "stiffness": _Raw(model.spring_k_text[s])}
        )
    supports = []
    for ni in _merge_order(list(restrain), list(springs)):
        entry: dict[str, Any] = {"node": ids[ni]}
        if ni in restrain:
            entry["restrain"] = restrain[ni]
        if ni in springs:
            entry["springs"] = springs[ni]
        supports.append(entry)
    if supports:
        doc["supports"] = supports
    if model.load_cases:
        doc["load_cases"] = [_dump_case(model, lc) for lc in model.load_cases]
    if model.combinations:
        doc["combinations"] = [
            {"id": c.id, "factors": {model.load_cases[k].id: _Raw(t) for k, _f, t in c.factors}}
            for c in model.combinations
        ]
    if model.results is not None:
        doc["results"] = _dump_embedded_results(model, model.results)
    if model.stiffness is not None:
        st = model.stiffness
        doc["stiffness"] = {
            "dofs": [[ids[ni], AXES[a]] for ni, a in zip(st.dof_node.tolist(), st.dof_axis.tolist(), strict=True)],
            "storage": st.storage,
            "entries": [
                [r, c, _raw_results_number(v)]
                for r, c, v in zip(st.rows.tolist(), st.cols.tolist(), st.values.tolist(), strict=True)
            ],
        }
    return _to_text(doc)


def _dump_case(model: Model, lc: LoadCase) -> dict[str, Any]:
    ids = model.node_ids
    out: dict[str, Any] = {"id": lc.id}
    if lc.title:
        out["title"] = lc.title
    if lc.load_text:
        out["loads"] = [{"node": ids[n], ("fx", "fy", "fz")[a]: _Raw(t)} for n, a, t in lc.load_text]
    if lc.temperature_text:
        out["temperature_changes"] = [{"member": model.member_ids[j], "delta": _Raw(t)} for j, t in lc.temperature_text]
    if lc.length_error_text:
        out["length_errors"] = [{"member": model.member_ids[j], "value": _Raw(t)} for j, t in lc.length_error_text]
    if lc.settlement_text:
        items: list[dict[str, Any]] = []
        for r, t in lc.settlement_text:
            node = ids[int(model.restraint_node[r])]
            label = model.restraint_label[r]
            if label in AXES:
                items.append({"node": node, label: _Raw(t)})
            else:
                items.append(
                    {"node": node, "direction": [_Raw(x) for x in model.restraint_dir_text[r]], "value": _Raw(t)}
                )
        out["support_displacements"] = items
    return out


def _dump_embedded_results(model: Model, results: Results) -> dict[str, Any]:
    axes = AXES[: model.dim]

    def comps(arr: FloatArray) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for i, row in enumerate(arr.tolist()):
            c = {axes[a]: _raw_results_number(v) for a, v in enumerate(row) if not math.isnan(v)}
            if c:
                out[model.node_ids[i]] = c
        return out

    cases: dict[str, Any] = {}
    for c in results.cases:
        body: dict[str, Any] = {}
        if c.has_displacements:
            body["displacements"] = comps(c.displacements)
        if c.has_axial_forces:
            body["axial_forces"] = {
                model.member_ids[j]: _raw_results_number(v)
                for j, v in enumerate(c.axial_forces.tolist())
                if not math.isnan(v)
            }
        if c.has_reactions:
            body["reactions"] = comps(c.reactions)
        cases[c.case_id] = body
    out: dict[str, Any] = {}
    if results.source:
        out["source"] = results.source
    out["sign_convention"] = "tension_positive"
    out["units"] = _units_dict(model.units, with_temperature=False)
    out["cases"] = cases
    return out
