"""The tables of the contract (``TABLES.md``), their columns, and the trade's words for them.

Table names and header words compare case-insensitively, ignoring spaces, ``_``, ``-`` (and ``.`` in
headers).  A header may carry its unit in brackets, ``x [m]`` or ``N (kN)``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass


@dataclass(frozen=True)
class Column:
    """A column of the contract: its kind, the quantity of a number, whether a row needs it."""

    kind: str  #: "id", "number", "flag", "direction", "text"
    quantity: str | None = None  #: for numbers: a key of units.QUANTITIES, or None (a pure number)
    required: bool = False  #: a row with this cell empty is an error
    words: tuple[str, ...] = ()  #: other words of the trade for this column (normalised)


def _id(*words: str, required: bool = True) -> Column:
    return Column("id", required=required, words=words)


def _num(quantity: str | None, *words: str, required: bool = False) -> Column:
    return Column("number", quantity, required, words)


_CASE = _id("loadcase", "lc")
_NODE = _id("joint", "point")
_MEMBER = _id("element", "bar")

#: table -> column -> its specification, in the contract's order
TABLES: dict[str, dict[str, Column]] = {
    "about": {"key": Column("text", required=True), "value": Column("text")},
    "nodes": {
        "id": _id("node", "joint", "point"),
        "x": _num("length", required=True),
        "y": _num("length", required=True),
        "z": _num("length", required=True),
    },
    "materials": {
        "name": _id("material"),
        "E": _num("modulus", required=True),
        "alpha": _num("expansion", "α"),
        "unit_weight": _num("weight", "gamma", "γ"),
    },
    "sections": {"name": _id("section"), "A": _num("area", required=True)},
    "members": {
        "id": _id("member", "element", "bar"),
        "start": _id("i", "nodei", "from", "startnode"),
        "end": _id("j", "nodej", "to", "endnode"),
        "E": _num("modulus"),
        "A": _num("area"),
        "material": _id(required=False),
        "section": _id(required=False),
        "alpha": _num("expansion", "α"),
        "unit_weight": _num("weight", "gamma", "γ"),
        "behaviour": Column("text", words=("behavior",)),
    },
    "supports": {
        "node": _NODE,
        "x": Column("flag"),
        "y": Column("flag"),
        "z": Column("flag"),
        "kx": _num("stiffness"),
        "ky": _num("stiffness"),
        "kz": _num("stiffness"),
        "k": _num("stiffness"),
        "direction": Column("direction"),
    },
    "loads": {
        "case": _CASE,
        "node": _NODE,
        "fx": _num("force"),
        "fy": _num("force"),
        "fz": _num("force"),
    },
    "self_weight": {"case": _CASE, "factor": _num(None, required=True), "direction": Column("direction")},
    "temperatures": {"case": _CASE, "member": _MEMBER, "delta": _num("temperature", required=True)},
    "length_errors": {"case": _CASE, "member": _MEMBER, "value": _num("length", required=True)},
    "settlements": {
        "case": _CASE,
        "node": _NODE,
        "x": _num("length"),
        "y": _num("length"),
        "z": _num("length"),
        "direction": Column("direction"),
        "value": _num("length"),
    },
    "combinations": {"combination": _id("combo"), "case": _CASE, "factor": _num(None, required=True)},
    "displacements": {
        "case": _CASE,
        "node": _NODE,
        "ux": _num("length", "dx"),
        "uy": _num("length", "dy"),
        "uz": _num("length", "dz"),
    },
    "forces": {"case": _CASE, "member": _MEMBER, "N": _num("force", "axial", "axialforce", "force")},
    "reactions": {
        "case": _CASE,
        "node": _NODE,
        "rx": _num("force", "fx"),
        "ry": _num("force", "fy"),
        "rz": _num("force", "fz"),
    },
}

MODEL_TABLES: tuple[str, ...] = ("about", "nodes", "materials", "sections", "members", "supports", "loads")
MODEL_TABLES += ("self_weight", "temperatures", "length_errors", "settlements", "combinations")
RESULTS_TABLES = ("displacements", "forces", "reactions")

#: the keys of the about table (and of the mapping file's settings)
ABOUT_KEYS = ("title", "dimensions", "length", "force", "temperature", "source", "sign_convention", "case")


def table_key(name: str) -> str:
    """A table name compared: case-insensitive, spaces, ``-`` and ``_`` the same (and dropped)."""
    return re.sub(r"[\s_\-]+", "", name.strip().lower())


def header_key(text: str) -> str:
    """A header word compared: case-insensitive, ignoring spaces, ``_``, ``-`` and ``.``."""
    return re.sub(r"[\s_\-.]+", "", text.strip().lower())


_UNIT = re.compile(r"^(.*?)\s*(?:\[([^\]]*)\]|\(([^)]*)\))\s*$")


def split_header(text: str) -> tuple[str, str | None]:
    """A header's name and the unit in its brackets (None when it has none)."""
    m = _UNIT.match(text.strip())
    if not m or not m.group(1).strip():
        return text.strip(), None
    unit = m.group(2) if m.group(2) is not None else m.group(3)
    return m.group(1).strip(), unit.strip()


def canonical_table(name: str) -> str | None:
    """The contract's table of a file stem or sheet name, or None."""
    key = table_key(name)
    for table in TABLES:
        if table_key(table) == key:
            return table
    return None


def column_of(table: str, name: str) -> str | None:
    """The contract's column of a header name (without its unit) in ``table``, or None."""
    key = header_key(name)
    columns = TABLES[table]
    for col in columns:  # the contract's own names first
        if header_key(col) == key:
            return col
    for col, spec in columns.items():
        if key in spec.words:
            return col
    return None
