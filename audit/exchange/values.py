"""Numbers and ids as the JSON reader keeps them: decimal texts, rounding quanta, floats, and how a value is shown.

A number as read is an ``int`` (exact) or the ``bytes`` of its written text
(see :mod:`audit.exchange.jsonread`).  Converting many of them to float64
reports every one that is not finite (:func:`_floats`, :func:`_one_float`).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable
from typing import Any

import numpy as np

from ..model import FloatArray
from .problems import Path_, _Problems

#: a JSON number as read: ``int`` (exact) or ``bytes`` (the written text of any other number)
_NUMBER_TYPES = (int, bytes)
_JSON_CONSTANTS = ("NaN", "Infinity", "-Infinity")


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
    """Half a unit in the last written digit of each number (see :func:`_quantum_text`), vectorised.

    Integers are exact (k = 0); the written texts are taken apart with numpy's string functions, exponent
    included, so that no Python call is made per number.
    """
    n = len(values)
    types = set(map(type, values))
    k = np.zeros(n, dtype=np.int64)
    if bytes in types:
        if types == {bytes}:
            where = None
            texts = np.array(values, dtype=np.bytes_)
        else:
            where = np.fromiter(map(isinstance, values, itertools.repeat(bytes)), dtype=bool, count=n)
            texts = np.array(list(itertools.compress(values, where)), dtype=np.bytes_)
        kb = _text_exponents(texts)
        if where is None:
            k = kb
        else:
            k[where] = kb
    result: FloatArray = _HALF_UNIT_ARRAY[np.clip(k, -400, 400) + 400]
    return result


def _text_exponents(texts: np.ndarray) -> np.ndarray:
    """:func:`_last_digit_exponent` of every text of a bytes array."""
    texts = np.strings.replace(texts, b"E", b"e") if np.any(np.strings.find(texts, b"E") >= 0) else texts
    epos = np.strings.find(texts, b"e")
    has_e = epos >= 0
    length = np.strings.str_len(texts)
    mant_len = np.where(has_e, epos, length)
    dot = np.strings.find(texts, b".")
    dot = np.where(dot < mant_len, dot, -1)  # a dot, if any, is in the mantissa (JSON grammar)
    k = np.where(dot >= 0, dot + 1 - mant_len, 0).astype(np.int64)
    if np.any(has_e):
        idx = np.flatnonzero(has_e)
        sub = texts[idx]
        if hasattr(np.strings, "slice"):
            exps = np.strings.slice(sub, epos[idx] + 1, length[idx]).astype(np.int64)
        else:  # numpy < 2.3
            exps = np.array([int(t[t.find(b"e") + 1 :]) for t in sub.tolist()], dtype=np.int64)
        k[idx] += exps
    return k


def _quantum_text(text: str) -> float:
    """Half a unit in the last written digit: "8.333" -> 0.0005, "1.2e-3" -> 0.00005, "1200" -> 0.5."""
    t = text.lstrip("-+")
    mant, _, exp = t.replace("E", "e").partition("e")
    e = int(exp) if exp else 0
    frac = mant.partition(".")[2]
    return float(f"5e{e - len(frac) - 1}")


def _floats(values: list[Any], where: Callable[[int], Path_ | None], probs: _Problems) -> FloatArray:
    """Convert numbers as read to float64, reporting any that are not finite (where ``where`` gives a path)."""
    try:
        distinct = set(values) if len(values) > 64 else None
        if distinct is not None and len(distinct) * 4 < len(values):  # mostly repeats: each converted once
            table = dict(zip(distinct, map(float, distinct), strict=True))
            arr = np.fromiter(map(table.__getitem__, values), dtype=np.float64, count=len(values))
        else:
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
