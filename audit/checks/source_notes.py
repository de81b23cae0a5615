"""What the source reader said about the source, reported with the audit.

A reader of tables or of an IFC file hands over, beside the model, its notes
(:class:`audit.sources.SourceNote`): the tables, columns or entities it did
not read, and how it interpreted the file (units converted, a plane truss
detected, a model chosen among several).  This family turns each note into a
finding so that it reaches every report and nothing is ignored silently.  A
JSON source has no notes, and then this family reports nothing.

Every note carries a code registered here; a note with any other code is a
fault of the reader and crashes this family (reported as AU901, never passed).
"""

from __future__ import annotations

from audit.context import Context
from audit.findings import CheckOutcome, Finding, Severity, Status
from audit.rules import Rule

CHECK_ID = "source"

RULES = (
    Rule(
        "SR001",
        Severity.INFO,
        "part of the source was not read (a table, column or entity the contract does not name)",
        CHECK_ID,
    ),
    Rule(
        "SR002",
        Severity.INFO,
        "how the source was read: units converted, a setting taken from the source, a model picked among several",
        CHECK_ID,
    ),
    Rule(
        "SR101",
        Severity.WARNING,
        "the source describes more than a pin-jointed truss (e.g. rigid connections); it is audited as one",
        CHECK_ID,
    ),
    Rule(
        "SR102",
        Severity.WARNING,
        "values were converted between units with a factor that has no exact decimal form (rounded to 40 digits)",
        CHECK_ID,
    ),
)

_SEVERITY = {r.code: r.severity for r in RULES}


def run(ctx: Context) -> list[CheckOutcome]:
    if not ctx.source_notes:
        return []
    findings = []
    for note in ctx.source_notes:
        if note.code not in _SEVERITY:
            raise ValueError(f"the source reader gave a note with the unregistered code {note.code!r}")
        message = f"{note.place}: {note.message}" if note.place else note.message
        findings.append(
            Finding(
                code=note.code,
                severity=_SEVERITY[note.code],
                message=message,
                data=(("place", note.place),) if note.place else (),
            )
        )
    failing = any(f.severity >= Severity.ERROR for f in findings)
    return [
        CheckOutcome(
            check=CHECK_ID,
            case=None,
            status=Status.FAIL if failing else Status.PASS,
            findings=tuple(findings),
            reason=f"{len(findings)} note(s) of the source reader",
        )
    ]
