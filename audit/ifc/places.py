"""Places in an IFC file, for messages: ``#1234 IfcStructuralCurveMember 'D3'``, and the problems and notes found.

The reader builds the neutral JSON tree and runs it through the format's meaning stage
(:mod:`audit.exchange`); :class:`Places` maps each JSON path back to the IFC entity it came from, so
that a problem found there names the entity too, never a JSON path the user never wrote.
"""

from __future__ import annotations

from typing import Any

from ..errors import InputError, Problem


def label(entity: Any) -> str:
    """``#1234 IfcStructuralCurveMember 'D3'`` (the Name left out when there is none)."""
    if entity is None:
        return "(none)"
    name = getattr(entity, "Name", None) or getattr(entity, "ProfileName", None)
    base = f"#{entity.id()} {entity.is_a()}"
    return f"{base} {name!r}" if isinstance(name, str) and name else base


class Issues:
    """Problems (each naming an entity) and notes found while reading one file."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.problems: list[Problem] = []
        self.notes: list[tuple[str, str, str]] = []  #: (code, message, place)

    def problem(self, entity: Any, message: str) -> None:
        self.problems.append(Problem(label(entity) if not isinstance(entity, str) else entity, message))

    def note(self, code: str, message: str, place: Any = "") -> None:
        self.notes.append((code, message, place if isinstance(place, str) else label(place)))

    def raise_if_any(self) -> None:
        if self.problems:
            raise InputError(list(dict.fromkeys(self.problems)), self.file)


class Places:
    """JSON path prefix -> the IFC entity it was read from."""

    def __init__(self, whole: Any) -> None:
        self.whole = whole
        self.map: dict[tuple[str | int, ...], Any] = {}

    def add(self, path: tuple[str | int, ...], entity: Any) -> None:
        self.map[path] = entity

    def entity(self, path: tuple[str | int, ...]) -> Any:
        for k in range(len(path), 0, -1):
            hit = self.map.get(path[:k])
            if hit is not None:
                return hit
        return self.whole
