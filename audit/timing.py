"""Wall-clock stage times of one run, recorded by the core and printed by whoever asked for them.

A :class:`Timings` is passed into the engine (``audit_with_context(...,
timings=t)``) and filled stage by stage; it never goes into a report (reports
are deterministic, times are not).  The CLI prints it to stderr under
``--timings``.  Stages, in the order a ``check`` runs them:

* ``read``: file -> model (and results), schema and meaning checks included;
* ``build``: assembly of K and the restrained system;
* ``factorise``: the one float64 factorisation of K_r and its condition estimate;
* ``stability``: determinacy, rank and mechanism analysis;
* ``recompute``: the float64 solve of every case (forces, reactions);
* ``refine``: the high-precision refinement and bounds (certificate excluded);
* ``certificate``: the certified lower bound of the smallest eigenvalue;
* ``checks``: every check family except the diagnosis;
* ``diagnosis``: the diagnosis family;
* ``report``: rendering and writing the reports.

A stage recorded twice adds up.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager


class Timings:
    """Seconds per named stage, in the order the stages were first recorded."""

    def __init__(self, clock: Callable[[], float] = time.perf_counter) -> None:
        self.clock = clock
        self.stages: dict[str, float] = {}
        self._start = clock()

    def add(self, name: str, seconds: float) -> None:
        self.stages[name] = self.stages.get(name, 0.0) + max(0.0, float(seconds))

    @contextmanager
    def stage(self, name: str) -> Iterator[None]:
        """Time the body of a ``with`` block as stage ``name`` (also when it raises)."""
        t0 = self.clock()
        try:
            yield
        finally:
            self.add(name, self.clock() - t0)

    def total(self) -> float:
        """Seconds since this recorder was made."""
        return self.clock() - self._start

    def render(self) -> str:
        """One line per stage and the total, e.g. ``  factorise      1.234 s  (12.3 %)``."""
        total = self.total()
        width = max([len(n) for n in self.stages] + [len("other")])
        lines = ["stage times (wall clock):"]
        for name, seconds in self.stages.items():
            share = 100.0 * seconds / total if total > 0 else 0.0
            lines.append(f"  {name:<{width}} {seconds:9.3f} s  ({share:5.1f} %)")
        other = total - sum(self.stages.values())
        lines.append(f"  {'other':<{width}} {max(0.0, other):9.3f} s")
        lines.append(f"  {'total':<{width}} {total:9.3f} s")
        return "\n".join(lines) + "\n"


@contextmanager
def stage(timings: Timings | None, name: str) -> Iterator[None]:
    """``timings.stage(name)`` when a recorder is given, else nothing."""
    if timings is None:
        yield
    else:
        with timings.stage(name):
            yield


__all__ = ["Timings", "stage"]
