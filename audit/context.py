"""The audit context: everything a check may read, built once, never changed."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from audit.model import Model, Results
from audit.solve import Solution, System
from audit.sources import SourceNote

if TYPE_CHECKING:
    from audit.linsolve import Factor
    from audit.precision import PrecisionReport
    from audit.stability import StabilityReport
    from audit.tolerances import Tolerances


@dataclass(frozen=True)
class Context:
    model: Model
    results: Results | None  #: the reported results (inside the model or from a separate file)
    tolerances: Tolerances
    system: System  #: assembled and restrained
    factor: Factor | None  #: factor of system.K_r, None when it could not be factorised
    condition: float  #: condition estimate of the scaled K_r (nan when not factorised)
    stability: StabilityReport
    solution: Solution | None  #: the float64 recomputation, None when the model cannot be solved
    unsolvable_reason: str  #: why ``solution`` is None ("" otherwise)
    precision: PrecisionReport | None  #: high-precision recomputation and bounds, None when not run
    precision_fault: str = ""  #: why the high-precision stage crashed ("" when it did not)
    source_notes: tuple[SourceNote, ...] = ()  #: the source reader's remarks (what it did not read, how it read)
