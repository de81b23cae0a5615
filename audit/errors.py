"""Errors that carry structured data as well as text.

:class:`InputError` is raised for anything wrong with an input file: it holds
every problem found (not only the first), each with a JSON path, so that a
user can fix a file in one pass.  :class:`UnsolvableError` is raised when a
well-formed model cannot be solved (a mechanism, a singular system).
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input file.

    ``path`` is a JSON path such as ``members[3].end``, ``$`` for the whole
    document, or ``line 4, column 7`` for a JSON syntax error.  ``item`` names
    the item a positional path points at by its id (``member '9'``), when it
    has one, so that ``members[3] (member '9'): zero length ...`` can be found
    in the file without counting.
    """

    path: str
    message: str
    item: str = ""

    @property
    def place(self) -> str:
        """The path, followed by the item's name in brackets when there is one."""
        return f"{self.path} ({self.item})" if self.item else self.path

    def __str__(self) -> str:
        return f"{self.place}: {self.message}"


class InputError(Exception):
    """An input file that cannot be used; ``problems`` lists everything wrong with it."""

    def __init__(self, problems: tuple[Problem, ...] | list[Problem], file: str) -> None:
        self.problems: tuple[Problem, ...] = tuple(problems)
        self.file = file
        super().__init__(self.problems, file)

    def __str__(self) -> str:
        if not self.problems:
            return f"{self.file}: $: invalid input"
        return "\n".join(f"{self.file}: {p}" for p in self.problems)

    def __reduce__(self) -> tuple[type[InputError], tuple[tuple[Problem, ...], str]]:
        return (InputError, (self.problems, self.file))


class UnsolvableError(Exception):
    """The model is well formed but cannot be solved (mechanism, singular stiffness)."""

    def __init__(self, message: str, details: tuple[str, ...] | list[str] = ()) -> None:
        self.message = message
        self.details: tuple[str, ...] = tuple(details)
        super().__init__(message, self.details)

    def __str__(self) -> str:
        return "\n".join((self.message, *(f"  {d}" for d in self.details)))

    def __reduce__(self) -> tuple[type[UnsolvableError], tuple[str, tuple[str, ...]]]:
        return (UnsolvableError, (self.message, self.details))
