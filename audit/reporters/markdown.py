"""Markdown for pasting into a review record: verdict, summary table, worst discrepancies, diagnoses, caution."""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from audit.findings import AuditResult, Finding
from audit.model import Model
from audit.reporters import _shared

_SPECIAL = re.compile(r"([\\`*_{}\[\]<>|~])")


def esc(text: object) -> str:
    """Text made literal in Markdown (and in a table cell): specials backslashed, newlines as spaces."""
    return _SPECIAL.sub(r"\\\1", " ".join(str(text).split()))


def _table(headers: list[str], rows: list[list[str]], right: set[int] = frozenset()) -> list[str]:  # type: ignore[assignment]
    out = [
        "| " + " | ".join(headers) + " |",
        "|" + "|".join("---:" if i in right else "---" for i in range(len(headers))) + "|",
    ]
    out += ["| " + " | ".join(row) + " |" for row in rows]
    return out


def _finding_item(f: Finding) -> str:
    where = esc(f.location.label()) + (f", case {esc(f.case)}" if f.case is not None else "")
    extra = _shared.extra_data(f)
    tail = (" (" + ", ".join(f"{esc(k)} = {esc(v)}" for k, v in extra) + ")") if extra else ""
    return f"- **{f.code}** ({f.severity.label}) {where}: {esc(f.message)}{tail}"


def render(result: AuditResult, model: Model | None = None, context: Mapping[str, Any] | None = None) -> str:
    """The Markdown report.  ``context["max_rows"]`` limits the discrepancy table (default 20)."""
    out = [f"## truss-audit: {esc(result.title)}", "", f"**{esc(_shared.verdict_line(result))}**", ""]
    out.append(f"Model: {esc(_shared.model_sentence(result.model_summary))}.")
    out.append("")
    out.append("Stability: " + " ".join(esc(s) for s in _shared.stability_sentences(result.stability)))
    out.append("")
    tot = _shared.status_totals(result)
    out.append(f"### Checks ({tot['pass']} passed, {tot['fail']} failed, {tot['not_run']} not run)")
    out.append("")
    rows = [
        [
            esc(o.check),
            esc(_shared.case_label(o.case)),
            _shared.STATUS_WORDS[o.status],
            esc(_shared.count_text(_shared.outcome_counts(o))),
            esc(_shared.outcome_note(o, result.crashed)),
        ]
        for o in result.outcomes
    ]
    out += _table(["check", "case", "status", "findings", "note"], rows) if rows else ["No check ran."]
    out.append("")

    disc = _shared.discrepancies(result)
    limit = _shared.max_rows(context)
    out.append("### Worst discrepancies")
    out.append("")
    if disc:
        shown = disc[:limit]
        out.append(f"{len(shown)} of {len(disc)}, worst first; difference = reported − expected.")
        out.append("")
        rows = [
            [
                f.code,
                esc(f.location.label()),
                esc(_shared.case_label(f.case)),
                esc(_shared.quantity_of(f)),
                _shared.fmt_number(f.reported),
                _shared.fmt_number(f.expected),
                _shared.fmt_number(_shared.difference_of(f), 4),
                _shared.fmt_number(f.tolerance, 4),
                esc(_shared.rounding_note(f)),
            ]
            for f in shown
        ]
        headers = ["code", "where", "case", "quantity", "reported", "expected", "difference", "tolerance", "verdict"]
        out += _table(headers, rows, right={4, 5, 6, 7})
    else:
        out.append("None: no finding compares a reported number with a recomputed one.")
    out.append("")

    other = _shared.other_findings(result)
    if other:
        out += ["### Other findings", ""]
        out += [_finding_item(f) for f in other[:limit]]
        if len(other) > limit:
            out.append(f"- … and {len(other) - limit} more (see the JSON report)")
        out.append("")
    out += ["### Diagnoses", ""]
    diag = _shared.diagnoses(result)
    out += [_finding_item(f) for f in diag[:limit]] or ["None."]
    if len(diag) > limit:
        out.append(f"- … and {len(diag) - limit} more (see the JSON report)")
    out.append("")
    tol = ", ".join(f"{esc(k)} = {esc(v)}" for k, v in _shared.tolerance_lines(result.tolerances)) or "none stated"
    prec = ", ".join(f"{esc(k)}: {esc(v)}" for k, v in _shared.precision_lines(result.precision)) or "not reported"
    out += [f"Tolerances: {tol}.", "", f"Precision and proof: {prec}.", ""]
    inputs = "; ".join(f"{esc(_shared.file_name(n))} (sha256 `{sha}`)" for n, sha in result.inputs)
    out.append(f"truss-audit {esc(result.version)}" + (f"; inputs: {inputs}" if inputs else "") + ".")
    out += ["", f"> {esc(_shared.CAUTION)}", ""]
    return "\n".join(out)


__all__ = ["esc", "render"]
