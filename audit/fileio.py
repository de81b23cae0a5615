"""File input and output that never leaves a half-written file behind.

* :func:`atomic_write_bytes` / :func:`atomic_write_text` write to a temporary
  file in the target's folder, flush it to disk and rename it over the target
  (``os.replace`` is atomic on POSIX and Windows): the target holds either the
  old content or the whole new content, never a part.
* :func:`read_input_bytes` reads an input file whole, with an
  :class:`~audit.errors.InputError` that says plainly what is wrong.
* :func:`refuse_same_path` stops an output from overwriting an input.
"""

from __future__ import annotations

import contextlib
import os
import stat
import tempfile
from collections.abc import Iterable
from pathlib import Path

from .errors import InputError, Problem

PathLike = str | os.PathLike[str]


def _new_file_mode(target: Path) -> int:
    """Mode for the written file: the target's own if it exists, else what ``open`` would give."""
    try:
        return stat.S_IMODE(os.stat(target).st_mode)
    except OSError:
        pass
    mask = os.umask(0o022)  # the only portable way to read the umask is to set it
    os.umask(mask)
    return 0o666 & ~mask


def atomic_write_bytes(path: PathLike, data: bytes) -> None:
    """Write ``data`` to ``path`` whole or not at all.

    The data goes to a temporary file in the same folder, is flushed and
    fsynced, and then renamed over ``path``.  On any error the temporary file
    is removed and the exception propagates; ``path`` is left as it was.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    mode = _new_file_mode(target)
    fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f".{target.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp_name, mode)
        os.replace(tmp_name, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp_name)
        raise
    # make the rename itself durable where the platform allows opening a folder
    with contextlib.suppress(OSError, AttributeError):
        dir_fd = os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
        try:
            os.fsync(dir_fd)
        finally:
            os.close(dir_fd)


def atomic_write_text(path: PathLike, text: str, encoding: str = "utf-8") -> None:
    """Write ``text`` (encoded, newlines untranslated) to ``path`` whole or not at all."""
    atomic_write_bytes(path, text.encode(encoding))


def read_input_bytes(path: PathLike, max_bytes: int) -> bytes:
    """Read an input file whole.

    Raises
    ------
    InputError
        if the file is missing, is a folder, cannot be read, or holds more
        than ``max_bytes`` bytes.
    """
    name = os.fspath(path)

    def fail(message: str) -> InputError:
        return InputError((Problem("$", message),), name)

    p = Path(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise fail("file not found") from None
    except OSError as exc:
        raise fail(f"cannot read the file: {exc.strerror or exc}") from None
    if stat.S_ISDIR(st.st_mode):
        raise fail("this is a folder, not a file")
    if stat.S_ISREG(st.st_mode) and st.st_size > max_bytes:
        raise fail(f"file is too large: {st.st_size} bytes, the limit is {max_bytes} bytes")
    try:
        with open(p, "rb") as fh:
            data = fh.read(max_bytes + 1)
    except IsADirectoryError:
        raise fail("this is a folder, not a file") from None
    except OSError as exc:
        raise fail(f"cannot read the file: {exc.strerror or exc}") from None
    if len(data) > max_bytes:
        raise fail(f"file is too large: more than {max_bytes} bytes")
    return data


def _same_file(a: Path, b: Path) -> bool:
    if a.resolve() == b.resolve():
        return True
    try:
        return os.path.samefile(a, b)  # hard links, differently spelt mounts
    except OSError:
        return False


def refuse_same_path(outputs: Iterable[PathLike | None], inputs: Iterable[PathLike | None]) -> None:
    """Raise :class:`InputError` if any output path is (resolves to) one of the input files.

    ``None`` entries (an output or input not given) are skipped.
    """
    ins = [Path(i) for i in inputs if i is not None]
    problems: dict[str, list[Problem]] = {}
    for out in outputs:
        if out is None:
            continue
        o = Path(out)
        for i in ins:
            if _same_file(o, i):
                problems.setdefault(os.fspath(out), []).append(
                    Problem("$", f"this output would overwrite the input file {os.fspath(i)}")
                )
    if problems:
        file, found = next(iter(problems.items()))
        raise InputError(found, file)
