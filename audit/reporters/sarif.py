"""SARIF 2.1.0 (OASIS Static Analysis Results Interchange Format): findings as code-review annotations.

One ``run`` of the tool ``truss-audit``; its ``rules`` are the whole registry (code, summary, what the
finding establishes, how to act on it, default level).  One ``result`` per finding at or above a
severity (info by default): ``ruleId`` the finding code, ``level`` from the severity (error, warning,
info -> ``note``), the message (with the load case), and a location in the **model file**:

* a member's finding: the region of the member's JSON object;
* a node's finding along an axis: the region of that coordinate in the node's object (``"y": 3``);
  a node's finding without an axis: the node's object;
* a finding of one load case or combination only: the case's object;
* a whole-model finding, or any finding of a model that is not a neutral JSON file (tables, a
  workbook, IFC: their readers give no positions here): the file itself, with no region.

Each result also names its item as a logical location (``member 9``).  Models that could not be
read, or whose audit raised, are tool execution notifications of the one invocation, which is then
not successful.  The document is deterministic (no times, models in the order given, findings in
the engine's order), so a batch gives the same bytes however it was run.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import PurePath
from typing import Any
from urllib.parse import quote

from audit import __version__
from audit.exchange.positions import ModelPositions, Span
from audit.findings import AuditResult, Finding, Severity
from audit.rules import Rule

SCHEMA_URI = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
VERSION = "2.1.0"

#: SARIF ``level`` of each severity
LEVELS = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "note"}


@dataclass(frozen=True)
class SarifModel:
    """One audited model: its file as given on the command line, the audit and the positions in its text."""

    path: str
    result: AuditResult | None
    positions: ModelPositions | None = None
    #: for a model not audited: why (one line each: "members[3] (member '9'): ..."), reported as notifications
    problems: tuple[str, ...] = ()


def artifact_uri(path: str) -> str:
    """A URI reference for a file path: relative paths stay relative (to the working folder), '/' separated."""
    p = PurePath(path)
    text = p.as_posix()
    if p.is_absolute():
        return "file://" + quote(text, safe="/:")
    return quote(text, safe="/")


def _region(span: Span) -> dict[str, int]:
    return {
        "startLine": span.line,
        "startColumn": span.column,
        "endLine": span.end_line,
        "endColumn": span.end_column,
    }


def _place(f: Finding, positions: ModelPositions | None) -> tuple[Span | None, str | None]:
    """The span a finding points at, and the name of its item (None for the whole model)."""
    loc = f.location
    if loc.member is not None:
        return (positions.members.get(loc.member) if positions else None), f"member {loc.member}"
    if loc.node is not None:
        name = f"node {loc.node}" + (f" {loc.axis}" if loc.axis else "")
        return (positions.node(loc.node, loc.axis) if positions else None), name
    if f.case is not None:
        return (positions.cases.get(f.case) if positions else None), f"case {f.case}"
    return None, None


def _result(f: Finding, model: SarifModel, uri: str, rule_index: Mapping[str, int]) -> dict[str, Any]:
    span, name = _place(f, model.positions)
    physical: dict[str, Any] = {"artifactLocation": {"uri": uri}}
    if span is not None:
        physical["region"] = _region(span)
    location: dict[str, Any] = {"physicalLocation": physical}
    if name is not None:
        location["logicalLocations"] = [{"name": name, "kind": "object"}]
    text = f.message
    if f.case is not None and f"case {f.case}" not in text and f"'{f.case}'" not in text:
        text = f"{text} (case {f.case})"
    out: dict[str, Any] = {
        "ruleId": f.code,
        "level": LEVELS[f.severity],
        "message": {"text": text},
        "locations": [location],
    }
    if f.code in rule_index:
        out["ruleIndex"] = rule_index[f.code]
    props = {
        k: v
        for k, v in (
            ("case", f.case),
            ("reported", f.reported),
            ("expected", f.expected),
            ("difference", f.difference),
            ("tolerance", f.tolerance),
            ("units", f.units),
        )
        if v is not None and (not isinstance(v, float) or math.isfinite(v))
    }
    if props:
        out["properties"] = props
    return out


def _rule(rule: Rule) -> dict[str, Any]:
    help_text = rule.action + (f" Example finding: {rule.example}" if rule.example else "")
    return {
        "id": rule.code,
        "shortDescription": {"text": rule.summary},
        "fullDescription": {"text": rule.establishes or rule.summary},
        "help": {"text": help_text or rule.summary},
        "defaultConfiguration": {"level": LEVELS[rule.severity]},
        "properties": {"check": rule.family},
    }


def render(models: Sequence[SarifModel], registry: Mapping[str, Rule], min_severity: Severity = Severity.INFO) -> str:
    """The SARIF 2.1.0 document for ``models`` (one run), as JSON text ending in a newline."""
    rules = list(registry.values())
    rule_index = {r.code: i for i, r in enumerate(rules)}
    results: list[dict[str, Any]] = []
    notifications: list[dict[str, Any]] = []
    artifacts: list[dict[str, Any]] = []
    for model in models:
        uri = artifact_uri(model.path)
        artifacts.append({"location": {"uri": uri}})
        if model.result is None:
            for line in model.problems or ("the model was not audited",):
                notifications.append(
                    {
                        "level": "error",
                        "message": {"text": line},
                        "locations": [{"physicalLocation": {"artifactLocation": {"uri": uri}}}],
                    }
                )
            continue
        for f in model.result.findings:
            if f.severity >= min_severity:
                results.append(_result(f, model, uri, rule_index))
    run: dict[str, Any] = {
        "tool": {
            "driver": {
                "name": "truss-audit",
                "version": __version__,
                "semanticVersion": __version__,
                "rules": [_rule(r) for r in rules],
            }
        },
        "invocations": [
            {
                "executionSuccessful": not notifications
                and all(m.result is not None and not m.result.crashed for m in models),
                "toolExecutionNotifications": notifications,
            }
        ],
        "artifacts": artifacts,
        "columnKind": "unicodeCodePoints",
        "results": results,
    }
    doc = {"$schema": SCHEMA_URI, "version": VERSION, "runs": [run]}
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


__all__ = ["LEVELS", "SCHEMA_URI", "SarifModel", "artifact_uri", "render"]
