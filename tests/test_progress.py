"""The progress display: only on a terminal, never under quiet, one rewritten line."""

from __future__ import annotations

import io

from audit.progress import Progress


class _Tty(io.StringIO):
    def isatty(self) -> bool:
        return True


class _Clock:
    def __init__(self) -> None:
        self.t = 0.0

    def __call__(self) -> float:
        return self.t


def test_silent_when_not_a_terminal() -> None:
    s = io.StringIO()
    p = Progress(s)
    p.step("assembling")
    p.advance(1, 2)
    p.close()
    assert s.getvalue() == ""


def test_silent_under_quiet_even_on_a_terminal() -> None:
    s = _Tty()
    p = Progress(s, quiet=True)
    p("assembling")
    p.close()
    assert s.getvalue() == ""


def test_silent_when_disabled_even_on_a_terminal() -> None:
    s = _Tty()
    p = Progress(s, enabled=False)
    p("assembling")
    assert s.getvalue() == ""


def test_steps_rewrite_one_line_and_close_clears_it() -> None:
    s, clock = _Tty(), _Clock()
    p = Progress(s, clock=clock)
    p.step("assembling the stiffness matrix")
    clock.t = 1.25
    p.step("solving")
    out = s.getvalue()
    assert "\n" not in out
    assert out.startswith("\r[1 | 0.0 s] assembling the stiffness matrix")
    assert "\r[2 | 1.2 s] solving" in out
    tail = len(out)
    p.close()
    cleared = s.getvalue()[tail:]
    assert cleared.startswith("\r")
    assert cleared.endswith("\r")
    assert cleared.strip() == ""


def test_advance_is_throttled_but_shows_the_end() -> None:
    s, clock = _Tty(), _Clock()
    p = Progress(s, clock=clock, min_interval=0.5)
    p.step("cases")
    for i in range(1, 10):
        clock.t = i * 0.1
        p.advance(i, 10)
    p.advance(10, 10)
    out = s.getvalue()
    assert out.count("cases ") == 2  # one redraw after 0.5 s, and the final one
    assert "cases 10/10 (100 %)" in out


def test_callable_as_the_engine_callback() -> None:
    s = io.StringIO()
    p = Progress(s, force=True)
    callback = p
    callback("factorising")
    assert "factorising" in s.getvalue()


def test_context_manager_closes() -> None:
    s = _Tty()
    with Progress(s) as p:
        p.step("x")
    assert s.getvalue().endswith("\r")
