"""truss-audit: independent verification of truss structural analyses.

Public API (no printing, no exit codes)::

    from audit import load_model, load_results, solve_model, check
    model = load_model("bridge.json")
    result = check(model)            # AuditResult; result.verdict is "pass" or "fail"
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

if TYPE_CHECKING:
    from audit.findings import AuditResult
    from audit.model import Model, Results
    from audit.solve import Solution


def load_model(path: str) -> Model:
    """Read and validate a model file (raises audit.errors.InputError listing every problem)."""
    from audit.exchange import load_model as _load

    return _load(path)


def load_results(path: str, model: Model) -> Results:
    """Read a results file for ``model``, converted to the model's units, tension positive."""
    from audit.exchange import load_results as _load

    return _load(path, model)


def solve_model(model: Model, backend: str = "auto") -> Solution:
    """Solve every load case and combination (raises audit.errors.UnsolvableError for a mechanism).

    (Named ``solve_model`` because ``audit.solve`` is the module that implements it.)
    """
    from audit.solve import solve_model as _solve

    return _solve(model, backend)


def check(model: Model, results: Results | None = None, **options: Any) -> AuditResult:
    """Audit the reported results (``results`` or those inside the model); see audit.engine.audit."""
    from audit.engine import audit as _audit

    return _audit(model, results, **options)


__all__ = ["__version__", "check", "load_model", "load_results", "solve_model"]
