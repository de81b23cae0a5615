"""Where each node, member and load case is written in a model file: lines and columns from the text itself.

The SARIF report (:mod:`audit.reporters.sarif`) points a code reviewer at the line of the member or
node a finding is about.  The model reader does not keep positions (and need not: a faster decoder
may replace it), so this module makes its own small scan of the file text, run only when such a
report is asked for.  It tokenises the JSON text with one regular expression and follows the nesting
with a stack; it records, for the elements of the top-level arrays ``nodes``, ``members``,
``load_cases`` and ``combinations``, the span of each element's object and its ``id``, and for nodes
also the span of each coordinate (``"y": 3``).  The text is assumed to be a document the reader has
accepted; on anything it cannot follow the scan stops and keeps what it found.

Positions are 1-based lines and columns counted in Unicode code points (SARIF ``columnKind``
``unicodeCodePoints``); an end column is that of the character after the span (SARIF 2.1.0 §3.30).
"""

from __future__ import annotations

import bisect
import json
import re
from dataclasses import dataclass, field
from pathlib import Path

#: the top-level arrays whose elements are located, and the key naming each element
_TARGETS = {"nodes": "id", "members": "id", "load_cases": "id", "combinations": "id"}
_AXES = ("x", "y", "z")
_TOKEN = re.compile(r'"(?:[^"\\]|\\.)*"|[{}\[\]:,]|[^\s{}\[\]:,"]+')
_INT = re.compile(r"-?\d+")


@dataclass(frozen=True)
class Span:
    """A region of the text: first line and column, and the line and column just after its end."""

    line: int
    column: int
    end_line: int
    end_column: int


@dataclass(frozen=True)
class ModelPositions:
    """Spans of the items of one model file, by id."""

    nodes: dict[str, Span] = field(default_factory=dict)
    node_axes: dict[tuple[str, str], Span] = field(default_factory=dict)  #: (node id, axis) -> ``"y": 3``
    members: dict[str, Span] = field(default_factory=dict)
    cases: dict[str, Span] = field(default_factory=dict)  #: load cases and combinations

    def node(self, node: str, axis: str | None = None) -> Span | None:
        if axis is not None and (node, axis) in self.node_axes:
            return self.node_axes[(node, axis)]
        return self.nodes.get(node)


class _Lines:
    def __init__(self, text: str) -> None:
        self.starts = [0, *(m.end() for m in re.finditer("\n", text))]

    def at(self, offset: int) -> tuple[int, int]:
        i = bisect.bisect_right(self.starts, offset) - 1
        return i + 1, offset - self.starts[i] + 1

    def span(self, start: int, end: int) -> Span:
        (l0, c0), (l1, c1) = self.at(start), self.at(end)
        return Span(l0, c0, l1, c1)


def _ident(token: str) -> str | None:
    """An id as the model keeps it: a string, or an integer's decimal string (FORMAT.md)."""
    if token.startswith('"'):
        try:
            value = json.loads(token)
        except ValueError:
            return None
        return value if isinstance(value, str) else None
    return str(int(token)) if _INT.fullmatch(token) else None


class _Frame:
    __slots__ = ("array", "axes", "ident", "index", "key", "key_start", "start", "target")

    def __init__(self, array: bool, start: int, target: str | None) -> None:
        self.array = array
        self.key: str | None = None  #: the key whose value comes next (objects)
        self.key_start = 0
        self.index = 0  #: the element index (arrays)
        self.start = start
        self.target = target  #: the top-level array this object is an element of, if located
        self.ident: str | None = None
        self.axes: dict[str, tuple[int, int]] = {}


def scan_model_text(text: str) -> ModelPositions:
    """The spans of the nodes, members, load cases and combinations written in ``text``."""
    out = ModelPositions()
    lines = _Lines(text)
    stack: list[_Frame] = []
    expect_key = False
    for m in _TOKEN.finditer(text):
        tok = m.group()
        top = stack[-1] if stack else None
        c = tok[0]
        if c in "{[":
            target = None
            if c == "{" and top is not None and top.array and len(stack) == 2:
                parent_key = stack[0].key
                target = parent_key if parent_key in _TARGETS else None
            stack.append(_Frame(c == "[", m.start(), target))
            expect_key = c == "{"
        elif c in "}]":
            if not stack:
                break
            done = stack.pop()
            if done.target is not None and done.ident is not None:
                _record(out, lines, done, m.end())
            expect_key = False
        elif c == ":":
            expect_key = False
        elif c == ",":
            if top is None:
                break
            if top.array:
                top.index += 1
            else:
                expect_key = True
        elif top is not None and not top.array and expect_key:
            if len(stack) <= 3:  # keys matter only at the top and in the located elements
                try:
                    top.key = json.loads(tok)
                except ValueError:
                    break
                top.key_start = m.start()
            else:
                top.key = None
            expect_key = False
        elif top is not None and top.target is not None:  # a scalar value inside a located element
            if top.key == _TARGETS[top.target]:
                top.ident = _ident(tok)
            elif top.target == "nodes" and top.key in _AXES:
                top.axes[top.key] = (top.key_start, m.end())
    return out


def _record(out: ModelPositions, lines: _Lines, frame: _Frame, end: int) -> None:
    ident = frame.ident
    assert ident is not None
    span = lines.span(frame.start, end)
    if frame.target == "nodes":
        out.nodes.setdefault(ident, span)
        for axis, (a, b) in frame.axes.items():
            out.node_axes.setdefault((ident, axis), lines.span(a, b))
    elif frame.target == "members":
        out.members.setdefault(ident, span)
    else:
        out.cases.setdefault(ident, span)


def locate_file(path: str | Path) -> ModelPositions | None:
    """The positions in a neutral-format JSON model file, or None for any other source (or an unreadable file)."""
    from audit.sources import source_kind

    p = Path(path)
    if not p.is_file() or source_kind(p) != "json":
        return None
    try:
        text = p.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError):
        return None
    return scan_model_text(text)


__all__ = ["ModelPositions", "Span", "locate_file", "scan_model_text"]
