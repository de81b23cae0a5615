"""Reading the rows of a recognised table into tree values, with units converted and problems placed.

:class:`Reader` holds what every table needs: the decimal mark, the units chosen for the document, the
problems and notes, and the provenance being recorded.  A cell that cannot be read is reported once, at
its place, and replaced by a placeholder whose tree path is *covered*, so that the JSON stages that run
afterwards (to find every other problem too) do not report it a second time.
"""

from __future__ import annotations

import itertools
import math
import operator
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

from ..exchange.problems import Path_
from ..sources import SourceNote
from .cells import CellError, is_empty, read_components, read_flag, read_id, read_number, scaled
from .names import TABLES
from .places import PLACEHOLDER, Place, Provenance, RowsOf, TableProblems
from .recognise import Table
from .units import BASE, QUANTITIES, UnitError, conversion, parse_unit

#: the dimension letters of (length, force, temperature)
DIMS = "LFT"


@dataclass
class Units:
    """The units of a document: (length, force, temperature), and the default unit of an unbracketed column."""

    chosen: tuple[str | None, str | None, str | None]
    defaults: tuple[str | None, str | None, str | None]


@dataclass
class Reader:
    decimal_comma: bool
    probs: TableProblems
    notes: list[SourceNote]
    prov: Provenance = field(default_factory=Provenance)
    units: Units = field(default_factory=lambda: Units((None, None, None), (None, None, None)))
    _serial: itertools.count[int] = field(default_factory=itertools.count)
    _factors: dict[tuple[str, str], tuple[Fraction, bool]] = field(default_factory=dict)

    # -- placeholders for cells already reported ------------------------------------------------------

    def placeholder(self, kind: str) -> Any:
        n = next(self._serial)
        if kind == "number":
            return 10**9 + n  # positive and distinct: no zero length or sign problem follows from it
        if kind == "flag":
            return False
        if kind == "direction":
            return [1, 0]
        return f"{PLACEHOLDER}{n}"

    # -- units ------------------------------------------------------------------------------------------

    def column_factor(self, table: Table, col: str) -> Fraction | None:
        """The factor from a column's unit to the document's, or None when it needs no conversion."""
        spec = TABLES[table.name][col]
        if spec.quantity is None:
            return None
        key = (table.name, col)
        if key not in self._factors:
            self._factors[key] = self._factor(table, col, spec.quantity)
        factor, _exact = self._factors[key]
        return None if factor == 1 else factor

    def _factor(self, table: Table, col: str, quantity: str) -> tuple[Fraction, bool]:
        powers, _words = QUANTITIES[quantity]
        unit = table.units.get(col)
        chosen = self.units.chosen
        if unit is None:
            parts = [self.units.defaults[k] if p else None for k, p in enumerate(powers)]
            if all(d == c for d, c, p in zip(parts, chosen, powers, strict=True) if p):
                return Fraction(1), True
            text = "*".join(f"{u}^{p}" for u, p in zip(parts, powers, strict=True) if p and u)
            if any(p and u is None for u, p in zip(parts, powers, strict=True)):
                return Fraction(1), True
            unit = parse_unit(text)
        if any(p and chosen[k] is None for k, p in enumerate(unit.powers)):
            return Fraction(1), True  # the missing unit is reported for the whole document
        factor = conversion(unit, (chosen[0] or "m", chosen[1] or "N", chosen[2]))
        exact = _finite_decimal(factor)
        if factor != 1:
            target = "·".join(f"{chosen[k]}{'' if p == 1 else '^' + str(p)}" for k, p in enumerate(unit.powers) if p)
            code = "SR002" if exact else "SR102"
            how = "exactly" if exact else "rounded to 40 significant digits"
            self.notes.append(
                SourceNote(code, f"converted from {unit.text} to {target} ({how})", str(table.place(None, col)))
            )
        return factor, exact

    # -- cells ------------------------------------------------------------------------------------------

    def value(
        self, table: Table, row: int, cells: tuple[Any, ...], col: str, path: Path_, *, convert: bool = True
    ) -> Any:
        """The tree value of one cell (None when empty and optional); problems reported at the cell.

        ``convert=False`` leaves a number in its column's own unit (the caller converts the column)."""
        spec = TABLES[table.name][col]
        if col not in table.columns:
            return None
        cell = table.cell(cells, col)
        if is_empty(cell):
            if spec.required:
                self.probs.add(table.place(row, col), f"empty cell: {col!r} is required", covers=[path])
                return self.placeholder(spec.kind)
            return None
        try:
            if spec.kind == "number":
                v = read_number(cell, self.decimal_comma)
                factor = self.column_factor(table, col) if convert else None
                return v if factor is None else scaled(v, factor)[0]
            if spec.kind == "id":
                return read_id(cell)
            if spec.kind == "flag":
                return read_flag(cell)
            if spec.kind == "direction":
                return read_components(cell, self.decimal_comma)
            return read_id(cell)  # text
        except (CellError, UnitError) as exc:
            self.probs.add(table.place(row, col), str(exc), covers=[path])
            return self.placeholder(spec.kind)

    def column(self, table: Table, col: str, path_of: Callable[[int], Path_]) -> list[Any]:
        """The tree values of a whole column (None where empty and optional), row by row.

        The common cells (a workbook number, a CSV number already in JSON's spelling, a plain id) take
        a fast path; every other cell goes through :meth:`value`, which reports what is wrong with it.
        """
        n = len(table.rows)
        i = table.columns.get(col)
        if i is None:
            return [None] * n
        spec = TABLES[table.name][col]
        raw = list(map(operator.itemgetter(i), map(operator.itemgetter(1), table.rows)))
        if spec.kind == "number":
            fast = _fast_number_point if not self.decimal_comma else _fast_number_comma
            if set(map(type, raw)) == {float} and all(map(math.isfinite, raw)):  # workbook numbers, in C
                whole = list(map(float.is_integer, raw))
                if all(whole) and max(map(abs, raw)) < 2**53:
                    return self._converted(table, col, list(map(int, raw)))
                texts: list[Any] = list(map(str.encode, map(repr, raw)))
                for k in itertools.compress(range(len(raw)), whole):  # integral values as integers
                    if abs(raw[k]) < 2**53:
                        texts[k] = int(raw[k])
                return self._converted(table, col, texts)
        elif spec.kind == "id":
            fast = _fast_id
            types = set(map(type, raw))
            if types == {str}:  # text ids (CSV, or text cells): strip them all at once
                stripped = list(map(str.strip, raw))
                if "" not in stripped:
                    return stripped
            elif types == {float} and all(map(float.is_integer, raw)):  # workbook integers
                return list(map(str, map(int, raw)))
        else:
            fast = _always_slow
        out = list(map(fast, raw))
        marked = _SLOW in out or _EMPTY in out  # identity tests, in C
        for k in [k for k, v in enumerate(out) if v is _SLOW or v is _EMPTY] if marked else ():
            if out[k] is _EMPTY and not spec.required:
                out[k] = None
                continue
            row, cells = table.rows[k]
            out[k] = self.value(table, row, cells, col, path_of(k), convert=False)
        return self._converted(table, col, out) if spec.kind == "number" else out

    def _converted(self, table: Table, col: str, values: list[Any]) -> list[Any]:
        """A number column in the document's units (exact decimal arithmetic; None stays None)."""
        factor = self.column_factor(table, col)
        if factor is None:
            return values
        return [v if v is None else scaled(v, factor)[0] for v in values]

    def require_columns(self, table: Table, cols: tuple[str, ...]) -> None:
        """A problem at the header row for each required column the table lacks."""
        for col in cols:
            if col not in table.columns:
                self.probs.add(
                    Place(table.where, table.header_row, None, (table.order, table.header_row, 0)),
                    f"no {col!r} column (required in the {table.name} table)",
                )

    def rows_of(
        self, table: Table, path: Path_, rows: dict[str | int, int], keys: dict[str, str], value: str | None = None
    ) -> None:
        """Record that the items at ``path`` come from ``rows`` of ``table``; ``keys``: tree key -> column;
        ``value``: the column of items that are bare values."""
        headers = {k: (table.headers[c], table.columns[c]) for k, c in keys.items() if c in table.columns}
        value_column = (table.headers[value], table.columns[value]) if value in table.columns else None
        self.prov.containers[path] = RowsOf(table.where, table.order, rows, headers, value_column)

    def at(self, path: Path_, place: Place) -> None:
        self.prov.exact[path] = place


_SLOW = object()  #: a cell the fast path leaves to :meth:`Reader.value`
_EMPTY = object()  #: an empty cell
_JSON_INT = re.compile(r"-?(?:0|[1-9]\d*)")
_JSON_NUMBER = re.compile(r"-?(?:0|[1-9]\d*)(?:\.\d+)?(?:[eE][+-]?\d+)?")


def _fast_number_point(c: Any) -> Any:
    t = type(c)
    if t is float:
        if c != c or c in (math.inf, -math.inf):
            return _SLOW
        return int(c) if c.is_integer() and -(2**53) < c < 2**53 else repr(c).encode("ascii")
    if t is str:
        s = c.strip()
        if not s:
            return _EMPTY
        if len(s) < 40 and _JSON_NUMBER.fullmatch(s):
            return int(s) if _JSON_INT.fullmatch(s) else s.encode("ascii")
        return _SLOW
    if c is None:
        return _EMPTY
    if t is int:
        return c
    return _SLOW


def _fast_number_comma(c: Any) -> Any:
    if type(c) is str:
        return _EMPTY if not c.strip() else _SLOW
    return _fast_number_point(c)


def _fast_id(c: Any) -> Any:
    t = type(c)
    if t is str:
        s = c.strip()
        return s if s else _EMPTY
    if c is None:
        return _EMPTY
    if t is float and c.is_integer():
        return str(int(c))
    return _SLOW


def _always_slow(c: Any) -> Any:
    return _EMPTY if c is None or (type(c) is str and not c.strip()) else _SLOW


def _finite_decimal(f: Fraction) -> bool:
    d = f.denominator
    for p in (2, 5):
        while d % p == 0:
            d //= p
    return d == 1


def unit_name(text: str, dim: str) -> str | None:
    """A unit setting (``length = mm``) as a base unit of the format, or None when it is not one."""
    try:
        unit = parse_unit(text)
    except UnitError:
        return None
    base = unit.bases[DIMS.index(dim)]
    if base is None or unit.powers != tuple(1 if d == dim else 0 for d in DIMS) or BASE[base][1] != unit.scale:
        return None
    return base


def first_bracket_unit(tables: list[Table], dim: str) -> str | None:
    """The first base unit of dimension ``dim`` named in a header's brackets, in table and column order."""
    k = DIMS.index(dim)
    for table in tables:
        for col in sorted(table.units, key=lambda c: table.columns[c]):
            base = table.units[col].bases[k]
            if base is not None:
                return base
    return None


def used_dims(tables: list[Table]) -> set[str]:
    """The dimensions (L, F, T) the tables' number columns need."""
    out: set[str] = set()
    for table in tables:
        for col in table.columns:
            q = TABLES[table.name][col].quantity
            if q is not None:
                out.update(d for d, p in zip(DIMS, QUANTITIES[q][0], strict=True) if p)
    return out
