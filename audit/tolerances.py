"""The audit's tolerances: named once, in one frozen object, echoed in every report.

How a reported quantity is judged (every check that compares numbers uses
:meth:`Tolerances.allowed`)::

    allowed = quantum + max(relative * |expected|, floor * scale)

* ``quantum`` is half a unit in the last printed digit of the reported
  number(s) (``CaseResults.*_quantum``), propagated through the formula that
  produced the compared value (a joint residual gets the sum of its terms'
  quanta).  A difference inside the quantum is *rounding*, not error.
* ``relative`` is the allowance beyond rounding, as a fraction of the
  quantity's own magnitude: 0.1 %.  With rounding this passes correct
  results printed to 3 significant figures (their rounding error, at most
  0.5 % of the value, lies inside the quantum) and fails a 1 % error in a
  member force printed to 4 or more figures (the difference is at least
  1 % − 0.05 %, the allowance at most 0.05 % + 0.1 %).  At 3 figures the
  print itself resolves only 0.5 %: a 1 % error is caught unless the
  rounding of the wrong number takes back up to half of it.
* ``floor`` is the allowance as a fraction of the scale of that kind of
  quantity in the case (largest |force|, largest |displacement|, largest
  reaction or load): 0.01 %.  A member that carries almost nothing is then
  judged against the structure's forces, so float noise (1e-12 of the scale)
  passes, while a wrong 1 % of the largest force does not.  It also means a
  1 % error in a member carrying less than 1 % of the largest force is
  below what the audit resolves; such members are judged on the scale.

These figures are common practice for checking hand-over results (a check
that accepts printed results but catches the smallest error that matters to
a design, about 1 %); they are not taken from a code of practice.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from dataclasses import asdict, dataclass, fields, replace
from os import PathLike
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

POLICY_FORMAT = "truss-audit-tolerances"


@dataclass(frozen=True)
class Tolerances:
    """Every tolerance the audit uses.

    Attributes
    ----------
    relative
        Allowed difference beyond rounding, as a fraction of the quantity's
        own (expected) magnitude.
    floor
        Allowed difference beyond rounding, as a fraction of the scale of that
        kind of quantity in the case (largest |force| for member forces and
        joint residuals, largest |displacement| for displacements, largest
        reaction or load for reactions).
    noise
        Differences below ``noise * scale`` count as agreement in float64
        arithmetic (the label "rounding" is kept for differences within
        ``quantum + noise * scale``).
    use_quanta
        Treat a difference within the printed rounding quantum as rounding
        (allowed).  Off, only ``relative`` and ``floor`` apply.
    ratio_match
        Diagnosis: a fitted ratio (reported / recomputed) matches a unit
        conversion or a sign reversal when it is within this relative
        distance of the table value.
    max_candidates
        Diagnosis: at most this many members, loads or supports are tried as
        the single cause (each costs one solve with the existing factor).
    """

    relative: float = 1.0e-3
    floor: float = 1.0e-4
    noise: float = 1.0e-12
    use_quanta: bool = True
    ratio_match: float = 5.0e-3
    max_candidates: int = 40

    def __post_init__(self) -> None:
        for name in ("relative", "floor", "noise", "ratio_match"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value) or value < 0:
                raise ValueError(f"tolerance {name!r} must be a finite number >= 0, not {value!r}")
            object.__setattr__(self, name, float(value))
        if not isinstance(self.use_quanta, bool):
            raise ValueError(f"tolerance 'use_quanta' must be true or false, not {self.use_quanta!r}")
        if isinstance(self.max_candidates, bool) or not isinstance(self.max_candidates, int) or self.max_candidates < 1:
            raise ValueError(f"tolerance 'max_candidates' must be an integer >= 1, not {self.max_candidates!r}")

    # ------------------------------------------------------------ the rule
    def allowed(self, expected: ArrayLike, quantum: ArrayLike, scale: float) -> NDArray[np.float64]:
        """Allowed |reported − expected| per quantity.

        ``allowed = quantum + max(relative·|expected|, floor·scale)`` (module
        docstring); ``quantum`` is ignored when ``use_quanta`` is off.
        """
        exp = np.abs(np.asarray(expected, dtype=np.float64))
        q = np.asarray(quantum, dtype=np.float64) if self.use_quanta else np.zeros_like(exp)
        return np.nan_to_num(q, nan=0.0) + np.maximum(self.relative * np.nan_to_num(exp, nan=0.0), self.floor * scale)

    def rounding_band(self, quantum: ArrayLike, scale: float) -> NDArray[np.float64]:
        """|difference| up to which a difference is explained by rounding alone: ``quantum + noise·scale``."""
        q = np.asarray(quantum, dtype=np.float64) if self.use_quanta else np.zeros(np.shape(quantum))
        return np.nan_to_num(q, nan=0.0) + self.noise * scale

    # ------------------------------------------------------- construction
    def as_dict(self) -> dict[str, Any]:
        """The tolerances as plain JSON values, for the report."""
        return asdict(self)

    @classmethod
    def names(cls) -> tuple[str, ...]:
        return tuple(f.name for f in fields(cls))

    def override(self, **changes: Any) -> Tolerances:
        """A copy with some values replaced (None values are ignored, for the CLI).  Unknown names raise."""
        unknown = sorted(set(changes) - set(self.names()))
        if unknown:
            raise ValueError(f"unknown tolerance(s) {', '.join(unknown)}; known: {', '.join(self.names())}")
        return replace(self, **{k: v for k, v in changes.items() if v is not None})

    @classmethod
    def from_policy(cls, policy: str | PathLike[str] | Mapping[str, Any]) -> Tolerances:
        """Tolerances from a small JSON policy file (or an already parsed mapping).

        The policy is either a plain object of tolerance names and values, or
        ``{"format": "truss-audit-tolerances", "version": 1, "tolerances": {...}}``.
        Names not given keep their defaults; unknown names raise ValueError.
        """
        if isinstance(policy, Mapping):
            data: Any = dict(policy)
        else:
            path = Path(policy)
            try:
                data = json.loads(path.read_text(encoding="utf-8"))
            except json.JSONDecodeError as exc:
                raise ValueError(f"{path}: not valid JSON ({exc.msg} at line {exc.lineno})") from None
        if not isinstance(data, dict):
            raise ValueError("a tolerance policy must be a JSON object")
        if "format" in data or "tolerances" in data:
            if data.get("format", POLICY_FORMAT) != POLICY_FORMAT or data.get("version", 1) != 1:
                raise ValueError(f"a tolerance policy must have format {POLICY_FORMAT!r}, version 1")
            extra = sorted(set(data) - {"format", "version", "tolerances", "description"})
            if extra:
                raise ValueError(f"unknown key(s) in the tolerance policy: {', '.join(extra)}")
            data = data.get("tolerances", {})
            if not isinstance(data, dict):
                raise ValueError("'tolerances' in a policy must be a JSON object")
        data = {k: v for k, v in data.items() if not str(k).startswith("x-")}
        empty = sorted(k for k, v in data.items() if v is None)
        if empty:
            raise ValueError(f"tolerance(s) {', '.join(empty)} given as null in the policy")
        return cls().override(**data)


__all__ = ["POLICY_FORMAT", "Tolerances"]
