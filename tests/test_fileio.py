"""File input and output: atomic writes, clear read errors, no output over an input.

Sources: POSIX ``rename()`` (IEEE Std 1003.1) replaces the target atomically, which
``os.replace`` relies on (Python docs, ``os.replace``); the remaining checks are
common practice for command-line tools.
"""

from __future__ import annotations

import os
import stat
import sys
from pathlib import Path

import pytest

from audit import fileio
from audit.errors import InputError, Problem


def test_atomic_write_text_creates_file(tmp_path: Path) -> None:
    target = tmp_path / "out.json"
    fileio.atomic_write_text(target, "héllo\n")
    assert target.read_bytes() == "héllo\n".encode()


def test_atomic_write_replaces_whole_content(tmp_path: Path) -> None:
    target = tmp_path / "out.txt"
    target.write_text("old content that is longer than the new one")
    fileio.atomic_write_bytes(target, b"new")
    assert target.read_bytes() == b"new"


def test_atomic_write_leaves_no_temporary_file(tmp_path: Path) -> None:
    fileio.atomic_write_bytes(tmp_path / "a.bin", b"x" * 1000)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.bin"]


def test_atomic_write_failure_keeps_old_content_and_cleans_up(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # common practice: a failed write must not leave a half file nor a stray temporary
    target = tmp_path / "keep.txt"
    target.write_text("original")

    def broken_replace(src: str, dst: str) -> None:
        raise OSError("disk full")

    monkeypatch.setattr(fileio.os, "replace", broken_replace)
    with pytest.raises(OSError, match="disk full"):
        fileio.atomic_write_text(target, "replacement")
    assert target.read_text() == "original"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.txt"]


def test_atomic_write_into_missing_folder_raises(tmp_path: Path) -> None:
    with pytest.raises(FileNotFoundError):
        fileio.atomic_write_text(tmp_path / "no" / "such" / "file.txt", "x")


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX permission bits")
def test_atomic_write_keeps_existing_mode(tmp_path: Path) -> None:
    target = tmp_path / "mode.txt"
    target.write_text("x")
    os.chmod(target, 0o640)
    fileio.atomic_write_text(target, "y")
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o640


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX permission bits")
def test_atomic_write_new_file_follows_umask(tmp_path: Path) -> None:
    # POSIX open(2): a new file gets 0666 & ~umask
    old = os.umask(0o027)
    try:
        fileio.atomic_write_text(tmp_path / "new.txt", "x")
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(tmp_path / "new.txt").st_mode) == 0o640


def test_read_input_bytes_reads_whole_file(tmp_path: Path) -> None:
    p = tmp_path / "in.json"
    p.write_bytes(b"{}" * 10)
    assert fileio.read_input_bytes(p, 100) == b"{}" * 10


def _only_problem(exc: pytest.ExceptionInfo[InputError]) -> Problem:
    assert len(exc.value.problems) == 1
    return exc.value.problems[0]


def test_read_missing_file(tmp_path: Path) -> None:
    with pytest.raises(InputError) as exc:
        fileio.read_input_bytes(tmp_path / "absent.json", 100)
    assert "not found" in _only_problem(exc).message
    assert exc.value.file.endswith("absent.json")


def test_read_folder(tmp_path: Path) -> None:
    with pytest.raises(InputError) as exc:
        fileio.read_input_bytes(tmp_path, 100)
    assert "folder" in _only_problem(exc).message


def test_read_too_large(tmp_path: Path) -> None:
    p = tmp_path / "big.json"
    p.write_bytes(b" " * 101)
    with pytest.raises(InputError) as exc:
        fileio.read_input_bytes(p, 100)
    assert "too large" in _only_problem(exc).message


def test_read_exactly_at_limit(tmp_path: Path) -> None:
    p = tmp_path / "edge.json"
    p.write_bytes(b" " * 100)
    assert len(fileio.read_input_bytes(p, 100)) == 100


@pytest.mark.skipif(sys.platform == "win32" or os.geteuid() == 0, reason="root reads any file")
def test_read_unreadable(tmp_path: Path) -> None:
    p = tmp_path / "secret.json"
    p.write_text("{}")
    os.chmod(p, 0)
    with pytest.raises(InputError) as exc:
        fileio.read_input_bytes(p, 100)
    assert "cannot read" in _only_problem(exc).message


def test_input_error_lists_every_problem_one_per_line() -> None:
    err = InputError([Problem("members[3].end", "unknown node 'Q'"), Problem("$", "bad")], "m.json")
    assert str(err).splitlines() == ["m.json: members[3].end: unknown node 'Q'", "m.json: $: bad"]


def test_refuse_same_path_same_spelling(tmp_path: Path) -> None:
    p = tmp_path / "model.json"
    p.write_text("{}")
    with pytest.raises(InputError) as exc:
        fileio.refuse_same_path([p], [p])
    assert "overwrite" in _only_problem(exc).message


def test_refuse_same_path_through_dots_and_links(tmp_path: Path) -> None:
    p = tmp_path / "model.json"
    p.write_text("{}")
    (tmp_path / "sub").mkdir()
    with pytest.raises(InputError):
        fileio.refuse_same_path([tmp_path / "sub" / ".." / "model.json"], [p])
    if hasattr(os, "symlink"):
        link = tmp_path / "link.json"
        link.symlink_to(p)
        with pytest.raises(InputError):
            fileio.refuse_same_path([link], [p])


def test_refuse_same_path_allows_distinct_and_none(tmp_path: Path) -> None:
    a = tmp_path / "a.json"
    a.write_text("{}")
    fileio.refuse_same_path([tmp_path / "report.json", None], [a, None])
