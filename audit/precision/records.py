"""Records of the high-precision recomputation: per reported quantity, per case, model-wide, and per exact case.

Immutable dataclasses with ``as_dict`` for the JSON report; a bound that is
not established is ``None`` (never zero), with the reason beside it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from audit.model import FloatArray

from .exact_numbers import Fixed, ObjArray


def bound_value(x: float | None) -> float | None:
    return None if x is None or not np.isfinite(x) else float(x)


@dataclass(frozen=True)
class QuantityProof:
    """Per reported quantity (displacements, axial forces or reactions) of one case.

    ``verdict`` per entry: 0 not reported, 1 proven within its printed
    rounding of the exact solution, 2 proven beyond its printed rounding,
    3 undecided (our proven bound is too wide to tell).
    """

    name: str
    verdict: np.ndarray  #: int8, shape of the quantity
    difference: FloatArray  #: |reported − recomputed|
    bound: FloatArray  #: proven |recomputed − exact|
    quantum: FloatArray  #: half unit in the last printed digit

    def counts(self) -> dict[str, int]:
        return {
            "reported": int(np.count_nonzero(self.verdict)),
            "within_rounding": int(np.count_nonzero(self.verdict == 1)),
            "beyond_rounding": int(np.count_nonzero(self.verdict == 2)),
            "undecided": int(np.count_nonzero(self.verdict == 3)),
        }


@dataclass(frozen=True)
class ReportedProof:
    """What is proven about the reported displacements of one case."""

    status: str  #: "evaluated", "incomplete", "not_reported", "not_established"
    reason: str
    bound: float | None  #: proven ‖d* − d_reported‖₂ (None when not established)
    distance_lower: float | None  #: proven ‖d* − d_reported‖₂ ≥ this
    backward_error: float | None  #: Oettli–Prager ω
    as_good_as_data: bool | None  #: ω ≤ the input data's relative rounding quantum
    quantities: tuple[QuantityProof, ...] = ()

    def as_dict(self) -> dict[str, Any]:
        return {
            "status": self.status,
            "reason": self.reason,
            "bound_to_exact": self.bound,
            "distance_lower_bound": self.distance_lower,
            "backward_error": self.backward_error,
            "as_good_as_data": self.as_good_as_data,
            "quantities": {q.name: q.counts() for q in self.quantities},
        }


@dataclass(frozen=True)
class CasePrecision:
    """High-precision answer of one load case or combination, with its proof status."""

    case_id: str
    displacements: FloatArray  #: (n_nodes, dim) float64 rounded from the high-precision answer
    axial_forces: FloatArray  #: (m,)
    reactions: FloatArray  #: (n_nodes, dim), zero away from supports
    displacements_exact: Fixed
    axial_forces_exact: Fixed
    reactions_exact: Fixed
    digits: int  #: digits requested
    lambda_lo: float | None
    proven_digits: int | None  #: normwise digits proven for the displacements (None: not established)
    bound: float | None  #: proven ‖d* − d‖₂ for our displacements
    bound_dof: FloatArray | None  #: (n_nodes, dim) proven |d* − d| per dof
    bound_axial: FloatArray | None  #: (m,) proven |N* − N|
    bound_reaction: FloatArray | None  #: (n_nodes, dim)
    energy_bound: float | None  #: proven (d*−d)ᵀK(d*−d)
    backward_error: float | None  #: Oettli–Prager ω of our own answer
    iterations: int
    converged: bool
    status: str  #: "proven" or "not_established"
    reason: str
    reported: ReportedProof
    estimated_digits: int | None = None  #: digits the refinement reached by its own estimate (not proven)

    @property
    def displacements_hp(self) -> ObjArray:
        """(n_nodes, dim) mpmath values at the requested digits."""
        return self.displacements_exact.to_mpf(self.digits)

    @property
    def axial_forces_hp(self) -> ObjArray:
        return self.axial_forces_exact.to_mpf(self.digits)

    @property
    def reactions_hp(self) -> ObjArray:
        return self.reactions_exact.to_mpf(self.digits)

    def as_dict(self) -> dict[str, Any]:
        return {
            "case": self.case_id,
            "status": self.status,
            "reason": self.reason,
            "digits_requested": self.digits,
            "digits_proven": self.proven_digits,
            "digits_estimated_not_proven": self.estimated_digits,
            "bound_displacements": self.bound,
            "bound_axial_forces_max": bound_value(float(np.max(self.bound_axial, initial=0.0)))
            if self.bound_axial is not None
            else None,
            "energy_bound": self.energy_bound,
            "backward_error": self.backward_error,
            "iterations": self.iterations,
            "converged": self.converged,
            "reported": self.reported.as_dict(),
        }


@dataclass(frozen=True)
class PrecisionReport:
    """Model-wide outcome of the high-precision recomputation (see :mod:`audit.precision`)."""

    digits: int
    cases: tuple[CasePrecision, ...]
    lambda_lo: float | None  #: proven λ_min of the exact restrained K
    lambda_lo_scaled: float | None  #: proven λ_min of Σ K_r Σ (Σ powers of two)
    lambda_method: str
    lambda_reason: str
    condition_estimate: float  #: λ_max/λ_min estimate (2-norm) of the restrained K, Ritz values
    condition_upper: float | None  #: proven upper bound of the 2-norm condition number
    condition_scaled: float  #: 1-norm estimate of the diagonally scaled K_r (from audit.solve)
    data_precision: float  #: smallest relative rounding quantum among the input texts
    data_precision_source: str
    from_text: bool
    method: str
    timings: tuple[tuple[str, float], ...]
    certificate: dict[str, Any] = field(default_factory=dict)
    #: (case id, why) of the states of a non-linear model that have no solution (audit.nonlinear)
    unsolved: tuple[tuple[str, str], ...] = ()

    def case(self, case_id: str) -> CasePrecision | None:
        for c in self.cases:
            if c.case_id == case_id:
                return c
        return None

    def as_dict(self) -> dict[str, Any]:
        proven = [c.proven_digits for c in self.cases if c.proven_digits is not None]
        estimated = [c.estimated_digits for c in self.cases if c.estimated_digits is not None]
        extra = {} if self.lambda_lo is not None else {"digits_estimated_not_proven_min": min(estimated, default=None)}
        return extra | {
            "status": "proven" if self.cases and all(c.status == "proven" for c in self.cases) else "not_established",
            "digits_requested": self.digits,
            "digits_proven_min": min(proven) if proven else None,
            "method": self.method,
            "input": "decimal texts" if self.from_text else "float repr (some texts missing)",
            "lambda_lo": self.lambda_lo,
            "lambda_lo_scaled": self.lambda_lo_scaled,
            "lambda_certificate": self.lambda_method,
            "lambda_reason": self.lambda_reason,
            "condition_estimate": bound_value(self.condition_estimate),
            "condition_upper_bound": self.condition_upper,
            "condition_scaled_estimate": bound_value(self.condition_scaled),
            "data_precision": bound_value(self.data_precision),
            "data_precision_source": self.data_precision_source,
            "certificate": self.certificate,
            "cases": [c.as_dict() for c in self.cases],
        }


@dataclass(frozen=True)
class ExactCase:
    """One case's high-precision answer as exact fractions (the refined iterate, not rounded).

    Shaped like :class:`audit.solve.CaseSolution`, so that
    ``audit.exchange.dump_results(model, cases, digits=N)`` rounds each exact
    value once, half-to-even.  The values are proven to ``proven_digits``
    digits relative to the case's largest displacement (``precision`` holds
    the per-entry bounds); an entry much smaller than that has fewer correct
    significant digits.
    """

    case_id: str
    displacements: ObjArray  #: (n_nodes, dim) Fraction
    axial_forces: ObjArray  #: (m,) Fraction
    reactions: ObjArray  #: (n_nodes, dim) Fraction
    proven_digits: int | None
    precision: CasePrecision
