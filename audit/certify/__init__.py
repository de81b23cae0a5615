"""Proven lower bounds on the smallest eigenvalue: float matrices, the exact restrained stiffness, size policy.

* :mod:`~audit.certify.eigen_bound`: Rump's (2006) shifted-factorisation
  certificate for a symmetric float matrix (dense Cholesky, CHOLMOD, SuperLU),
  Ritz estimates and a proven norm bound;
* :mod:`~audit.certify.policy`: whether the certificate runs, from the
  engine's factor size, against :data:`CERTIFICATE_BUDGET` engine
  factorisations (:data:`CERTIFICATE_FREE_NONZEROS`, :data:`COST_MODEL`,
  :data:`MAX_FACTOR_NONZEROS`, :data:`DENSE_LIMIT`, :data:`SPARSE_LIMIT`);
* :mod:`~audit.certify.restrained`: λ_lo of the exact restrained stiffness
  (the float certificate minus the proven distance to the exact matrix).
"""

from __future__ import annotations

from .eigen_bound import (
    DENSE_LIMIT,
    SPARSE_LIMIT,
    Certificate,
    U,
    cholmod_available,
    gamma,
    inf_norm_upper,
    lower_eigen_bound,
    ritz_chain,
    ritz_extremes,
)
from .policy import (
    CERTIFICATE_BUDGET,
    CERTIFICATE_FREE_NONZEROS,
    COST_MODEL,
    MAX_FACTOR_NONZEROS,
    CertificatePlan,
    certificate_plan,
    engine_factor_nonzeros,
)
from .restrained import AssemblyData, RestrainedBound, certify_restrained

__all__ = [
    "CERTIFICATE_BUDGET",
    "CERTIFICATE_FREE_NONZEROS",
    "COST_MODEL",
    "DENSE_LIMIT",
    "MAX_FACTOR_NONZEROS",
    "SPARSE_LIMIT",
    "AssemblyData",
    "Certificate",
    "CertificatePlan",
    "RestrainedBound",
    "U",
    "certificate_plan",
    "certify_restrained",
    "cholmod_available",
    "engine_factor_nonzeros",
    "gamma",
    "inf_norm_upper",
    "lower_eigen_bound",
    "ritz_chain",
    "ritz_extremes",
]
