"""What every cause module of the diagnosis shares: the check id, and the shape of a candidate cause for
the multi-cause fit (:mod:`audit.checks.diagnosis.fit`).

A cause is a *predicted change of the reported numbers*.  On the rows the fit works on
(:class:`audit.checks.diagnosis.fit.Rows`) it is

* ``cols``: an (n_rows, p) matrix, the change per unit of each of its p parameters (a load factor, the
  extra force of a member, a reaction), fitted by least squares;
* ``fixed``: an (n_rows,) change with no parameter (two labels swapped, an axis reversed);
* ``takes``: a row the cause takes over whole (an isolated slip: one reported number wrong).

Its full-size effect (``apply``) is what the exact check of a set of causes uses, and ``describe`` words
the finding from the fitted parameters.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from audit.findings import Location
from audit.model import FloatArray

CHECK_ID = "diagnosis"

#: the simplicity ranks of the rule that chooses between sets of causes that explain the numbers equally:
#: fewer causes first; then the sum of the ranks (a cause of the model -- one member, one load, one support,
#: one spring -- before a table mistake, and a table mistake before a slip of one number); then the fit
RANK_STRUCTURAL = 1
RANK_TABLE = 2
RANK_SLIP = 3


@dataclass
class Cause:
    """One candidate cause of the differences (see the module docstring)."""

    code: str
    location: Location
    rank: int
    key: tuple[Any, ...]  #: identity: two causes with the same key are the same cause
    apply: Callable[..., Any]  #: (Prediction, θ) -> Prediction, full size
    describe: Callable[..., tuple[str, tuple[tuple[str, Any], ...]]]  #: θ -> (message, data)
    cols: FloatArray | None = None
    fixed: FloatArray | None = None
    takes: int | None = None
    #: θ -> False when the fitted parameters make no physical sense (a negative EA, a mechanism)
    valid: Callable[..., bool] = field(default=lambda _t: True)
    #: θ -> True when the parameter is a value a hand-off mistake typically produces (0, 2, ...): such a cause
    #: beats a slip that explains the same single number
    plain: Callable[..., bool] = field(default=lambda _t: False)

    #: θ -> the code, when the fitted value decides it (an EA ratio of 0 is a member left out)
    code_of: Callable[..., str] | None = None

    def code_for(self, theta: FloatArray) -> str:
        return self.code if self.code_of is None else self.code_of(theta)

    @property
    def n_params(self) -> int:
        return 0 if self.cols is None else int(self.cols.shape[1])
