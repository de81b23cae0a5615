"""Stage 2 of reading: the shape of a document against the JSON Schemas in ``audit/schema/`` (2020-12).

Schema errors become messages in plain words with JSON paths such as
``members[3].end``.  The large arrays and maps of a document are first taken
out and proven valid in bulk (:mod:`audit.exchange.bulk`); only items the bulk
check cannot vouch for go through the schema validator.  More nodes or members
than :data:`audit.exchange.MAX_ITEMS` (read at call time) are refused before
any of this.
"""

from __future__ import annotations

import functools
import json
import re
from collections.abc import Iterable
from importlib import resources
from typing import Any

import jsonschema
from referencing import Registry, Resource

from .. import exchange as _limits  # the package: MAX_* are read from it at call time
from .bulk import _Columns, _Hot, _light_model, _light_results
from .jsonread import _Json, _json_problems
from .problems import Path_, _Problems
from .values import _kind, _show
from .version import _MODEL_ID, _RESULTS_ID


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


def _check_document(parsed: _Json, kind: str, probs: _Problems, cols: _Columns) -> None:
    """JSON-level and schema problems of a whole model or results document."""
    doc = parsed.doc
    if kind == "model" and type(doc) is dict:
        max_items = _limits.MAX_ITEMS
        for key in ("nodes", "members"):
            if type(doc.get(key)) is list and len(doc[key]) > max_items:
                probs.add((key,), f"too many {key}: {len(doc[key])}, the limit is {max_items}", blocking=True)
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
