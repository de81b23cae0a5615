"""Why a source's numbers for a model with tension-only / compression-only members or self weight differ.

Each cause is tested by solving the model as the source would have had it, and asking whether that
solution reproduces the reported numbers (every reported displacement, force and reaction within the
same tolerances as the recompute check) where the model's own solution does not:

* **treated as linear**: the model with every member linear; named by the non-linear members the
  source's numbers load in the sense they cannot carry;
* **self weight left out**: the model with no ``self_weight`` in any case;
* **combination superposed**: the factored sum of the reported cases (the combinations check's CB103
  measures by how much it misses).

A cause is reported only when its alternative reproduces the reported numbers of the case and the model's
own solution does not, so an explanation is never offered for numbers it does not explain.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from audit.model import CaseResults, Model


@dataclass(frozen=True)
class Alternative:
    """The solution of the model as the source may have had it (None for a case it cannot solve)."""

    name: str  #: "linear" or "no_self_weight"
    solution: Any  #: audit.solve.Solution or None


def linear_variant(model: Model) -> Model:
    return replace(model, behaviour=np.zeros(0, dtype=np.int64))


def without_self_weight(model: Model) -> Model:
    cases = tuple(
        replace(lc, self_weight=0.0, self_weight_text="", self_weight_direction=(), self_weight_direction_text=())
        for lc in model.load_cases
    )
    return replace(model, load_cases=cases)


def has_self_weight(model: Model) -> bool:
    return any(lc.has_self_weight for lc in model.load_cases)


def solve_variant(model: Model) -> Any:
    """The float64 solution of a variant model, None when it cannot be solved."""
    from audit.errors import UnsolvableError
    from audit.solve import solve_model

    try:
        return solve_model(model)
    except UnsolvableError:
        return None


def wrong_sense_members(model: Model, cr: CaseResults, allowed: np.ndarray) -> list[int]:
    """Non-linear members whose reported force has the sense they cannot carry (beyond ``allowed``)."""
    codes = model.behaviour_codes()
    N = cr.axial_forces
    with np.errstate(invalid="ignore"):
        return np.flatnonzero((codes != 0) & np.isfinite(N) & (codes * N < -allowed)).tolist()
