"""Wall time and peak resident memory of a stretch of code, for the benchmarks (Linux only).

Peak memory is the process's high-water mark ``VmHWM`` from ``/proc/self/status``,
reset at the start of each stretch by writing ``5`` to ``/proc/self/clear_refs``
(Linux ≥ 4.0, ``Documentation/filesystems/proc.rst``).  It counts every
allocation, including those of MKL and SuperLU that Python's tracemalloc does
not see.  A stretch reports its peak *above* the resident size at its start.
"""

from __future__ import annotations

import time
from dataclasses import dataclass


def _status_kib(key: str) -> int:
    with open("/proc/self/status", encoding="ascii") as fh:
        for line in fh:
            if line.startswith(key):
                return int(line.split()[1])
    raise RuntimeError(f"{key} not in /proc/self/status")


def rss_kib() -> int:
    return _status_kib("VmRSS:")


def reset_peak() -> None:
    """Set the high-water mark to the current resident size."""
    with open("/proc/self/clear_refs", "w", encoding="ascii") as fh:
        fh.write("5")


def peak_kib() -> int:
    return _status_kib("VmHWM:")


@dataclass
class Span:
    """One measured stretch: seconds and peak memory above its starting resident size (MiB)."""

    name: str
    seconds: float = 0.0
    peak_mib: float = 0.0


class Meter:
    """Measure consecutive named stages and the whole run.

    ``mark(name)`` closes the stage running so far and opens ``name``;
    ``stop()`` closes the last one.  The whole run's peak is taken over all
    stages, relative to the resident size when the meter started.
    """

    def __init__(self) -> None:
        self.spans: list[Span] = []
        self._name: str | None = None
        self._t = 0.0
        self._rss0 = 0
        self._start_rss = 0
        self._start_t = 0.0
        self._whole_peak = 0

    def start(self, name: str) -> None:
        reset_peak()
        self._start_rss = rss_kib()
        self._start_t = time.perf_counter()
        self._whole_peak = self._start_rss
        self._open(name)

    def _open(self, name: str) -> None:
        reset_peak()
        self._name = name
        self._rss0 = rss_kib()
        self._t = time.perf_counter()

    def _close(self) -> None:
        if self._name is None:
            return
        seconds = time.perf_counter() - self._t
        peak = peak_kib()
        self._whole_peak = max(self._whole_peak, peak)
        self.spans.append(Span(self._name, seconds, max(0, peak - self._rss0) / 1024))
        self._name = None

    def mark(self, name: str) -> None:
        self._close()
        self._open(name)

    def stop(self) -> Span:
        """Close the last stage; returns the whole run."""
        self._close()
        return Span("total", time.perf_counter() - self._start_t, (self._whole_peak - self._start_rss) / 1024)
