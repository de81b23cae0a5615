"""The machine-readable report: ``format: "truss-audit-report"``, version 1.

Fields are those of ``FORMAT.md`` ("The audit report") plus tolerances,
precision, inputs (file name and sha256, no directories), tool version,
totals and the caution.  Output is deterministic: keys sorted, lists in the
order the engine ran the checks, no timestamps, no absolute paths; floats in
Python's shortest round-trip form (``repr``), NaN and ±inf as ``null``.
"""

from __future__ import annotations

import enum
import json
import math
from collections.abc import Mapping
from fractions import Fraction
from typing import Any

from audit.findings import AuditResult, CheckOutcome, Finding
from audit.model import Model
from audit.reporters import _shared

FORMAT = "truss-audit-report"
VERSION = 1


def plain(x: Any) -> Any:
    """``x`` as JSON-ready data: numpy scalars and arrays unwrapped, non-finite floats as None."""
    if x is None or isinstance(x, (bool, str)):
        return x
    if isinstance(x, enum.Enum):
        return plain(x.value)
    if isinstance(x, int):
        return int(x)
    if isinstance(x, float):
        return float(x) if math.isfinite(x) else None
    if isinstance(x, Fraction):
        return str(x)
    if isinstance(x, Mapping):
        return {str(k): plain(v) for k, v in x.items()}
    if isinstance(x, (list, tuple, set, frozenset)):
        items = [plain(v) for v in x]
        return sorted(items, key=json.dumps) if isinstance(x, (set, frozenset)) else items
    if hasattr(x, "tolist"):  # numpy scalar or array
        return plain(x.tolist())
    if hasattr(x, "__float__"):
        return plain(float(x))
    return str(x)


def _number(x: float | None) -> float | None:
    return plain(float(x)) if x is not None else None


def finding_dict(f: Finding) -> dict[str, Any]:
    return {
        "code": f.code,
        "severity": f.severity.label,
        "case": f.case,
        "location": f.location.as_dict(),
        "message": f.message,
        "reported": _number(f.reported),
        "expected": _number(f.expected),
        "difference": _number(f.difference),
        "tolerance": _number(f.tolerance),
        "units": f.units,
        "data": {str(k): plain(v) for k, v in f.data},
    }


def check_dict(o: CheckOutcome) -> dict[str, Any]:
    return {
        "id": o.check,
        "case": o.case,
        "status": o.status.value,
        "reason": o.reason,
        "summary": {str(k): plain(v) for k, v in o.summary},
        "findings": len(o.findings),
    }


def report_dict(result: AuditResult) -> dict[str, Any]:
    """The report as plain data (what :func:`render` writes)."""
    return {
        "format": FORMAT,
        "version": VERSION,
        "verdict": result.verdict,
        "fail_on": result.fail_on.label,
        "title": result.title,
        "model": plain(result.model_summary),
        "stability": plain(result.stability),
        "checks": [check_dict(o) for o in result.outcomes],
        "findings": [finding_dict(f) for f in result.findings],
        "totals": {"checks": _shared.status_totals(result), "findings": _shared.severity_totals(result)},
        "crashed": list(result.crashed),
        "tolerances": plain(result.tolerances),
        "precision": plain(result.precision),
        "inputs": [{"file": _shared.file_name(name), "sha256": sha} for name, sha in result.inputs],
        "tool": {"name": "truss-audit", "version": result.version},
        "caution": _shared.CAUTION,
    }


def render(result: AuditResult, model: Model | None = None, context: Mapping[str, Any] | None = None) -> str:
    """The JSON report: sorted keys, two-space indent, a final newline.

    ``model`` and ``context`` are not needed; they are accepted so that every
    reporter has one signature.
    """
    return json.dumps(report_dict(result), sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


__all__ = ["FORMAT", "VERSION", "finding_dict", "plain", "render", "report_dict"]
