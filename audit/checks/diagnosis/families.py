"""The registry of cause families, like :data:`audit.engine.CHECK_MODULES` for the checks.

Every module here declares its codes in ``RULES``; those in ``FIT_FAMILIES`` also give the multi-cause fit
their candidates, ``candidates(problem) -> list[Cause]`` (:mod:`audit.checks.diagnosis.base`).  A new cause
is a new module added to these tuples, and a data case that raises its code (DEVELOPERS.md).
"""

from __future__ import annotations

from types import ModuleType

from audit.checks.diagnosis import axes, inclined, loads, members, nonlinear, scales, springs, supports, table

#: modules whose candidates join the multi-cause fit, in the order they are generated
FIT_FAMILIES: tuple[ModuleType, ...] = (members, loads, supports, inclined, springs, table)
#: every module with RULES (the axis and scale pre-steps, core's DX001 and the single causes of non-linear
#: models in ``nonlinear`` are not fit families)
RULE_FAMILIES: tuple[ModuleType, ...] = (scales, axes, *FIT_FAMILIES, nonlinear)
