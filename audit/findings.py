"""Findings, check outcomes and the audit result: plain immutable records.

A check returns a :class:`CheckOutcome` per (check id, case): its status and
the findings it raised.  Reporters read these fields; they never parse
messages.  The registry of codes lives in :mod:`audit.rules`.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass, field
from typing import Any


class Severity(enum.IntEnum):
    INFO = 10
    WARNING = 20
    ERROR = 30

    @property
    def label(self) -> str:
        return self.name.lower()

    @classmethod
    def parse(cls, text: str) -> Severity:
        try:
            return cls[text.upper()]
        except KeyError:
            raise ValueError(f"unknown severity {text!r}: use error, warning or info") from None


class Status(enum.Enum):
    PASS = "pass"
    FAIL = "fail"
    NOT_RUN = "not_run"


@dataclass(frozen=True)
class Location:
    """Where a finding applies; all fields optional (none = the whole model)."""

    node: str | None = None
    member: str | None = None
    axis: str | None = None  #: "x", "y", "z" (with node)

    def as_dict(self) -> dict[str, str]:
        return {k: v for k, v in (("node", self.node), ("member", self.member), ("axis", self.axis)) if v is not None}

    def label(self) -> str:
        if self.member is not None:
            return f"member {self.member}"
        if self.node is not None:
            return f"node {self.node}" + (f" {self.axis}" if self.axis else "")
        return "model"


@dataclass(frozen=True)
class Finding:
    code: str
    severity: Severity
    message: str
    case: str | None = None
    location: Location = field(default_factory=Location)
    reported: float | None = None
    expected: float | None = None
    difference: float | None = None
    tolerance: float | None = None
    units: str | None = None
    #: any further structured numbers (e.g. an implied EA, a scale factor)
    data: tuple[tuple[str, Any], ...] = ()

    def data_dict(self) -> dict[str, Any]:
        return dict(self.data)


@dataclass(frozen=True)
class CheckOutcome:
    check: str  #: check id, e.g. "equilibrium"
    case: str | None  #: load case / combination id, None for model-wide checks
    status: Status
    findings: tuple[Finding, ...] = ()
    reason: str = ""  #: why not run, or a one-line summary
    #: counts and figures the check wants shown (e.g. quantities compared)
    summary: tuple[tuple[str, Any], ...] = ()


@dataclass(frozen=True)
class AuditResult:
    """Everything an audit established.  No printing, no exit codes."""

    title: str
    outcomes: tuple[CheckOutcome, ...]
    fail_on: Severity
    tolerances: dict[str, Any]
    model_summary: dict[str, Any]
    stability: dict[str, Any]
    precision: dict[str, Any]
    crashed: tuple[str, ...] = ()  #: ids of checks that raised
    inputs: tuple[tuple[str, str], ...] = ()  #: (file name, sha256)
    version: str = ""

    @property
    def findings(self) -> tuple[Finding, ...]:
        return tuple(f for o in self.outcomes for f in o.findings)

    @property
    def verdict(self) -> str:
        failing = any(f.severity >= self.fail_on for f in self.findings)
        return "fail" if failing or self.crashed else "pass"
