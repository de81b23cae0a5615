"""``benchmarks/generate.py`` (the lattice generator of the benchmarks) loaded once as a module, for tests."""

from __future__ import annotations

import functools
import importlib.util
import sys
from pathlib import Path
from typing import Any

GENERATE = Path(__file__).resolve().parent.parent / "benchmarks" / "generate.py"


@functools.cache
def generator() -> Any:
    spec = importlib.util.spec_from_file_location("bench_generate", GENERATE)
    assert spec is not None
    assert spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules["bench_generate"] = module
    spec.loader.exec_module(module)
    return module
