"""Shared fixtures: the bundled published reference cases.

Hypothesis strategies for random trusses live in ``tests/strategies.py``
(``from strategies import plane_trusses, to_model``).
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable
from decimal import Decimal
from pathlib import Path
from typing import Any

import pytest
from hypothesis import settings

# Under CI (CI=true) every property test draws the same examples on every run, so a green run is
# reproducible and a red one is not luck; locally the examples are random, to keep finding new ones.
settings.register_profile("ci", derandomize=True, deadline=None, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")

PUBLISHED_DIR = Path(__file__).resolve().parent.parent / "reference_cases" / "published"


def read_published(name: str) -> tuple[dict[str, Any], str]:
    """The document of ``reference_cases/published/<name>`` and its text.

    Numbers are read as Decimal, keeping their printed digits.
    """
    text = (PUBLISHED_DIR / name).read_text()
    return json.loads(text, parse_float=Decimal, parse_int=Decimal), text


@pytest.fixture
def published() -> Callable[[str], tuple[dict[str, Any], Any]]:
    """Function ``name -> (document, model)`` for a bundled published case, read by ``audit.exchange``."""
    from audit.exchange import parse_model

    def load(name: str) -> tuple[dict[str, Any], Any]:
        doc, text = read_published(name)
        return doc, parse_model(text)

    return load
