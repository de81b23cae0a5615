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
from typing import Literal

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


__all__ = ["IFC_SUFFIXES", "WORKBOOK_SUFFIXES", "SourceKind", "SourceNote", "SourceRead", "source_kind"]
