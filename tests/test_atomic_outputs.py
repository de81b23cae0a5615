"""Nothing lost: reports are written whole or not at all, and never over an input.

An output is written to a temporary file beside the target and renamed over
it (POSIX ``rename(2)`` replaces the directory entry atomically: the target
names either the old file or the whole new one; common practice).  The tests
interrupt the write at each step -- while writing, at the flush to disk, at
the rename -- through the library function and through the command line, and
check that the target keeps its old content (or does not exist), that no
temporary file is left, and that the inputs are untouched.  A report path
that is an input file, however spelt (the same path, a relative path with
``..``, a symbolic link), is refused with exit 2 before anything is done.
"""

from __future__ import annotations

import io
import os
from pathlib import Path

import pytest

from audit import cli, fileio

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT / "fuzz" / "corpus"
OLD = b'{"old": "report", "kept": true}\n'


def run_cli(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv, out=out, err=err)
    return code, out.getvalue(), err.getvalue()


def snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    return {
        str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_mtime_ns)
        for p in sorted(folder.rglob("*"))
        if p.is_file() and not p.is_symlink()
    }


def leftovers(folder: Path, keep: set[str]) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name not in keep)


@pytest.fixture
def roof(tmp_path: Path) -> Path:
    path = tmp_path / "roof.json"
    path.write_bytes((CORPUS / "boathouse.model.json").read_bytes())
    return path


class Interrupted(KeyboardInterrupt):
    """Stands for Ctrl-C or a kill arriving at that moment."""


# --------------------------------------------------------------------------- the library function
def test_atomic_write_replaces_the_whole_file(tmp_path: Path) -> None:
    target = tmp_path / "report.json"
    target.write_bytes(OLD)
    fileio.atomic_write_text(target, "new content\n")
    assert target.read_bytes() == b"new content\n"
    assert leftovers(tmp_path, {"report.json"}) == []


def test_atomic_write_keeps_the_file_mode(tmp_path: Path) -> None:
    target = tmp_path / "report.json"
    target.write_bytes(OLD)
    target.chmod(0o640)
    fileio.atomic_write_text(target, "new\n")
    assert target.stat().st_mode & 0o777 == 0o640


@pytest.mark.parametrize("step", ["write", "fsync", "chmod", "replace"], ids=lambda s: f"interrupted-at-{s}")
@pytest.mark.parametrize("existing", [True, False], ids=["over-an-old-report", "new-report"])
def test_interrupted_write_leaves_old_content_and_no_temp_file(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, step: str, existing: bool
) -> None:
    target = tmp_path / "report.json"
    if existing:
        target.write_bytes(OLD)
    if step == "write":
        real_fdopen = os.fdopen

        class HalfWriter:
            """A file that takes half of the data, then the process is interrupted."""

            def __init__(self, *args: object, **kwargs: object) -> None:
                self._fh = real_fdopen(*args, **kwargs)  # type: ignore[call-overload]

            def __enter__(self) -> HalfWriter:
                return self

            def __exit__(self, *exc: object) -> None:
                self._fh.close()

            def write(self, data: bytes) -> int:
                self._fh.write(data[: len(data) // 2])
                self._fh.flush()
                raise Interrupted

            def __getattr__(self, name: str) -> object:
                return getattr(self._fh, name)

        monkeypatch.setattr(os, "fdopen", HalfWriter)
        with pytest.raises(Interrupted):
            fileio.atomic_write_text(target, "z" * 100_000)
        monkeypatch.undo()
    else:

        def boom(*args: object, **kwargs: object) -> None:
            raise Interrupted

        monkeypatch.setattr(os, step, boom)
        with pytest.raises(Interrupted):
            fileio.atomic_write_text(target, "z" * 100_000)
        monkeypatch.undo()
    if existing:
        assert target.read_bytes() == OLD
    else:
        assert not target.exists()
    assert leftovers(tmp_path, {"report.json"}) == []


def test_write_into_a_missing_folder_raises_and_leaves_nothing(tmp_path: Path) -> None:
    with pytest.raises(FileNotFoundError):
        fileio.atomic_write_text(tmp_path / "no" / "such" / "report.json", "x")
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- through the command line
@pytest.mark.parametrize("option", ["--json", "--junit", "--html", "--markdown"])
def test_interrupted_report_keeps_the_old_report(
    tmp_path: Path, roof: Path, monkeypatch: pytest.MonkeyPatch, option: str
) -> None:
    target = tmp_path / "report.out"
    target.write_bytes(OLD)
    inputs = snapshot(tmp_path)

    def boom(*args: object, **kwargs: object) -> None:
        raise Interrupted

    monkeypatch.setattr(os, "replace", boom)
    code, _out, err = run_cli(["check", str(roof), option, str(target), "--quiet"])
    monkeypatch.undo()
    assert code == 130, err
    assert "no output file was left half-written" in err
    assert target.read_bytes() == OLD
    assert snapshot(tmp_path) == inputs
    assert leftovers(tmp_path, {"roof.json", "report.out"}) == []


def test_a_reporter_that_raises_leaves_no_file(tmp_path: Path, roof: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from audit.reporters import json_report

    def broken(*args: object, **kwargs: object) -> str:
        raise Interrupted

    monkeypatch.setattr(json_report, "render", broken)
    target = tmp_path / "report.json"
    code, _out, err = run_cli(["check", str(roof), "--json", str(target), "--quiet"])
    assert code == 130, err
    assert not target.exists()
    assert leftovers(tmp_path, {"roof.json"}) == []


def test_interrupted_solve_keeps_the_old_results(tmp_path: Path, roof: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    target = tmp_path / "roof.results.json"
    target.write_bytes(OLD)
    before = snapshot(tmp_path)

    def boom(*args: object, **kwargs: object) -> None:
        raise Interrupted

    monkeypatch.setattr(os, "fsync", boom)
    code, _out, err = run_cli(["solve", str(roof), "-o", str(target)])
    monkeypatch.undo()
    assert code == 130, err
    assert snapshot(tmp_path) == before
    assert leftovers(tmp_path, {"roof.json", "roof.results.json"}) == []


def test_report_into_a_missing_folder_exits_2(tmp_path: Path, roof: Path) -> None:
    target = tmp_path / "missing" / "report.json"
    code, out, err = run_cli(["check", str(roof), "--json", str(target), "--quiet"])
    assert code == 2
    assert "missing" in err
    assert "Traceback" not in err + out
    assert leftovers(tmp_path, {"roof.json"}) == []


# --------------------------------------------------------------------------- an output that is an input
def _spellings(tmp_path: Path, name: str) -> dict[str, str]:
    sub = tmp_path / "sub"
    sub.mkdir(exist_ok=True)
    link = tmp_path / "link.json"
    if not link.exists():
        link.symlink_to(tmp_path / name)
    dir_link = tmp_path / "dirlink"
    if not dir_link.exists():
        dir_link.symlink_to(tmp_path, target_is_directory=True)
    return {
        "same-path": str(tmp_path / name),
        "relative": name,
        "dot-dot": os.path.join("sub", "..", name),
        "dot-slash": os.path.join(".", name),
        "double-slash": str(tmp_path) + "//" + name,
        "symlink": str(link),
        "folder-symlink": str(dir_link / name),
    }


SPELLINGS = ["same-path", "relative", "dot-dot", "dot-slash", "double-slash", "symlink", "folder-symlink"]


@pytest.mark.parametrize("spelling", SPELLINGS)
@pytest.mark.parametrize("option", ["--json", "--junit", "--html", "--markdown"])
def test_report_over_the_model_is_refused(
    tmp_path: Path, roof: Path, monkeypatch: pytest.MonkeyPatch, spelling: str, option: str
) -> None:
    monkeypatch.chdir(tmp_path)
    target = _spellings(tmp_path, roof.name)[spelling]
    before = snapshot(tmp_path)
    code, out, err = run_cli(["check", "roof.json", option, target, "--quiet"])
    assert code == 2, out + err
    assert err.strip()
    assert "Traceback" not in err + out
    assert snapshot(tmp_path) == before
    assert (tmp_path / "link.json").is_symlink()


@pytest.mark.parametrize("spelling", SPELLINGS)
def test_report_over_the_results_is_refused(
    tmp_path: Path, roof: Path, monkeypatch: pytest.MonkeyPatch, spelling: str
) -> None:
    monkeypatch.chdir(tmp_path)
    code, _out, err = run_cli(["solve", "roof.json", "-o", "roof.results.json"])
    assert code == 0, err
    target = _spellings(tmp_path, "roof.results.json")[spelling]
    before = snapshot(tmp_path)
    code, out, err = run_cli(["check", "roof.json", "roof.results.json", "--json", target, "--quiet"])
    assert code == 2, out + err
    assert snapshot(tmp_path) == before


@pytest.mark.parametrize("spelling", SPELLINGS)
def test_solve_over_its_model_is_refused(
    tmp_path: Path, roof: Path, monkeypatch: pytest.MonkeyPatch, spelling: str
) -> None:
    monkeypatch.chdir(tmp_path)
    target = _spellings(tmp_path, roof.name)[spelling]
    before = snapshot(tmp_path)
    code, out, err = run_cli(["solve", "roof.json", "-o", target])
    assert code == 2, out + err
    assert "overwrite" in err
    assert "Traceback" not in err + out
    assert snapshot(tmp_path) == before


def test_refusal_comes_before_any_report_is_written(tmp_path: Path, roof: Path) -> None:
    """With one good and one bad output path, neither is written."""
    good = tmp_path / "report.json"
    code, _out, _err = run_cli(["check", str(roof), "--json", str(good), "--junit", str(roof), "--quiet"])
    assert code == 2
    assert not good.exists()


def test_two_reports_to_one_path_are_refused(tmp_path: Path, roof: Path) -> None:
    """--json and --junit to the same file would leave only one of them: refused (exit 2)."""
    same = tmp_path / "report.out"
    code, out, err = run_cli(["check", str(roof), "--json", str(same), "--junit", str(same), "--quiet"])
    assert code == 2, out + err
    assert not same.exists()


@pytest.mark.parametrize("option", ["--json", "--junit"])
def test_report_path_that_is_a_folder_exits_2_naming_it(tmp_path: Path, roof: Path, option: str) -> None:
    """A folder where a report file should go: exit 2, the message names that path, nothing is left behind."""
    folder = tmp_path / "reports"
    folder.mkdir()
    code, out, err = run_cli(["check", str(roof), option, str(folder), "--quiet"])
    assert code == 2, out + err
    assert f"{folder}:" in err, f"the message should name {folder}: {err!r}"
    assert list(folder.iterdir()) == []
    assert leftovers(tmp_path, {"roof.json", "reports"}) == []
