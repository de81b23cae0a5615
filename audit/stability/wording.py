"""Small wording helpers shared by the report, the naming of mechanisms and the traps."""

from __future__ import annotations

import numpy as np

from audit.model import AXES, FloatArray


def plural(n: int, word: str) -> str:
    """'1 state', '2 states'."""
    return f"{n} {word}{'' if n == 1 else 's'}"


def dir_word(v: FloatArray) -> str:
    """An axis name for an axis direction, else the components."""
    v = np.asarray(v, dtype=np.float64)
    k = int(np.argmax(np.abs(v)))
    if abs(abs(v[k]) - 1.0) < 1e-12 and np.sum(np.abs(v)) - abs(v[k]) < 1e-12:
        return ("" if v[k] > 0 else "-") + AXES[k]
    return "(" + ", ".join(num(c) for c in v) + ")"


def num(x: float) -> str:
    """A coordinate in 4 significant figures, 0 for round-off."""
    x = float(x)
    return "0" if abs(x) < 5e-13 else f"{x:.4g}"


def joint_list(names: list[str], limit: int = 6) -> str:
    """'A, B, C', or the first ``limit`` names and how many more."""
    if len(names) <= limit:
        return ", ".join(names)
    return ", ".join(names[:limit]) + f" and {len(names) - limit} more"
