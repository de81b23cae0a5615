"""The TOML mapping file (``TABLES.md``): what a source's table names and headers mean.

```toml
decimal = ","                 # optional: the decimal mark of text cells
[tables]                      # our table name = the source's file stem or sheet name
forces = "Element Results"
[columns.forces]              # our column = the source's header, exactly as written
N = "Axial Force"
[units]                       # like the about table
length = "mm"
[results]
sign_convention = "compression_positive"
```

Every key must name a table, column or setting of the contract, so that a misspelt mapping is never
silently ignored; every problem names its place in the file (``map.toml: [columns.forces] Nx``).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError, Problem
from .names import ABOUT_KEYS, TABLES

_SECTIONS = ("tables", "columns", "units", "results")
_TOP = ("decimal", "title", "dimensions")
_UNIT_KEYS = ("length", "force", "temperature")
_RESULT_KEYS = ("sign_convention", "source", "case")


@dataclass(frozen=True)
class Mapping:
    """A mapping file, checked: every key names a table, column or setting of the contract."""

    name: str = ""  #: the file name, for messages
    tables: dict[str, str] = field(default_factory=dict)  #: our table -> the source's name
    columns: dict[str, dict[str, str]] = field(default_factory=dict)  #: our table -> our column -> header
    settings: dict[str, str] = field(default_factory=dict)  #: about keys (units, results, title...)
    decimal_comma: bool = False


def _text(value: object) -> str | None:
    if isinstance(value, str):
        return value
    if isinstance(value, int) and not isinstance(value, bool):
        return str(value)
    return None


def read_mapping(path: str | Path | None) -> Mapping:
    """Read and check a mapping file (an empty mapping when ``path`` is None)."""
    if path is None:
        return Mapping()
    p = Path(path)
    name = p.name
    try:
        doc = tomllib.loads(p.read_bytes().decode("utf-8-sig"))
    except UnicodeDecodeError:
        raise InputError((Problem(name, "the mapping file is not UTF-8 text"),), str(p)) from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError((Problem(name, f"the mapping file is not valid TOML: {exc}"),), str(p)) from None
    problems: list[Problem] = []

    def bad(where: str, message: str) -> None:
        problems.append(Problem(f"{name}: {where}", message))

    tables: dict[str, str] = {}
    columns: dict[str, dict[str, str]] = {}
    settings: dict[str, str] = {}
    decimal_comma = False
    for key, value in doc.items():
        if key in _SECTIONS and not isinstance(value, dict):
            bad(key, f"'{key}' must be a table ([{key}])")
            continue
        if key == "tables":
            for ours, theirs in value.items():
                if ours not in TABLES:
                    bad(f"[tables] {ours}", f"{ours!r} is not a table of the contract: use one of {', '.join(TABLES)}")
                elif _text(theirs) is None:
                    bad(f"[tables] {ours}", "give the source's file stem or sheet name as a string")
                else:
                    tables[ours] = str(_text(theirs))
        elif key == "columns":
            for table, cols in value.items():
                if table not in TABLES:
                    bad(f"[columns.{table}]", f"{table!r} is not a table of the contract")
                    continue
                if not isinstance(cols, dict):
                    bad(f"[columns.{table}]", "must be a table of our column = the source's header")
                    continue
                for ours, theirs in cols.items():
                    if ours not in TABLES[table]:
                        known = ", ".join(TABLES[table])
                        bad(f"[columns.{table}] {ours}", f"{ours!r} is not a column of {table}: use one of {known}")
                    elif _text(theirs) is None:
                        bad(f"[columns.{table}] {ours}", "give the source's header as a string")
                    else:
                        columns.setdefault(table, {})[ours] = str(_text(theirs))
        elif key in ("units", "results"):
            allowed = _UNIT_KEYS if key == "units" else _RESULT_KEYS
            for k, v in value.items():
                if k not in allowed:
                    bad(f"[{key}] {k}", f"{k!r} is not a setting of [{key}]: use one of {', '.join(allowed)}")
                elif _text(v) is None:
                    bad(f"[{key}] {k}", "must be a string")
                else:
                    settings[k] = str(_text(v))
        elif key == "decimal":
            if value not in (".", ","):
                bad("decimal", 'must be "." or ","')
            decimal_comma = value == ","
        elif key in _TOP:
            if _text(value) is None:
                bad(key, "must be a string or an integer")
            else:
                settings[key] = str(_text(value))
        else:
            bad(key, f"{key!r} is not a key of a mapping file: use {', '.join((*_TOP, *_SECTIONS))}")
    assert set(settings) <= set(ABOUT_KEYS)
    if problems:
        raise InputError(problems, str(p))
    return Mapping(name, tables, columns, settings, decimal_comma)
