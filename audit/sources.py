"""What an analysis source hands over, read into the neutral model: one entry point for every form.

A *source* is a neutral-format JSON model file, a workbook (``.xlsx``, ``.ods``), a folder of CSV
tables (one holding ``nodes`` and ``members`` tables) or an IFC file (``.ifc``).  Every reader returns
a :class:`SourceRead`: the model, the reported results it carried (if any) and the reader's notes
(what it did not read, how it interpreted the file), which the audit reports as findings so that
nothing is ignored silently.

The readers themselves live in their own packages (``audit.exchange`` for JSON, ``audit.tables``
for tables, ``audit.ifc`` for IFC); this module only decides which one reads a path.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

from audit.errors import InputError, Problem
from audit.model import Model, Results

#: the forms a source can take
SourceKind = Literal["json", "tables", "workbook", "ifc"]

WORKBOOK_SUFFIXES = (".xlsx", ".ods")
IFC_SUFFIXES = (".ifc",)


@dataclass(frozen=True)
class SourceNote:
    """One remark of a reader about the source, reported with the audit.

    code: a registered finding code (family ``SR``); message: plain words;
    place: where in the source (``"members.csv: column 'utilisation'"``,
    ``"#123 IfcStructuralCurveMember 'D3'"``), or ``""`` for the whole source.
    """

    code: str
    message: str
    place: str = ""


@dataclass(frozen=True)
class SourceRead:
    """A source read into the neutral model: the model, its reported results (or None) and the notes."""

    model: Model
    results: Results | None
    notes: tuple[SourceNote, ...] = ()
    kind: SourceKind = "json"


def _is_table_folder(path: Path) -> bool:
    """A folder is a table source when it holds ``nodes`` and ``members`` tables (TABLES.md names)."""
    stems = {_table_key(p.stem) for p in path.iterdir() if p.is_file() and p.suffix.lower() == ".csv"}
    return {"nodes", "members"} <= stems


def _table_key(name: str) -> str:
    """Table names compare case-insensitively, with spaces, ``-`` and ``_`` the same (TABLES.md)."""
    return name.strip().lower().replace(" ", "").replace("-", "").replace("_", "")


def source_kind(path: str | Path) -> SourceKind | None:
    """The form of the source at ``path``, or None for a folder that is not a table source (a batch)."""
    p = Path(path)
    if p.is_dir():
        return "tables" if _is_table_folder(p) else None
    suffix = p.suffix.lower()
    if suffix in WORKBOOK_SUFFIXES:
        return "workbook"
    if suffix in IFC_SUFFIXES:
        return "ifc"
    return "json"


_RESULTS_TABLES = ("displacements", "forces", "reactions")


def _table_names(path: Path) -> set[str]:
    """The table keys a folder (its CSV files) or a workbook (its sheets) holds; empty if unreadable."""
    if path.is_dir():
        return {_table_key(p.stem) for p in path.iterdir() if p.is_file() and p.suffix.lower() == ".csv"}
    if path.suffix.lower() in WORKBOOK_SUFFIXES and path.is_file():
        try:
            import python_calamine

            book = python_calamine.CalamineWorkbook.from_path(str(path))
            try:
                return {_table_key(n) for n in book.sheet_names}
            finally:
                book.close()
        except Exception:  # the reader reports a damaged workbook properly
            return set()
    return set()


def holds_only_results(path: str | Path) -> bool:
    """Whether a folder or workbook holds results tables and no model (no nodes and members tables)."""
    names = _table_names(Path(path))
    return bool(names & set(_RESULTS_TABLES)) and not {"nodes", "members"} <= names


def _refuse(path: str | Path, message: str) -> InputError:
    return InputError((Problem("$", message),), str(path))


def load_source(path: str | Path, *, map_path: str | Path | None = None, ifc_model: str | None = None) -> SourceRead:
    """Read the model source at ``path`` with the reader its form calls for.

    ``map_path`` is a TOML mapping file (``TABLES.md``), for tables only; ``ifc_model`` names the
    ``IfcStructuralAnalysisModel`` to read when an IFC file holds several.

    Raises
    ------
    InputError
        every problem found, each with its place (JSON path, table place or IFC entity).
    """
    kind = source_kind(path)
    if kind is None and (map_path is not None or any(Path(path).glob("*.csv"))):
        kind = "tables"  # tables named by the mapping file, or some missing: the reader says which
    if kind is None:
        raise _refuse(path, "this folder holds no 'nodes' and 'members' tables, so it is not a table source")
    if map_path is not None and kind not in ("tables", "workbook"):
        raise _refuse(path, "a mapping file (--map) applies only to tables: a workbook or a folder of CSV files")
    if ifc_model is not None and kind != "ifc":
        raise _refuse(path, "a model name (--ifc-model) applies only to an IFC file")
    if kind == "json":
        from audit import exchange

        model = exchange.load_model(path)
        return SourceRead(model, model.results, (), "json")
    if kind == "ifc":
        from audit.ifc import read_ifc  # the IFC reader (ifcopenshell) is imported only when needed

        read: SourceRead = read_ifc(path, model_name=ifc_model)
        return read
    from audit import tables

    return tables.read_tables(path, map_path=map_path)


def load_source_results(path: str | Path, model: Model, *, map_path: str | Path | None = None) -> SourceRead:
    """Read reported results for ``model`` from a results JSON, a workbook or a folder of results tables.

    The answer is a :class:`SourceRead` whose ``results`` is set (and whose notes say what was not read).
    """
    p = Path(path)
    if p.is_dir() or p.suffix.lower() in WORKBOOK_SUFFIXES:
        from audit import tables

        return tables.read_table_results(p, model, map_path=map_path)
    if p.suffix.lower() in IFC_SUFFIXES:
        raise _refuse(path, "results in an IFC file are read with its model: give the IFC file as the source")
    if map_path is not None:
        raise _refuse(path, "a mapping file (--map) applies only to tables: a workbook or a folder of CSV files")
    from audit import exchange

    return SourceRead(model, exchange.load_results(path, model), (), "json")


def neutral_documents(
    path: str | Path,
    *,
    map_path: str | Path | None = None,
    ifc_model: str | None = None,
    separate_results: bool = False,
) -> tuple[str, str | None, SourceRead]:
    """The source at ``path`` written in the neutral format: (model JSON, results JSON or None, the read).

    With ``separate_results`` the source's results go into their own document, else into the model's.
    Tables are written from the tree they were read into (every decimal text as read), so that the
    written model reads back to the same model; other sources from the model read.
    """
    from audit.exchange.numtext import _Raw
    from audit.exchange.version import FORMAT_VERSION, RESULTS_FORMAT
    from audit.exchange.write import _dump_embedded_results, _to_text, dump_model

    kind = source_kind(path)
    if kind in ("tables", "workbook") or (kind is None and map_path is not None):
        from audit import tables

        tree, read = tables.read_table_documents(path, map_path=map_path)
        doc: dict[str, Any] = _raw_numbers(tree, _Raw)  # type: ignore[assignment]
        embedded = doc.pop("results", None)
        results_text = None
        if embedded is not None:
            if separate_results:
                results_text = _to_text({"format": RESULTS_FORMAT, "version": FORMAT_VERSION, **embedded})
            else:
                doc["results"] = embedded
        return _to_text(doc), results_text, read
    read = load_source(path, map_path=map_path, ifc_model=ifc_model)
    from dataclasses import replace

    model = replace(read.model, results=None if separate_results else read.results)
    results_text = None
    if separate_results and read.results is not None:
        body = _dump_embedded_results(read.model, read.results)
        results_text = _to_text({"format": RESULTS_FORMAT, "version": FORMAT_VERSION, **body})
    return dump_model(model), results_text, read


def _raw_numbers(v: object, raw: type) -> object:
    """The tree with every number's decimal text (bytes) as a raw JSON number text."""
    if type(v) is bytes:
        return raw(v.decode("ascii"))
    if isinstance(v, dict):
        return {k: _raw_numbers(x, raw) for k, x in v.items()}
    if isinstance(v, list):
        return [_raw_numbers(x, raw) for x in v]
    return v


__all__ = [
    "IFC_SUFFIXES",
    "WORKBOOK_SUFFIXES",
    "SourceKind",
    "SourceNote",
    "SourceRead",
    "holds_only_results",
    "load_source",
    "load_source_results",
    "neutral_documents",
    "source_kind",
]
