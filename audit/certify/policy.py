"""Size policy: whether the certificate runs, decided from sizes alone before anything is factorised.

A sparse certificate is a second factorisation of the (shifted) restrained
stiffness, by a library other than the engine's when the engine used PARDISO
(whose factor cannot be read back).  Its cost is estimated in units of the
engine's own factorisation from the engine's factor size ``nnz(L)`` (PARDISO
reports it; SuperLU's L is counted; otherwise the nonzeros of the lower
triangle of ``K_r``, a lower bound of any Cholesky factor's, stand in) and
the order n::

    ratio = base + per_density · nnz(L) / n        (COST_MODEL[(engine, certificate)])

PARDISO engine, CHOLMOD certificate: fitted to ``benchmarks/bench_precision.py``
on this machine (2 shared cores; the whole certificate over the engine's
factorisation with its condition estimate): 2D grid of 10⁵ members, nnz(L)/n =
59: 0.85 and 1.40 measured in two runs (the machine is shared), 0.99 estimated; 3D lattice 3·10⁴, 286: 1.58 and 2.13; 3D
10⁵, 498: 3.12 and 3.19 (the estimate errs on the costly side).  Earlier runs
of the same script: 2D 10⁶ 1.1–1.8, 3D 3·10⁵ 4.1.  The other pairs come from
the factorisation times in SOLVERS.md.

The certificate runs when

* n ≤ :data:`~audit.certify.eigen_bound.DENSE_LIMIT` (dense, a fraction of a second), or
* nnz(L) ≤ :data:`CERTIFICATE_FREE_NONZEROS` (small in absolute terms), or
* the estimate is at most :data:`CERTIFICATE_BUDGET` engine factorisations,

and never when nnz(L) > :data:`MAX_FACTOR_NONZEROS` (memory: the
certificate's factor needs about 30 bytes per nonzero at its peak) or
n > :data:`~audit.certify.eigen_bound.SPARSE_LIMIT`.  Otherwise the reason
names the factor size, the estimate and the limit.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import scipy.sparse as sp

if TYPE_CHECKING:
    pass

from .eigen_bound import DENSE_LIMIT, SPARSE_LIMIT, cholmod_available, json_float

#: largest number of nonzeros of the engine's own factor (when it reports one) for which the sparse certificate
#: is attempted: the certificate's factor needs about 30 bytes per nonzero at its peak (measured 11 GiB for the
#: whole process on the 3D lattice of 3·10⁵ members)
MAX_FACTOR_NONZEROS = 150_000_000


#: a sparse certificate whose factor has at most this many nonzeros always runs (≲ 0.5 s on this machine)
CERTIFICATE_FREE_NONZEROS = 2_000_000


#: above that, the certificate runs only if its estimated cost is at most this many engine factorisations
CERTIFICATE_BUDGET = 1.0


#: estimated cost of the certificate over the engine's factorisation, ``base + per_density·nnz(L)/n``, per
#: (engine backend, certificate library); PARDISO→CHOLMOD fitted (module docstring), the others from the
#: factorisation times in SOLVERS.md (SuperLU 2.4–25× PARDISO, CHOLMOD 0.3–0.8× SuperLU) with the bound's
#: products (about 0.1) added: the same library factorising again costs one factorisation and a little more
COST_MODEL: dict[tuple[str, str], tuple[float, float]] = {
    ("pardiso", "cholmod"): (0.7, 0.005),
    ("pardiso", "superlu"): (3.0, 0.04),
    ("cholmod", "cholmod"): (1.1, 0.0),
    ("cholmod", "superlu"): (3.0, 0.04),
    ("splu", "cholmod"): (0.8, 0.0),
    ("splu", "superlu"): (1.1, 0.0),
}


@dataclass(frozen=True)
class CertificatePlan:
    """Whether the certificate runs, decided from sizes alone (this module's docstring)."""

    run: bool
    method: str  #: "dense", "cholmod" or "superlu"
    factor_nonzeros: int  #: the engine's factor size, or the lower triangle of K_r when not reported
    factor_nonzeros_source: str  #: "reported by <backend>", "counted" or "lower triangle of K_r"
    estimated_ratio: float  #: estimated cost in engine factorisations (0 for the dense path)
    reason: str  #: why it does not run ("" when it does)

    def as_dict(self) -> dict[str, object]:
        return {
            "run": self.run,
            "method": self.method,
            "factor_nonzeros": self.factor_nonzeros,
            "factor_nonzeros_source": self.factor_nonzeros_source,
            "estimated_cost_in_factorisations": json_float(self.estimated_ratio),
            "budget_in_factorisations": CERTIFICATE_BUDGET,
            "free_below_nonzeros": CERTIFICATE_FREE_NONZEROS,
            "reason": self.reason,
        }


def engine_factor_nonzeros(factor: object, K_r: sp.spmatrix) -> tuple[int, str]:
    """Nonzeros of the engine's factor L: reported (PARDISO), counted (SuperLU's L), else nnz(tril(K_r)).

    The lower triangle of K_r is a lower bound of any Cholesky factor's
    nonzeros (no cancellation assumed), so an estimate from it never
    overstates the cost.
    """
    fnz = getattr(factor, "factor_nonzeros", None)
    backend = str(getattr(factor, "backend", "unknown"))
    if isinstance(fnz, int) and fnz > 0:
        return fnz, f"reported by {backend}"
    lu = getattr(factor, "lu", None)
    low = getattr(lu, "L", None)
    if low is not None and hasattr(low, "nnz"):
        return int(low.nnz), "counted"
    n = K_r.shape[0]
    return int((sp.csr_matrix(K_r).nnz + n) // 2), "lower triangle of K_r"


def certificate_plan(
    factor: object,
    K_r: sp.spmatrix,
    *,
    dense_limit: int = DENSE_LIMIT,
    sparse_limit: int = SPARSE_LIMIT,
    max_factor_nonzeros: int = MAX_FACTOR_NONZEROS,
    budget: float = CERTIFICATE_BUDGET,
    free_nonzeros: int = CERTIFICATE_FREE_NONZEROS,
) -> CertificatePlan:
    """Decide from sizes alone whether the certificate of ``K_r`` runs (this module's docstring)."""
    n = int(K_r.shape[0])
    fnz, source = engine_factor_nonzeros(factor, K_r)
    if n <= dense_limit:
        return CertificatePlan(True, "dense", fnz, source, 0.0, "")
    method = "cholmod" if cholmod_available() else "superlu"
    engine = str(getattr(factor, "backend", "pardiso"))
    base, per_density = COST_MODEL.get((engine, method), COST_MODEL[("pardiso", method)])
    ratio = base + per_density * fnz / max(n, 1)
    if n > sparse_limit:
        why = f"n = {n} exceeds the size limit {sparse_limit} of the verified factorisation"
        return CertificatePlan(False, method, fnz, source, ratio, why)
    if fnz > max_factor_nonzeros:
        why = f"the float factor has {fnz} nonzeros, above the certificate's memory limit of {max_factor_nonzeros}"
        return CertificatePlan(False, method, fnz, source, ratio, why)
    if fnz <= free_nonzeros or ratio <= budget:
        return CertificatePlan(True, method, fnz, source, ratio, "")
    why = (
        f"the certificate would need a second factorisation ({method}) of about {fnz:.3g} nonzeros "
        f"({source}), estimated at {ratio:.2g} times the engine's own; above the limit of {budget:g} "
        f"factorisation (certificates of at most {free_nonzeros:.3g} factor nonzeros always run)"
    )
    return CertificatePlan(False, method, fnz, source, ratio, why)
