"""The large maps of reported results read straight from their bytes: names, decimal texts and axes as numpy arrays.

A results map (``axial_forces``: name -> number; ``displacements`` and
``reactions``: name -> components) holds an entry per member or node; read
into Python objects, each entry costs a key string, a number object and, for
components, a dict, and then passes over them all.  Here the map's bytes are
taken apart with numpy instead: quote pairs give the strings, brace depth
tells keys of entries from keys of components, runs of number characters are
the numbers, each kept as its written text (an ``S`` array) until converted.

Only what certainly reads the same as the tree does is accepted (else None,
and the caller builds the tree): msgspec has already checked the map's syntax
(it skips a ``Raw`` value by parsing it), the caller has made sure that the
whole input is ASCII with no backslash (so a string holds no quote), and here
every string must be a key, every value a number (components: an object of
``x``/``y``/``z`` numbers), with no other characters than white space,
number characters, ``{}:,``.  Duplicate names are left for the reader of the
map to refuse (it steps aside then), as are unknown names and numbers beyond
float64 (see :func:`numbers_of`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .values import _HALF_UNIT_ARRAY, _text_exponents

_WS = b" \t\n\r"
_NUMBER = b"0123456789+-.eE"
_ALLOWED = np.zeros(256, dtype=bool)
_ALLOWED[list(_WS + _NUMBER + b"{}:,")] = True
_IS_NUMBER = np.zeros(256, dtype=bool)
_IS_NUMBER[list(_NUMBER)] = True
_AXIS_OF = np.full(256, -1, dtype=np.int64)
_AXIS_OF[list(b"xyz")] = [0, 1, 2]
#: the longest name or number text taken apart here (a longer one: the tree reads the map)
MAX_WIDTH = 48


class ScanRefusedError(Exception):
    """Raised where a scanned map cannot be read as the tree would be: the caller reads the tree instead."""


@dataclass(frozen=True)
class ScannedMap:
    """A results map as read from its bytes (in the tree in place of the dict; see :mod:`audit.exchange.reported`).

    ``entry[j]`` is the entry (index into ``names``) that number ``j`` belongs to and ``axis[j]`` its axis
    (-1 in a map of plain numbers, one number per entry).
    """

    names: np.ndarray  #: (entries,) bytes: the names as written
    texts: np.ndarray  #: (numbers,) bytes: every number's decimal text
    entry: np.ndarray  #: (numbers,) int64
    axis: np.ndarray  #: (numbers,) int64
    keys: int  #: keys in the map's text (names and component keys), for the reader's duplicate-key count

    def __len__(self) -> int:
        return len(self.names)


def _gather(b: np.ndarray, start: np.ndarray, end: np.ndarray) -> np.ndarray | None:
    """The byte strings ``b[start[i]:end[i]]`` as one ``S`` array (None if one is longer than MAX_WIDTH)."""
    lengths = end - start
    width = int(lengths.max()) if len(lengths) else 1
    if width > MAX_WIDTH:
        return None
    width = max(width, 1)
    out = np.zeros((len(start), width), dtype=np.uint8)
    last = len(b) - 1
    for j in range(width):
        out[:, j] = np.where(lengths > j, b[np.minimum(start + j, last)], 0)
    return out.view(f"S{width}").ravel()


@dataclass
class _Tokens:
    b: np.ndarray
    opens: np.ndarray  #: position of each string's opening quote
    closes: np.ndarray
    brace_pos: np.ndarray  #: "{" and "}" outside strings, in order
    brace_depth: np.ndarray  #: the depth after each of them
    colons: np.ndarray  #: ":" outside strings
    brace_opens: np.ndarray  #: "{" outside strings
    run_starts: np.ndarray  #: runs of number characters outside strings
    run_ends: np.ndarray

    def depth(self, pos: np.ndarray) -> np.ndarray:
        """Brace depth at each position (outside strings)."""
        k = np.searchsorted(self.brace_pos, pos, side="right") - 1
        return np.where(k >= 0, self.brace_depth[np.maximum(k, 0)], 0)


def _tokens(seg: bytes, allowed: np.ndarray = _ALLOWED) -> _Tokens | None:
    """Strings, braces, colons and number runs of a map's text; None if something else is outside its strings.

    A position is inside a string when an odd number of quotes comes before it (a running count in
    ``uint8``, whose parity is right however it wraps).
    """
    b = np.frombuffer(seg, dtype=np.uint8)
    quote = b == 34
    q = np.flatnonzero(quote)
    if len(q) % 2:
        return None
    outside = (np.cumsum(quote, dtype=np.uint8) & 1) == 0
    outside &= ~quote
    if (outside & ~allowed[b]).any():
        return None
    opens = np.flatnonzero(outside & (b == ord("{")))
    closes_b = np.flatnonzero(outside & (b == ord("}")))
    brace_pos = np.concatenate([opens, closes_b])
    order = np.argsort(brace_pos, kind="stable")
    steps = np.concatenate([np.ones(len(opens), np.int64), -np.ones(len(closes_b), np.int64)])[order]
    num = (outside & _IS_NUMBER[b]).view(np.int8)
    edge = np.diff(num, prepend=np.int8(0), append=np.int8(0))
    return _Tokens(
        b,
        q[0::2],
        q[1::2],
        brace_pos[order],
        np.cumsum(steps),
        np.flatnonzero(outside & (b == ord(":"))),
        opens,
        np.flatnonzero(edge == 1),
        np.flatnonzero(edge == -1),
    )


def scan_numbers(seg: bytes) -> ScannedMap | None:
    """``{"name": number, ...}`` taken apart, or None."""
    t = _tokens(seg)
    if t is None or len(seg) < 2 or seg[0] != ord("{") or int(t.brace_depth.max()) != 1:
        return None
    n = len(t.opens)
    if len(t.colons) != n or len(t.run_starts) != n:  # every string a key, every value one number
        return None
    names = _gather(t.b, t.opens + 1, t.closes)
    texts = _gather(t.b, t.run_starts, t.run_ends)
    if names is None or texts is None:
        return None
    index = np.arange(n, dtype=np.int64)
    return ScannedMap(names, texts, index, np.full(n, -1, dtype=np.int64), n)


def scan_components(seg: bytes) -> ScannedMap | None:
    """``{"name": {"x": number, ...}, ...}`` taken apart, or None."""
    t = _tokens(seg)
    if t is None or len(seg) < 2 or seg[0] != ord("{") or int(t.brace_depth.max()) > 2:
        return None
    at = t.depth(t.opens)
    outer, inner = t.opens[at == 1], t.opens[at == 2]
    inner_close = t.closes[at == 2]
    colon_depth = t.depth(t.colons)
    run_depth = t.depth(t.run_starts)
    entries_open = int(np.count_nonzero(t.depth(t.brace_opens) == 2))
    if (
        int(np.count_nonzero(colon_depth == 1)) != len(outer)
        or entries_open != len(outer)  # every entry's value an object (a string inside one is not a brace)
        or int(np.count_nonzero(colon_depth == 2)) != len(inner)
        or int(np.count_nonzero(run_depth == 2)) != len(inner)
        or int(np.count_nonzero(run_depth == 1)) != 0
        or np.any(inner_close - inner != 2)  # component keys of one letter ...
    ):
        return None
    axis = _AXIS_OF[t.b[inner + 1]]
    if np.any(axis < 0):  # ... each x, y or z
        return None
    names = _gather(t.b, outer + 1, t.closes[at == 1])
    texts = _gather(t.b, t.run_starts, t.run_ends)
    if names is None or texts is None:
        return None
    entry = np.searchsorted(outer, inner) - 1
    pair = entry * 3 + axis
    if len(pair) and np.bincount(pair).max() > 1:  # a component twice in one entry
        return None
    return ScannedMap(names, texts, entry.astype(np.int64), axis, len(outer) + len(inner))


def numbers_of(texts: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """(float64 values, half units of the last written digits) of decimal texts; None if one is not finite.

    The values are those of ``float()`` of each text (numpy's conversion of bytes is the same correctly
    rounded one), except that an integer ``-0`` is ``0.0``, as the tree keeps it (the integer 0).
    """
    with np.errstate(over="ignore"):
        values = texts.astype(np.float64)
    if not np.isfinite(values).all():
        return None
    negative_zero = np.flatnonzero((values == 0) & np.signbit(values))
    for i in negative_zero.tolist():
        t = bytes(texts[i])
        if b"." not in t and b"e" not in t and b"E" not in t:
            values[i] = 0.0
    k = _text_exponents(texts)
    quanta = _HALF_UNIT_ARRAY[np.clip(k, -400, 400) + 400]
    return values, quanta
