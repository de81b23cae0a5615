"""A one-line progress display on stderr for long steps: shown only on a terminal, never under quiet.

The engine takes a callback ``progress(label)``; a :class:`Progress` is one
(``__call__`` is :meth:`Progress.step`).  On a terminal each step rewrites one
line, ``[2 | 1.3 s] factorising the restrained stiffness``, with ``i/n``
added by :meth:`Progress.advance`; :meth:`Progress.close` clears the line.
Anywhere else (a pipe, a file, CI logs) and under ``quiet`` it writes nothing.
"""

from __future__ import annotations

import sys
import time
from collections.abc import Callable
from typing import TextIO


class Progress:
    """Progress of the current step on one rewritten line of ``stream``.

    Parameters
    ----------
    stream
        Where to write (default ``sys.stderr``).
    quiet
        Write nothing at all.
    enabled
        False: write nothing (the CLI passes ``not quiet``).  True (default): write when ``stream`` is a
        terminal.
    force
        Write even when ``stream`` is not a terminal (tests); ``quiet`` and ``enabled=False`` still win.
    clock
        Seconds, monotonic (tests pass a fake one).
    min_interval
        :meth:`advance` redraws at most this often (seconds), and always at i == n.
    """

    def __init__(
        self,
        stream: TextIO | None = None,
        *,
        quiet: bool = False,
        enabled: bool = True,
        force: bool = False,
        clock: Callable[[], float] = time.monotonic,
        min_interval: float = 0.1,
        width: int = 100,
    ) -> None:
        self.stream = stream if stream is not None else sys.stderr
        isatty = getattr(self.stream, "isatty", None)
        terminal = bool(isatty and isatty())
        self.enabled = not quiet and enabled and (terminal or force)
        self.clock = clock
        self.min_interval = min_interval
        self.width = width
        self.start = clock()
        self.steps = 0
        self.label = ""
        self._last_draw = -float("inf")
        self._shown = 0  #: characters on the line now

    def _draw(self, text: str) -> None:
        text = text[: self.width - 1]
        pad = " " * max(self._shown - len(text), 0)
        self.stream.write("\r" + text + pad)
        self.stream.flush()
        self._shown = len(text)

    def _prefix(self) -> str:
        return f"[{self.steps} | {self.clock() - self.start:.1f} s] "

    def step(self, label: str) -> None:
        """Start a new step called ``label``."""
        self.steps += 1
        self.label = label
        if self.enabled:
            self._draw(self._prefix() + label)
            self._last_draw = self.clock()

    __call__ = step

    def advance(self, i: int, n: int) -> None:
        """``i`` of ``n`` parts of the current step done (redrawn at most every ``min_interval`` s)."""
        if not self.enabled:
            return
        now = self.clock()
        if i < n and now - self._last_draw < self.min_interval:
            return
        pct = f" ({100.0 * i / n:.0f} %)" if n > 0 else ""
        self._draw(f"{self._prefix()}{self.label} {i}/{n}{pct}")
        self._last_draw = now

    def close(self) -> None:
        """Clear the line (nothing was written when disabled)."""
        if self.enabled and self._shown:
            self.stream.write("\r" + " " * self._shown + "\r")
            self.stream.flush()
            self._shown = 0

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


__all__ = ["Progress"]
