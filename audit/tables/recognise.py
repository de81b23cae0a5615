"""Grids -> the contract's tables: which table each grid is, which column each header is, and its unit.

The mapping file overrides the recognition by name.  A grid or a column that the contract does not
name is listed as not read (a note, code SR001), never dropped silently.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ..sources import SourceNote
from .cells import is_empty
from .grid import Grid
from .mapping import Mapping
from .names import TABLES, canonical_table, column_of, header_key, split_header, table_key
from .places import Place, TableProblems
from .units import QUANTITIES, Unit, UnitError, parse_unit

#: units that say "no unit" on a pure number column
_NO_UNIT = ("", "-", "1")


@dataclass
class Table:
    """One table of the contract as found in the source."""

    name: str  #: the contract's name
    grid: Grid
    order: int  #: the position of the grid in the source, to list problems in order
    header_row: int  #: spreadsheet number of the header row
    columns: dict[str, int]  #: our column -> its index in a row
    headers: dict[str, str]  #: our column -> its header as written
    units: dict[str, Unit]  #: our column -> the unit in its brackets
    rows: list[tuple[int, tuple[Any, ...]]]  #: (spreadsheet row, cells) of every non-empty data row

    @property
    def where(self) -> str:
        return self.grid.where

    def place(self, row: int | None = None, column: str | None = None) -> Place:
        header = self.headers.get(column) if column is not None else None
        col = self.columns.get(column, 0) if column is not None else 0
        return Place(self.where, row, header if column is not None else None, (self.order, row or 0, col))

    def cell(self, cells: tuple[Any, ...], column: str) -> Any:
        i = self.columns.get(column)
        if i is None or i >= len(cells):
            return None
        return cells[i]


def _header_row(grid: Grid) -> int | None:
    for i, row in enumerate(grid.rows):
        if any(not is_empty(c) for c in row):
            return i
    return None


def _header_text(cell: Any) -> str:
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    return "" if cell is None else str(cell).strip()


def recognise(grids: list[Grid], mapping: Mapping, probs: TableProblems, notes: list[SourceNote]) -> dict[str, Table]:
    """The contract's tables among ``grids``; problems and notes collected."""
    by_their_name = {theirs: ours for ours, theirs in mapping.tables.items()}
    by_their_key = {table_key(theirs): ours for ours, theirs in mapping.tables.items()}
    found: dict[str, Table] = {}
    matched_mapping: set[str] = set()
    for order, grid in enumerate(grids):
        ours = by_their_name.get(grid.name) or by_their_key.get(table_key(grid.name))
        if ours is not None:
            matched_mapping.add(ours)
        else:
            ours = canonical_table(grid.name)
            if ours in mapping.tables:  # the mapping gives this table another grid
                ours = None
        if ours is None:
            notes.append(SourceNote("SR001", "not read: the tables contract names no such table", grid.where))
            continue
        if ours in found:
            probs.add(
                Place(grid.where, order=(order, 0, 0)),
                f"a second {ours!r} table (the first is {found[ours].where})",
            )
            continue
        table = _recognise_columns(ours, grid, order, mapping, probs, notes)
        if table is not None:
            found[ours] = table
    for ours, theirs in mapping.tables.items():
        if ours not in matched_mapping:
            probs.add(
                Place(mapping.name, order=(-1, 0, 0)),
                f"[tables] {ours} = {theirs!r}: the source has no table (file or sheet) of that name",
            )
    return found


def _recognise_columns(
    ours: str, grid: Grid, order: int, mapping: Mapping, probs: TableProblems, notes: list[SourceNote]
) -> Table | None:
    TABLES[ours]
    top = _header_row(grid)
    if top is None:
        return Table(ours, grid, order, grid.first_row, {}, {}, {}, [])
    header_row = grid.first_row + top
    header = grid.rows[top]
    if ours == "about" and "key" not in {header_key(_header_text(c)) for c in header}:
        # an about table without its key/value header: every row is a setting (key, value)
        return Table(ours, grid, order, header_row - 1, {}, {}, {}, [])
    mapped = mapping.columns.get(ours, {})
    by_header = {theirs.strip(): col for col, theirs in mapped.items()}
    columns: dict[str, int] = {}
    headers: dict[str, str] = {}
    units: dict[str, Unit] = {}
    seen_mapped: set[str] = set()
    width = max((len(r) for r in grid.rows[top:]), default=0)
    for i in range(width):
        text = _header_text(header[i]) if i < len(header) else ""
        place = Place(grid.where, header_row, text, (order, header_row, i))
        if not text:
            if any(i < len(r) and not is_empty(r[i]) for r in grid.rows[top + 1 :]):
                notes.append(
                    SourceNote("SR001", f"not read: column {i + 1} has no header", f"{grid.where}: row {header_row}")
                )
            continue
        name, unit_text = split_header(text)
        col = by_header.get(text, by_header.get(name))
        if col is not None:
            seen_mapped.add(col)
        else:
            col = column_of(ours, name)
            if col in mapped:  # the mapping names another header for this column
                col = None
        if col is None:
            notes.append(SourceNote("SR001", "not read: the tables contract names no such column here", str(place)))
            continue
        if col in columns:
            probs.add(place, f"a second column for {col!r} (the first is {headers[col]!r})")
            continue
        columns[col] = i
        headers[col] = text
        if unit_text is not None:
            unit = _column_unit(ours, col, unit_text, place, probs)
            if unit is not None:
                units[col] = unit
    for col, theirs in mapped.items():
        if col not in seen_mapped:
            probs.add(
                Place(grid.where, header_row, theirs, (order, header_row, -1)),
                f"no such column: the mapping file {mapping.name} names it for {ours}.{col}",
            )
    first = grid.first_row + top + 1
    data = grid.rows[top + 1 :]
    if grid.text_cells:  # CSV: every cell is text; a row is empty when all its cells are blank
        kept = [k for k, r in enumerate(data) if "".join(r).strip()]
    else:  # a workbook: an empty cell is "" (a cell holding only spaces is text, and its row is read)
        kept = [k for k, r in enumerate(data) if r.count("") + r.count(None) != len(r)]
    pad = width  # every row as wide as the table, so that a column is read without bounds checks
    if len(set(map(len, data))) <= 1 and (not data or len(data[0]) >= pad):  # a workbook's rows: all as wide
        rows = [(first + k, data[k]) for k in kept]
    else:
        rows = [(first + k, r if len(r) >= pad else (*r, *([""] * (pad - len(r))))) for k in kept for r in (data[k],)]
    return Table(ours, grid, order, header_row, columns, headers, units, rows)


def _column_unit(table: str, col: str, text: str, place: Place, probs: TableProblems) -> Unit | None:
    spec = TABLES[table][col]
    if spec.quantity is None:
        if text.strip() not in _NO_UNIT:
            probs.add(place, f"unit {text!r} on a column that holds no quantity")
        return None
    try:
        unit = parse_unit(text)
    except UnitError as exc:
        probs.add(place, str(exc))
        return None
    powers, words = QUANTITIES[spec.quantity]
    if unit.powers != powers:
        probs.add(place, f"unit {text!r} does not fit this column: it takes {words}")
        return None
    return unit
