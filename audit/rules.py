"""The registry of finding codes.

Every code a check may raise is declared by its check module in a ``RULES``
tuple; this module collects them from the explicit list of check modules in
:mod:`audit.engine` and validates them (unique, well formed).  Each record also carries
what a finding with the code establishes, an example finding and how to act on
it (from :mod:`audit.rule_guide`); ``truss-audit explain`` and the SARIF rules
section are generated from here; nothing is kept by hand.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, replace

from audit.findings import Severity
from audit.rule_guide import GUIDE

CODE_PATTERN = re.compile(r"^[A-Z]{2}\d{3}$")


@dataclass(frozen=True)
class Rule:
    code: str  #: two capital letters (the family) and three digits, e.g. "EQ101"
    severity: Severity  #: default severity of a finding with this code
    summary: str  #: one line, shown by ``truss-audit explain``
    family: str  #: the check module that raises it
    establishes: str = ""  #: what a finding with this code establishes (filled from audit.rule_guide)
    example: str = ""  #: an example finding's message (invented, for illustration)
    action: str = ""  #: how to act on the finding


#: codes owned by the engine itself
ENGINE_RULES = (
    Rule("AU901", Severity.ERROR, "a check crashed; its result is unknown and the audit fails", "engine"),
    Rule("AU902", Severity.ERROR, "the model could not be solved, so no recomputation was possible", "engine"),
)


def collect(rule_sets: tuple[tuple[Rule, ...], ...]) -> dict[str, Rule]:
    """Merge rule tuples into one registry keyed by code; reject duplicates and malformed codes; attach the guide."""
    registry: dict[str, Rule] = {}
    for rules in rule_sets:
        for rule in rules:
            if not CODE_PATTERN.match(rule.code):
                raise ValueError(f"malformed finding code {rule.code!r} in {rule.family}")
            if rule.code in registry:
                raise ValueError(
                    f"finding code {rule.code} declared twice ({registry[rule.code].family}, {rule.family})"
                )
            guide = GUIDE.get(rule.code)  # a code without an entry is caught by tests/test_rules.py
            if guide is not None:
                rule = replace(rule, establishes=guide[0], example=guide[1], action=guide[2])
            registry[rule.code] = rule
    return dict(sorted(registry.items()))
