"""Places in a table source, and the problems found there.

Every problem is reported with its place: the file (``members.csv``) or sheet (``sheet "members"``),
the row number as a spreadsheet shows it and the column header, all problems together
(``TABLES.md``).  The neutral tree built from the tables carries, for each of its JSON paths, the
place it came from (:class:`Provenance`), so that a problem found by the JSON format's own shape and
meaning stages (keyed by JSON path) is reported at its table place.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field

from ..errors import InputError, Problem
from ..exchange.problems import Path_, _path_str

#: the start of the id put in place of a cell that could not be read (and was reported)
PLACEHOLDER = "\x00unread-"


@dataclass(frozen=True)
class Place:
    """A place in the source: a table (file or sheet), optionally a row, optionally a column header."""

    where: str  #: ``members.csv`` or ``sheet "members"`` ("" for the source as a whole)
    row: int | None = None
    column: str | None = None
    order: tuple[int, int, int] = (0, 0, 0)  #: (table, row, column) position, to list problems in order

    def __str__(self) -> str:
        parts = []
        if self.row is not None:
            parts.append(f"row {self.row}")
        if self.column is not None:
            parts.append(f'column "{self.column}"')
        if not self.where:
            return ", ".join(parts) or "$"
        return f"{self.where}: {', '.join(parts)}" if parts else self.where


@dataclass
class RowsOf:
    """The rows behind the items of one list or map of the tree: item key -> (row, columns)."""

    where: str
    table_order: int
    rows: dict[str | int, int]  #: item index or key -> spreadsheet row
    headers: dict[str, tuple[str, int]]  #: tree key -> (header as written, column position)
    value_column: tuple[str, int] | None = None  #: the column of an item that is a bare value (a force)


@dataclass
class Provenance:
    """JSON path -> table place, for every part of the tree that came from a table."""

    containers: dict[Path_, RowsOf] = field(default_factory=dict)
    exact: dict[Path_, Place] = field(default_factory=dict)

    def place(self, path: Path_) -> Place | None:
        """The place of ``path``: the nearest recorded place at or above it."""
        for cut in range(len(path), -1, -1):
            head = path[:cut]
            if head in self.exact and (cut == len(path) or head not in self.containers):
                return self.exact[head]
            if cut < len(path):
                rows = self.containers.get(head)
                if rows is not None and path[cut] in rows.rows:
                    row = rows.rows[path[cut]]
                    rest = path[cut + 1 :]
                    header = rows.headers.get(str(rest[0])) if rest else rows.value_column
                    column, col_order = header if header else (None, 0)
                    return Place(rows.where, row, column, (rows.table_order, row, col_order))
            if head in self.exact:
                return self.exact[head]
        return None


class TableProblems:
    """Problems found while reading tables: each with its place, and the JSON paths they cover."""

    def __init__(self) -> None:
        self.items: list[tuple[Place, str]] = []
        #: tree paths whose later problems (from the JSON stages) would only repeat one already listed
        self.covered: set[Path_] = set()

    def add(self, place: Place, message: str, *, covers: Iterable[Path_] = ()) -> None:
        self.items.append((place, message))
        self.covered.update(covers)

    def __bool__(self) -> bool:
        return bool(self.items)

    def is_covered(self, path: Path_) -> bool:
        return any(path[:cut] in self.covered for cut in range(len(path), -1, -1))

    def add_tree_problems(self, items: Iterable[tuple[Path_, str]], prov: Provenance, fallback: Place) -> None:
        """The JSON stages' problems, at their table places; JSON paths inside messages translated too."""
        for path, message in items:
            if self.is_covered(path) or PLACEHOLDER in message or any(PLACEHOLDER in str(p) for p in path):
                continue  # about a cell already reported (its placeholder), or inside one
            place = prov.place(path) or fallback
            self.items.append((place, _translate_message(message, prov)))

    def error(self, source: str) -> InputError:
        from .. import exchange as _limits

        ranked = sorted(enumerate(self.items), key=lambda it: (it[1][0].order, it[0]))
        problems = list(dict.fromkeys(Problem(str(place), message) for _, (place, message) in ranked))
        limit = _limits.MAX_PROBLEMS
        if len(problems) > limit:
            extra = len(problems) - limit
            problems = [*problems[:limit], Problem("$", f"... and {extra} more problems not listed")]
        return InputError(problems, source)


_FIRST_AT = re.compile(r"\(first at ([^)]+)\)")


def _translate_message(message: str, prov: Provenance) -> str:
    """Replace a JSON path quoted in a message (``first at members[3]``) by its table place."""
    m = _FIRST_AT.search(message)
    if not m:
        return message
    wanted = m.group(1)
    for head, rows in prov.containers.items():
        for key, row in rows.rows.items():
            if _path_str((*head, key)) == wanted:
                return message.replace(m.group(0), f"(first at {rows.where}, row {row})")
    return message
