"""High-precision recomputation from the input as written, with proven error bounds.

Per load case and combination ("state"):

1. **Exact input** (:mod:`~audit.precision.exact_numbers`,
   :mod:`~audit.precision.exact_model`, :mod:`~audit.precision.states`): every
   number is read from its decimal text into an integer with a common power
   of ten per kind of quantity; only ``1/L³`` and ``1/L`` are rounded, to
   ``P`` bits, with an explicit bound.
2. **Mixed-precision iterative refinement**
   (:mod:`~audit.precision.refinement`; Higham, *Accuracy and Stability of
   Numerical Algorithms*, 2nd ed., §12.1): the engine's float64 factor steers
   the corrections, the final residual (the proof's) is exact
   (:mod:`~audit.precision.residual`), earlier ones may be double-double
   (:mod:`~audit.precision.steering`).
3. **Proof** (:mod:`~audit.precision.bounds`, Rump 2006 via
   :mod:`audit.certify`): a certified lower bound on the smallest eigenvalue
   of the exact restrained stiffness turns the exact residual into bounds on
   displacements (per dof and in the energy norm), member forces and
   reactions.
4. **Backward error** of the reported displacements (Oettli & Prager 1964),
   compared with the rounding of the input's own digits.

The records are in :mod:`~audit.precision.records`, the entry points
:func:`analyse` and :func:`solve_high_precision` in
:mod:`~audit.precision.analysis`.

Limits (stated in the report):

* digits from 4 to :data:`MAX_DIGITS` (default :data:`DEFAULT_DIGITS`);
* the certificate's size policy (:func:`audit.certify.certificate_plan`):
  dense for n ≤ :data:`audit.certify.DENSE_LIMIT`; a sparse certificate
  always when the engine's factor has at most
  :data:`audit.certify.CERTIFICATE_FREE_NONZEROS` (2·10⁶) nonzeros, above that
  only when its estimated cost (:data:`audit.certify.COST_MODEL`, from the
  factor's nonzeros per row) is at most :data:`audit.certify.CERTIFICATE_BUDGET`
  (1) engine factorisation; never above
  :data:`audit.certify.MAX_FACTOR_NONZEROS` (1.5·10⁸, memory) or
  n > :data:`audit.certify.SPARSE_LIMIT`.  A certificate that does not run
  leaves λ_lo *not established* with the reason (the factor size and the
  limit), never zero; the refinement still runs and its digits are reported
  as an estimate, not as proven;
* bounds are evaluated in float64 in real units: forces whose residual unit
  leaves ``2^±UNIT_RANGE`` (below about 1e-200) give no bounds;
* a settlement along an inclined restraint is rounded (its state's bounds
  are then not established).

Measured (``benchmarks/bench_precision.py``, 2 shared cores, PARDISO as the
engine's factor): refinement to 30 digits 0.5–0.8× the engine's
factorisation with its condition estimate on 2D grids (10⁵–10⁶ members),
0.12–0.4× on 3D lattices (3·10⁴–3·10⁵).  The certificate, when forced
(``--budget inf``), cost 0.85× (2D 10⁵), 1.1–1.8× (2D 10⁶), 1.6× (3D 3·10⁴),
3.1× (3D 10⁵) and 4.1× (3D 3·10⁵, peak 11.2 GiB); under the size policy it
runs on the first and is skipped (reason stated) on the 3D ones, where the
precision stage then costs 0.5–0.8× a factorisation in all.
"""

from __future__ import annotations

from .analysis import DEFAULT_DIGITS, MAX_DIGITS, analyse, solve_high_precision
from .bounds import classify
from .exact_numbers import (
    Fixed,
    decimal_ints,
    floor_log2_scaled,
    ints_to_float,
    round_scaled,
    scale_float,
    text_quantum,
)
from .records import CasePrecision, ExactCase, PrecisionReport, QuantityProof, ReportedProof
from .residual import UNIT_RANGE

__all__ = [
    "DEFAULT_DIGITS",
    "MAX_DIGITS",
    "UNIT_RANGE",
    "CasePrecision",
    "ExactCase",
    "Fixed",
    "PrecisionReport",
    "QuantityProof",
    "ReportedProof",
    "analyse",
    "classify",
    "decimal_ints",
    "floor_log2_scaled",
    "ints_to_float",
    "round_scaled",
    "scale_float",
    "solve_high_precision",
    "text_quantum",
]
