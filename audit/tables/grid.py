"""Raw tables: a folder of CSV files or a workbook (``.xlsx``, ``.ods``) -> named grids of cells.

CSV (the standard ``csv`` module): UTF-8, a byte-order mark accepted; the delimiter is ``,``, ``;``
or a tab, whichever the first line holds most of; cells may be quoted.  Cells stay text, exactly as
written.  Workbooks (python-calamine, a compiled reader of both formats): every sheet, cells as
stored (numbers as floats, text as text, booleans), with their rows counted as the spreadsheet
counts them (leading empty rows included).  A row's number is what a spreadsheet shows: the
header is row 1 in a CSV file.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .. import exchange as _limits  # MAX_BYTES, read at call time
from ..errors import InputError, Problem

CSV_SUFFIXES = (".csv",)


@dataclass(frozen=True)
class Grid:
    """One table of the source: its name, how places in it are written, and its rows of cells."""

    name: str  #: the file stem or sheet name, as written
    where: str  #: ``members.csv`` or ``sheet "members"``
    rows: tuple[tuple[Any, ...], ...]  #: the cells of every row, from the first row of the sheet
    first_row: int  #: the spreadsheet number of rows[0]
    text_cells: bool  #: True for CSV (every cell is text)


def _decode(raw: bytes, name: str) -> str:
    if raw.startswith(b"\xef\xbb\xbf"):
        raw = raw[3:]
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        raise InputError((Problem(f"{name}: line {line}", "the file is not UTF-8 text"),), name) from None


def _delimiter(text: str) -> str:
    first = text.split("\n", 1)[0]
    counts = {d: first.count(d) for d in ("\t", ";", ",")}
    best = max(counts, key=lambda d: counts[d])  # ties: tab, then ';', then ','
    return best if counts[best] else ","


def read_csv(path: Path) -> Grid:
    """One CSV file as a grid of text cells."""
    size = path.stat().st_size
    if size > _limits.MAX_BYTES:
        raise InputError((Problem(path.name, f"the file is too large: {size} bytes"),), str(path))
    text = _decode(path.read_bytes(), path.name)
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=_delimiter(text), quotechar='"', strict=True)
    try:
        rows = tuple(tuple(r) for r in reader)
    except csv.Error as exc:
        raise InputError(
            (Problem(f"{path.name}: row {reader.line_num}", f"the CSV cannot be read: {exc}"),), str(path)
        ) from None
    return Grid(path.stem, path.name, rows, 1, True)


def read_folder(path: Path) -> list[Grid]:
    """Every CSV file of a folder (in name order)."""
    files = sorted(p for p in path.iterdir() if p.is_file() and p.suffix.lower() in CSV_SUFFIXES)
    return [read_csv(p) for p in files]


def read_workbook(path: Path) -> list[Grid]:
    """Every sheet of a ``.xlsx`` or ``.ods`` workbook."""
    import python_calamine

    size = path.stat().st_size
    if size > _limits.MAX_BYTES:
        raise InputError((Problem("$", f"the file is too large: {size} bytes"),), str(path))
    try:
        book = python_calamine.CalamineWorkbook.from_path(str(path))
    except Exception as exc:  # calamine raises its own error types for damaged or foreign files
        raise InputError((Problem("$", f"the workbook cannot be read: {exc}"),), str(path)) from None
    grids = []
    try:
        for name in book.sheet_names:
            try:
                sheet = book.get_sheet_by_name(name)
                rows = sheet.to_python(skip_empty_area=False)
            except Exception as exc:
                raise InputError((Problem(f'sheet "{name}"', f"the sheet cannot be read: {exc}"),), str(path)) from None
            grids.append(Grid(name, f'sheet "{name}"', tuple(map(tuple, rows)), 1, False))
    finally:
        book.close()
    return grids
