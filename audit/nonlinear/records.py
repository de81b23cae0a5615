"""What the non-linear solve found, per state (a load case or a combination solved as its own case)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

BoolArray = NDArray[np.bool_]

SOLVED = "solved"
MECHANISM = "mechanism"  #: the active structure is a mechanism: no solution (FORMAT.md)
NOT_CONVERGED = "not_converged"  #: the iteration cap was reached: reported, never passed


@dataclass(frozen=True)
class StateOutcome:
    """One state's non-linear solve."""

    case_id: str
    status: str  #: SOLVED, MECHANISM or NOT_CONVERGED
    active: BoolArray  #: (n_members,) True where the member carries force (linear members always)
    iterations: int  #: active-set iterations (each one linear solve with the current active set)
    method: str  #: "active set" or "active set, then damped Newton" (after a cycle or a singular set)
    message: str  #: "" when solved; otherwise why there is no solution, in plain words
    needed: tuple[int, ...] = ()  #: members the structure needs in the sense they cannot take (MECHANISM)
    complementarity: float = 0.0  #: largest sign violation left, relative to the state's scale


@dataclass(frozen=True)
class NonlinearReport:
    """Every state of a model with tension-only or compression-only members."""

    states: tuple[StateOutcome, ...]
    factorisations: int  #: factorisations done beyond the engine's one of the structure as built
    woodbury_solves: int  #: solves answered by a low-rank update of an existing factor
    max_rank: int  #: the largest low-rank update used

    def state(self, case_id: str) -> StateOutcome | None:
        for s in self.states:
            if s.case_id == case_id:
                return s
        return None

    @property
    def unsolved(self) -> tuple[StateOutcome, ...]:
        return tuple(s for s in self.states if s.status != SOLVED)
