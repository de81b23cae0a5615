"""A fast path for reading very large model files: the same Model as audit.exchange, several times sooner.

:func:`audit.exchange.load_model` checks every member, node and reported
number one Python object at a time (22 s for a 2D grid of 10⁶ members
with its results, 2 cores).  Almost all of such a file is three
homogeneous parts: the members, and the reported displacements and forces.
This module reads those parts with whole-array operations and leaves
everything else to the exchange reader itself:

1. parse the JSON with the standard library's C scanner, numbers kept as
   their written text exactly as the exchange reader keeps them
   (``parse_float=bytes``), but without its per-object hook; duplicate keys
   are found instead by comparing the number of keys parsed with the number
   written (exact when the text has no backslash, so no escaped quote);
2. hand the exchange reader a *reduced* document: every part as written,
   except that the members are cut to the first one and the reported
   maps are emptied; it validates and builds all of that exactly as it
   would have (units, nodes, materials, sections, supports, load cases,
   combinations, the results' units and sign convention, a source
   stiffness);
3. check the members and the reported numbers in bulk (ids unique and
   known, shapes, numbers finite, E and A positive, no zero-length
   member) and graft them into that model, with the same arithmetic as the
   exchange reader (same values, same decimal texts, same rounding quanta).

Whenever a file is outside this common shape (backslashes, non-finite
constants, ``x-`` keys inside members or results, temperature changes or
length errors, which refer to members) or any check fails, the whole file
goes to :func:`audit.exchange.load_model`, so that every error message comes
from one reader.  ``tests/test_fastread.py`` checks that both readers give
identical models on every test file.
"""

from __future__ import annotations

import itertools
import json
import operator
import re
from dataclasses import replace
from typing import Any

import numpy as np

from audit import exchange
from audit.errors import InputError
from audit.fileio import PathLike, read_input_bytes
from audit.model import AXES, CaseResults, FloatArray, Model

#: keys a member may have on the fast path (``x-`` keys send the file to the exchange reader)
_MEMBER_KEYS = frozenset(("id", "start", "end", "E", "A", "alpha", "material", "section"))
_CASE_KEYS = frozenset(("displacements", "axial_forces", "reactions"))
_KEY_END = re.compile(rb'"[ \t\r\n]*:')
_SPACED_KEY_END = re.compile(rb'"[ \t\r\n]+:')
_EXPONENT = re.compile(rb"[eE]([-+]?[0-9]+)")


class _Slow(Exception):  # noqa: N818 - a signal, not an error
    """The file is not of the common shape: read it with the exchange reader."""


def load_model(path: PathLike) -> Model:
    """Read a model file: the same :class:`Model` (or the same InputError) as :func:`audit.exchange.load_model`."""
    raw = read_input_bytes(path, exchange.MAX_BYTES)
    try:
        return _fast(raw, str(path))
    except _Slow:
        return exchange.parse_model(raw, str(path))


def parse_model(data: bytes, name: str = "<model>") -> Model:
    """As :func:`load_model`, from the bytes of a file."""
    try:
        return _fast(bytes(data), name)
    except _Slow:
        return exchange.parse_model(data, name)


# -------------------------------------------------------------------- parse
def _no_constants(word: str) -> Any:
    raise _Slow(word)


def _fast(raw: bytes, name: str) -> Model:
    if b"\\" in raw or raw.startswith(b"\xef\xbb\xbf"):
        raise _Slow("escapes or a byte-order mark")
    try:
        doc = json.loads(raw.decode("utf-8"), parse_float=str.encode, parse_constant=_no_constants)
    except (ValueError, RecursionError) as exc:
        raise _Slow(str(exc)) from None
    if type(doc) is not dict or type(doc.get("members")) is not list or not doc["members"]:
        raise _Slow("not a model document with members")
    if len(doc["members"]) > exchange.MAX_ITEMS or type(doc.get("nodes")) is not list:
        raise _Slow("too many members, or no node list")
    if any("temperature_changes" in lc or "length_errors" in lc for lc in _dicts(doc.get("load_cases", []))):
        raise _Slow("load cases refer to members")
    members: list[Any] = doc["members"]
    results = doc.get("results")
    if results is not None and (type(results) is not dict or type(results.get("cases")) is not dict):
        raise _Slow("results of an unexpected shape")
    cases: dict[str, Any] = results["cases"] if results is not None else {}
    if not all(type(c) is dict and c.keys() <= _CASE_KEYS for c in cases.values()):
        raise _Slow("a results case of an unexpected shape")
    written = raw.count(b'":') if _SPACED_KEY_END.search(raw) is None else len(_KEY_END.findall(raw))
    if written != _count_keys(doc):
        raise _Slow("duplicate keys")
    reduced = dict(doc)
    reduced["members"] = members[:1]
    if results is not None:
        reduced["results"] = dict(results, cases={cid: {k: {} for k in c} for cid, c in cases.items()})
    base = _exchange_build(reduced, name)
    model = _graft_members(base, doc, members)
    if base.results is not None:
        model = replace(model, results=_graft_results(model, base.results, cases))
    return model


def _dicts(items: Any) -> list[dict[str, Any]]:
    return [it for it in items if type(it) is dict] if type(items) is list else []


def _count_keys(v: Any) -> int:
    """Keys of every object in the parsed document; long runs of objects are counted in bulk."""
    if type(v) is dict:
        return len(v) + _count_children(list(v.values()))
    if type(v) is list:
        return _count_children(v)
    return 0


def _count_children(values: list[Any]) -> int:
    if len(values) > 64 and all(type(x) is dict for x in values):
        total = sum(map(len, values))
        kinds = set(map(type, itertools.chain.from_iterable(map(dict.values, values))))
        if kinds & {dict, list}:
            total += sum(_count_children(list(d.values())) for d in values)
        return total
    return sum(_count_keys(x) for x in values if type(x) in (dict, list))


def _mark(v: Any) -> str:
    if type(v) is bytes:
        return "\x00" + v.decode("ascii")
    raise TypeError(f"{type(v).__name__} in a parsed document")


_MARKED = re.compile(rb'"\\u0000([^"]*)"')


def _exchange_build(reduced: dict[str, Any], name: str) -> Model:
    """The exchange reader's own checks and build, on the reduced document (any problem: the slow path).

    The reduced document is written back to JSON with every number's text as
    read (bytes are marked by the encoder, then unquoted) and given to the
    public :func:`audit.exchange.parse_model`.
    """
    text = _MARKED.sub(rb"\1", json.dumps(reduced, default=_mark, separators=(",", ":")).encode("ascii"))
    try:
        return exchange.parse_model(text, name)
    except InputError:
        raise _Slow("problems in the document") from None


# ------------------------------------------------------------------ members
def _numbers(values: list[Any]) -> FloatArray:
    """float64 of numbers as read (int or written bytes); anything else or non-finite: the slow path."""
    if not set(map(type, values)) <= {int, bytes}:
        raise _Slow("a value that is not a number")
    try:
        arr = np.fromiter(map(float, values), dtype=np.float64, count=len(values))
    except (OverflowError, ValueError):
        raise _Slow("a number beyond float64") from None
    if not np.isfinite(arr).all():
        raise _Slow("a non-finite number")
    return arr


def _texts(values: list[Any]) -> tuple[str, ...]:
    table = {v: v.decode("ascii") if type(v) is bytes else str(v) for v in set(values)}
    return tuple(map(table.__getitem__, values))


def _ids(values: list[Any]) -> list[str]:
    kinds = set(map(type, values))
    if not kinds <= {str, int}:
        raise _Slow("an id that is not a string or an integer")
    ids = list(map(str, values))
    if str in kinds and "" in ids:
        raise _Slow("an empty id")
    return ids


def _graft_members(base: Model, doc: dict[str, Any], members: list[Any]) -> Model:
    if not all(type(m) is dict for m in members):
        raise _Slow("a member that is not an object")
    keys = set().union(*members)

    def everywhere(key: str) -> bool:
        return all(map(operator.contains, members, itertools.repeat(key)))

    if not keys <= _MEMBER_KEYS or not all(map(everywhere, ("id", "start", "end"))):
        raise _Slow("a member with other keys, or without id, start or end")
    member_ids = _ids(list(map(operator.itemgetter("id"), members)))
    if len(set(member_ids)) != len(member_ids):
        raise _Slow("duplicate member ids")
    node_index = base.node_index()
    ends = []
    for key in ("start", "end"):
        idx = list(map(node_index.get, _ids(list(map(operator.itemgetter(key), members)))))
        if None in idx:
            raise _Slow("a member end that is not a node")
        ends.append(idx)
    conn = np.array(ends, dtype=np.int64).T.reshape(-1, 2)
    if (conn[:, 0] == conn[:, 1]).any() or np.all(base.coords[conn[:, 0]] == base.coords[conn[:, 1]], axis=1).any():
        raise _Slow("a member of zero length")
    materials = doc.get("materials", {})
    sections = doc.get("sections", {})
    values: dict[str, list[Any]] = {}
    for key, ref_key, table in (
        ("E", "material", materials),
        ("A", "section", sections),
        ("alpha", "material", materials),
    ):
        from_table = {name: entry.get(key) for name, entry in table.items()}
        if key not in keys and everywhere(ref_key):  # all by reference (the common case)
            refs = list(map(operator.itemgetter(ref_key), members))
            if not set(refs) <= table.keys():
                raise _Slow(f"an unknown {ref_key}")
            vals = list(map(from_table.__getitem__, refs))
        elif everywhere(key):  # all inline
            vals = list(map(operator.itemgetter(key), members))
            refs = [m.get(ref_key) for m in members] if ref_key in keys else []
            if not set(refs) <= table.keys():
                raise _Slow(f"an unknown {ref_key}")
            if None in vals:
                raise _Slow(f"{key} written as null")
        else:
            refs = [m.get(ref_key) for m in members]
            if not set(refs) <= set(table) | {None}:
                raise _Slow(f"an unknown {ref_key}")
            if any(m.get(key, 0) is None for m in members):
                raise _Slow(f"{key} written as null")
            vals = [m[key] if key in m else from_table.get(r) for m, r in zip(members, refs, strict=True)]
        if None in vals:
            if key != "alpha":
                raise _Slow(f"a member without {key}")
            vals = [0 if v is None else v for v in vals]
        values[key] = vals
    E, A, alpha = (_numbers(values[k]) for k in ("E", "A", "alpha"))
    if not ((E > 0).all() and (A > 0).all()):
        raise _Slow("E or A not positive")
    m = len(members)
    cases = tuple(replace(lc, temperature=np.zeros(m), length_error=np.zeros(m)) for lc in base.load_cases)
    return replace(
        base,
        member_ids=tuple(member_ids),
        conn=conn,
        E=E,
        A=A,
        alpha=alpha,
        E_text=_texts(values["E"]),
        A_text=_texts(values["A"]),
        alpha_text=_texts(values["alpha"]),
        load_cases=cases,
    )


# ------------------------------------------------------------------ results
def _quanta(values: list[Any]) -> FloatArray:
    """Half a unit in the last written digit of each number, as ``exchange._quantum_text`` gives it.

    For the text ``[-]d.ddd[e±x]`` with f digits after the point and exponent
    x the quantum is 5·10^(x − f − 1) ("8.333" -> 0.0005, "1.2e-3" -> 5e-5,
    "1200" -> 0.5), the value of the decimal literal ``5e{x-f-1}``.  All texts
    are scanned at once: joined with a separator and searched as one byte array.
    """
    joined = b" ".join([v if type(v) is bytes else str(v).encode() for v in values]) + b" "
    buf = np.frombuffer(joined, dtype=np.uint8)
    ends = np.flatnonzero(buf == 32)  # the separator after each text
    stop = ends.copy()  # end of each mantissa
    exponent = np.zeros(len(values), dtype=np.int64)
    exps = np.flatnonzero((buf == ord("e")) | (buf == ord("E")))
    if exps.size:
        t = np.searchsorted(ends, exps)
        stop[t] = exps
        exponent[t] = np.array(_EXPONENT.findall(joined), dtype=np.int64)
    frac = np.zeros(len(values), dtype=np.int64)
    dots = np.flatnonzero(buf == ord("."))
    if dots.size:
        t = np.searchsorted(ends, dots)
        frac[t] = stop[t] - dots - 1
    unique, inverse = np.unique(exponent - frac - 1, return_inverse=True)
    return np.array([float(f"5e{k}") for k in unique.tolist()], dtype=np.float64)[inverse.reshape(-1)]


def _graft_results(model: Model, base: Any, cases: dict[str, Any]) -> Any:
    n, m, dim = model.n_nodes, model.n_members, model.dim
    node_index = model.node_index()
    member_index = model.member_index()
    axis_of = {a: i for i, a in enumerate(AXES[:dim])}
    sign = -1.0 if base.sign_convention == "compression_positive" else 1.0
    out = []
    for cr in base.cases:
        case = cases[cr.case_id]

        def components(key: str, factor: float, case: dict[str, Any] = case) -> tuple[FloatArray, FloatArray]:
            values = np.full((n, dim), np.nan)
            quantum = np.full((n, dim), np.nan)
            table = case.get(key, {})
            if type(table) is not dict:
                raise _Slow("a results map that is not an object")
            if not table:
                return values, quantum
            comps = list(table.values())
            if not all(type(c) is dict for c in comps):
                raise _Slow("components that are not an object")
            found = list(map(node_index.get, table))
            if None in found:
                raise _Slow("an unknown node in the results")
            nodes: list[int] = found  # type: ignore[assignment]  # no None left
            ni: list[int] = []
            ai: list[int] = []
            raw: list[Any] = []
            for shape in set(map(tuple, comps)):
                if not set(shape) <= axis_of.keys():
                    raise _Slow("an axis that is not in the model")
            for node, c in zip(nodes, comps, strict=True):
                for a, v in c.items():
                    ni.append(node)
                    ai.append(axis_of[a])
                    raw.append(v)
            if raw:
                values[ni, ai] = _numbers(raw) * factor
                quantum[ni, ai] = _quanta(raw) * factor
            return values, quantum

        disp, disp_q = components("displacements", base.length_factor)
        reac, reac_q = components("reactions", base.force_factor)
        forces = np.full(m, np.nan)
        forces_q = np.full(m, np.nan)
        table = case.get("axial_forces", {})
        if type(table) is not dict:
            raise _Slow("a results map that is not an object")
        if table:
            found_m = list(map(member_index.get, table))
            if None in found_m:
                raise _Slow("an unknown member in the results")
            idx: list[int] = found_m  # type: ignore[assignment]  # no None left
            raw = list(table.values())
            forces[idx] = _numbers(raw) * (base.force_factor * sign)
            forces_q[idx] = _quanta(raw) * base.force_factor
        out.append(
            CaseResults(
                case_id=cr.case_id,
                displacements=disp,
                displacement_quantum=disp_q,
                axial_forces=forces,
                axial_force_quantum=forces_q,
                reactions=reac,
                reaction_quantum=reac_q,
                has_displacements=cr.has_displacements,
                has_axial_forces=cr.has_axial_forces,
                has_reactions=cr.has_reactions,
            )
        )
    return replace(base, cases=tuple(out))


__all__ = ["load_model", "parse_model"]
