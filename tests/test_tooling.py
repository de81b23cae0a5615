"""The project's own tooling runs as part of the suite, so it is never configured and forgotten.

ruff (lint and format, tests included) and mypy on the package, as configured in pyproject.toml.
Skipped only when the tool is not installed (the README's test extra installs both).
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


def _run(args: list[str]) -> subprocess.CompletedProcess[str]:
    return subprocess.run(args, cwd=ROOT, capture_output=True, text=True, timeout=600, check=False)


@pytest.mark.skipif(shutil.which("ruff") is None, reason="ruff is not installed")
def test_ruff_lint_is_clean() -> None:
    proc = _run(["ruff", "check", "."])
    assert proc.returncode == 0, proc.stdout + proc.stderr


@pytest.mark.skipif(shutil.which("ruff") is None, reason="ruff is not installed")
def test_ruff_format_is_clean() -> None:
    proc = _run(["ruff", "format", "--check", "."])
    assert proc.returncode == 0, proc.stdout + proc.stderr


def test_mypy_is_clean() -> None:
    pytest.importorskip("mypy")
    proc = _run([sys.executable, "-m", "mypy"])
    assert proc.returncode == 0, proc.stdout + proc.stderr
