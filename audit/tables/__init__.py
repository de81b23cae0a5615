"""Tables in: a folder of CSV files or a workbook (``.xlsx``, ``.ods``) read per ``TABLES.md``.

The tables are turned into the same neutral tree the JSON reader makes of a model file (numbers as
their decimal text: CSV cells as written, workbook numbers at their stored value), with the table
place of every part recorded (:mod:`~audit.tables.places`).  The JSON format's own shape and meaning
stages then build the :class:`~audit.model.Model` (one validation, one model builder), and every
problem they find is reported at its table place: file (and sheet), row as a spreadsheet shows it,
and column header, all problems together.

Steps: :mod:`~audit.tables.grid` (CSV / workbook -> grids of cells), :mod:`~audit.tables.mapping`
(the TOML mapping file), :mod:`~audit.tables.recognise` (which table and column each is, units in
brackets), :mod:`~audit.tables.rows` and :mod:`~audit.tables.cells` (cells -> tree values, unit
conversion), :mod:`~audit.tables.model_tree` and :mod:`~audit.tables.results_tree` (the trees).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..errors import InputError
from ..exchange import _no_cycle_collection
from ..exchange.build import _build_model
from ..exchange.bulk import _Columns
from ..exchange.jsonread import _Json
from ..exchange.problems import _Problems
from ..exchange.reported import _frame_of, _results
from ..exchange.shape import _check_document
from ..exchange.version import FORMAT_VERSION, RESULTS_FORMAT
from ..model import Model
from ..sources import SourceKind, SourceNote, SourceRead
from .cells import is_empty, read_id
from .grid import Grid, read_folder, read_workbook
from .mapping import Mapping, read_mapping
from .model_tree import model_document
from .names import ABOUT_KEYS, MODEL_TABLES, RESULTS_TABLES
from .places import Place, TableProblems
from .recognise import Table, recognise
from .results_tree import results_document
from .rows import Reader, Units, first_bracket_unit, unit_name, used_dims

__all__ = ["read_table_documents", "read_table_results", "read_tables"]

_UNIT_SETTINGS = (("length", "L"), ("force", "F"), ("temperature", "T"))


def _grids(path: Path) -> tuple[list[Grid], SourceKind]:
    if path.is_dir():
        return read_folder(path), "tables"
    return read_workbook(path), "workbook"


def _settings(tables: dict[str, Table], mapping: Mapping, notes: list[SourceNote]) -> dict[str, tuple[str, Place]]:
    """The about table's settings, then the mapping file's over them: key -> (value, place)."""
    out: dict[str, tuple[str, Place]] = {}
    about = tables.get("about")
    if about is not None:
        grid = about.grid
        # the key and value columns by their headers; without that header row, the first two columns
        has_header = "key" in about.columns and "value" in about.columns
        ki, vi = (about.columns["key"], about.columns["value"]) if has_header else (0, 1)
        for k, row in enumerate(grid.rows):
            number = grid.first_row + k
            if len(row) <= ki or is_empty(row[ki]) or (has_header and number <= about.header_row):
                continue
            key = read_id(row[ki])
            value = read_id(row[vi]) if len(row) > vi and not is_empty(row[vi]) else ""
            if not value:
                continue  # a setting left empty
            place = Place(about.where, number, "value", (about.order, number, vi))
            if key.lower() in ABOUT_KEYS:
                out[key.lower()] = (value, place)
            else:
                notes.append(SourceNote("SR001", f"not read: {key!r} is not a setting of the about table", str(place)))
    for key, value in mapping.settings.items():
        out[key] = (value, Place(mapping.name, None, key, (-1, 0, 0)))
    return out


def _choose_units(
    r: Reader, settings: dict[str, tuple[str, Place]], tables: list[Table], needed: str, base: Units | None = None
) -> None:
    """The document's units: the settings', else the first unit in a header's brackets (else ``base``'s)."""
    chosen: list[str | None] = []
    defaults: list[str | None] = []
    used = used_dims(tables)
    for k, (key, dim) in enumerate(_UNIT_SETTINGS):
        declared = None
        if key in settings:
            text, place = settings[key]
            declared = unit_name(text, dim)
            if declared is None:
                r.probs.add(place, f"unknown {key} unit {text!r}", covers=[("units", key)])
        bracket = first_bracket_unit(tables, dim)
        fallback = base.chosen[k] if base is not None else None
        # results: their own units are the ones written in their columns; a model's are the declared ones
        unit = (bracket or declared or fallback) if base is not None else (declared or bracket)
        if unit is None and dim in needed and dim in used:
            r.probs.add(
                settings[key][1] if key in settings else Place(""),
                f"no {key} unit: give {key!r} in the about table (or [units] in the mapping file), "
                f"or a unit in a header, e.g. {'x [m]' if dim == 'L' else 'fx [kN]' if dim == 'F' else 'delta [degC]'}",
            )
        chosen.append(unit)
        defaults.append(declared or unit)
    r.units = Units((chosen[0], chosen[1], chosen[2]), (defaults[0], defaults[1], defaults[2]))


def _dimensions(r: Reader, tables: dict[str, Table], settings: dict[str, tuple[str, Place]]) -> int:
    nodes = tables.get("nodes")
    has_z = nodes is not None and "z" in nodes.columns
    if "dimensions" not in settings:
        return 3 if has_z else 2
    text, place = settings["dimensions"]
    if text.strip() not in ("2", "3"):
        r.probs.add(place, f"dimensions must be 2 or 3, got {text!r}")
        return 3 if has_z else 2
    dim = int(text)
    if dim == 2 and has_z and nodes is not None:
        r.probs.add(nodes.place(nodes.header_row, "z"), "a z column in a plane (2D) model: dimensions is 2")
    return dim


def _tree_text_check(doc: dict[str, Any], kind: str, probs: _Problems, cols: _Columns) -> None:
    _check_document(_Json(doc, [], 0), kind, probs, cols)


def _begin(path: Path, map_path: str | Path | None) -> tuple[Reader, dict[str, Table], dict[str, Any], SourceKind]:
    mapping = read_mapping(map_path)
    grids, kind = _grids(path)
    probs = TableProblems()
    notes: list[SourceNote] = []
    tables = recognise(grids, mapping, probs, notes)
    r = Reader(mapping.decimal_comma, probs, notes)
    settings = _settings(tables, mapping, notes)
    return r, tables, settings, kind


def _model_tree(path: Path, map_path: str | Path | None) -> tuple[Reader, dict[str, Any], SourceKind]:
    r, tables, settings, kind = _begin(path, map_path)
    for name in ("nodes", "members"):
        if name not in tables:
            what = "a file " + name + ".csv" if kind == "tables" else "a sheet " + repr(name)
            r.probs.add(Place("", order=(-1, 0, 0)), f"no {name!r} table ({what}); it is required", covers=[(name,)])
    dim = _dimensions(r, tables, settings)
    model_tables = [tables[n] for n in MODEL_TABLES if n in tables]
    _choose_units(r, settings, model_tables, "LF")
    doc = model_document(r, tables, dim, settings)
    for key, _dim in _UNIT_SETTINGS:
        if key in settings:
            r.at(("units", key), settings[key][1])
    results_tables = {n: tables[n] for n in RESULTS_TABLES if n in tables}
    if results_tables:
        model_units = r.units
        _choose_units(r, settings, list(results_tables.values()), "", model_units)
        doc["results"] = results_document(r, results_tables, settings, ("results",))
        r.units = model_units
    return r, doc, kind


def read_tables(path: str | Path, *, map_path: str | Path | None = None) -> SourceRead:
    """Read a model (and any results beside it) from a folder of CSV tables or a workbook.

    Raises
    ------
    InputError
        every problem found, each at its place (file or sheet, row, column).
    """
    with _no_cycle_collection():
        r, doc, kind = _model_tree(Path(path), map_path)
        model = _finish_model(r, doc, str(path))
    return SourceRead(model, model.results, tuple(r.notes), kind)


def _finish_model(r: Reader, doc: dict[str, Any], name: str) -> Model:
    probs = _Problems()
    cols = _Columns()
    _tree_text_check(doc, "model", probs, cols)
    model = None
    if not probs.blocking:
        model = _build_model(doc, probs, cols)
    if probs or r.probs:
        r.probs.add_tree_problems(probs.items, r.prov, Place(""))
        raise r.probs.error(name)
    assert model is not None
    return model


def read_table_results(path: str | Path, model: Model, *, map_path: str | Path | None = None) -> SourceRead:
    """Read reported results for ``model`` from results tables (a folder of CSV files or a workbook)."""
    with _no_cycle_collection():
        r, doc = _results_tree(Path(path), model, map_path)
        probs = _Problems()
        _tree_text_check(doc, "results", probs, _Columns())
        results = None
        if not probs.blocking:
            results = _results(doc, _frame_of(model), (), probs)
        if probs or r.probs:
            r.probs.add_tree_problems(probs.items, r.prov, Place(""))
            raise r.probs.error(str(path))
    assert results is not None
    return SourceRead(model, results, tuple(r.notes), "tables" if Path(path).is_dir() else "workbook")


def _results_tree(path: Path, model: Model, map_path: str | Path | None) -> tuple[Reader, dict[str, Any]]:
    r, tables, settings, _kind = _begin(path, map_path)
    results_tables = {n: tables[n] for n in RESULTS_TABLES if n in tables}
    for name in tables:
        if name not in RESULTS_TABLES and name != "about":
            r.notes.append(
                SourceNote("SR001", "not read: the model comes from the source given first", tables[name].where)
            )
    if not results_tables:
        raise InputError(
            [_no_results_problem()],
            str(path),
        )
    u = model.units
    _choose_units(
        r, settings, list(results_tables.values()), "", Units((u.length, u.force, u.temperature), (None,) * 3)
    )
    doc: dict[str, Any] = {"format": RESULTS_FORMAT, "version": FORMAT_VERSION}
    doc |= results_document(r, results_tables, settings, ())
    return r, doc


def _no_results_problem() -> Any:
    from ..errors import Problem

    return Problem("$", "no results tables: give a displacements, forces or reactions table (file or sheet)")


def read_table_documents(path: str | Path, *, map_path: str | Path | None = None) -> tuple[dict[str, Any], SourceRead]:
    """The model tree read from tables (results embedded), and the source read from it (checked whole)."""
    with _no_cycle_collection():
        r, doc, kind = _model_tree(Path(path), map_path)
        model = _finish_model(r, doc, str(path))
    return doc, SourceRead(model, model.results, tuple(r.notes), kind)
