"""Problems found in a document, each with its JSON path, and the InputError that lists them in document order.

Paths are tuples of keys and indices (:data:`Path_`), written for people as
``members[3].end`` (:func:`_path_str`).  One error lists at most
:data:`audit.exchange.MAX_PROBLEMS` problems (a last line counts the rest); the
limit is read from the package at call time.
"""

from __future__ import annotations

import json
import re
from collections.abc import Sequence
from typing import Any

from .. import exchange as _limits  # the package: MAX_* are read from it at call time
from ..errors import InputError, Problem

#: a place in a document: object keys and array indices from the top
Path_ = tuple[str | int, ...]


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
        problems = list(dict.fromkeys(Problem(_path_str(p), m, item_name(doc, p)) for _, (p, m) in ranked))
        limit = _limits.MAX_PROBLEMS
        if len(problems) > limit:
            extra = len(problems) - limit
            problems = [*problems[:limit], Problem("$", f"... and {extra} more problems not listed")]
        return InputError(problems, name)


#: how an element of each array of the documents is named, and the key that holds its name
_ITEM_KINDS: dict[str, tuple[str, str]] = {
    "nodes": ("node", "id"),
    "members": ("member", "id"),
    "supports": ("support at node", "node"),
    "load_cases": ("load case", "id"),
    "combinations": ("combination", "id"),
    "loads": ("load at node", "node"),
    "temperature_changes": ("temperature change of member", "member"),
    "length_errors": ("length error of member", "member"),
    "support_displacements": ("support displacement at node", "node"),
}


def item_name(doc: Any, path: Sequence[str | int]) -> str:
    """The items a positional path passes through, named by their ids: ``load case 'snow', load at node 'D'``.

    Empty when the path has no array index, or the element has no usable id (a missing or mistyped id is
    itself the problem then, and the position is all there is).
    """
    names: list[str] = []
    cur = doc
    parent: str | int | None = None
    for p in path:
        if isinstance(cur, dict) and isinstance(p, str):
            cur = cur.get(p)
        elif isinstance(cur, list) and isinstance(p, int) and 0 <= p < len(cur):
            cur = cur[p]
            kind = _ITEM_KINDS.get(parent) if isinstance(parent, str) else None
            if kind is not None and isinstance(cur, dict):
                ident = cur.get(kind[1])
                if isinstance(ident, bool):
                    ident = None
                if isinstance(ident, int) or (isinstance(ident, str) and ident and len(ident) <= 80):
                    names.append(f"{kind[0]} {str(ident)!r}")
        else:
            break
        parent = p
    return ", ".join(names)


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
