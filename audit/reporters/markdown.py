"""Markdown for pasting into a review record: the terminal report's sections, condensed the same way.

Verdict, model and inputs, stability in words, one table row per check and
case, the worst discrepancies, diagnoses, other findings (infos grouped by
code), tolerances, precision and proof, the caution.  Everything left out is
in the JSON report, and the text says so where it leaves something out.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from audit.findings import AuditResult, Finding, Severity, Status
from audit.model import Model
from audit.reporters import _condense, _explain, _shared

_SPECIAL = re.compile(r"([\\`*_{}\[\]<>|~])")
#: width of the note digest in the checks table
NOTE_WIDTH = 60
#: warnings and errors without numbers listed one by one, at most
MAX_LISTED = 12
#: diagnoses shown, at most
MAX_DIAGNOSES = 10


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


def _where(f: Finding, also: list[str] | None = None) -> str:
    where = f.location.label()
    parts = [esc(where)] if where != "model" else []
    if f.case is not None:
        parts.append(f"case {esc(f.case)}")
    text = ", ".join(parts)
    if also:
        text += f" (also {esc(', '.join(also))})"
    return text


def _finding_item(f: Finding, also: list[str] | None = None) -> str:
    where = _where(f, also)
    return f"- **{f.code}** ({f.severity.label}){' ' + where if where else ''}: {esc(_condense.strip_location(f))}"


def _stability(result: AuditResult) -> list[str]:
    out = []
    for head, subs in _condense.stability_items(result.stability):
        out.append(f"- {esc(head)}")
        out += [f"  {esc(sub)}" if re.match(r"\d+\. ", sub) else f"  - {esc(sub)}" for sub in subs]
    return out


def _checks(result: AuditResult) -> list[str]:
    tot = _shared.status_totals(result)
    out = [f"### Checks ({tot['pass']} passed, {tot['fail']} failed, {tot['not_run']} not run)", ""]
    rows = []
    for o, check, case, merged in _condense.outcome_rows(result.outcomes):
        if o is None:
            rows.append([esc(check), esc(case), "", "", "", "", esc(merged)])
            continue
        c = _shared.outcome_counts(o)
        if o.status is Status.NOT_RUN or o.check in result.crashed:
            note = o.reason or ("the check crashed" if o.check in result.crashed else "no reason given")
        else:
            note = _condense.outcome_digest(o, NOTE_WIDTH, result.crashed)
        rows.append(
            [
                esc(check),
                esc(case),
                _shared.STATUS_WORDS[o.status],
                *(str(c[s.label]) if c[s.label] else "" for s in sorted(Severity, reverse=True)),
                esc(note),
            ]
        )
    headers = ["check", "case", "status", "errors", "warnings", "infos", "note"]
    out += _table(headers, rows, right={3, 4, 5}) if rows else ["No check ran."]
    return [*out, ""]


def _discrepancies(result: AuditResult, limit: int) -> list[str]:
    out = ["### Worst discrepancies", ""]
    disc = _shared.discrepancies(result)
    if not disc:
        return [*out, "None: no finding compares a reported number with a recomputed one.", ""]
    shown = disc[:limit]
    out += [f"{len(shown)} of {len(disc)}, worst first; difference = reported − expected; tolerance = allowed.", ""]
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
    rest = _condense.not_shown(disc, shown)
    if rest:
        out += ["", esc(rest)]
    return [*out, ""]


def _lead(result: AuditResult) -> list[str]:
    """The root cause in plain words, as a quotation right under the verdict (nothing for a clean hand-off)."""
    out: list[str] = []
    for line in _explain.lead(result):
        if line[:1].isupper():
            out += ([">"] if out else []) + [f"> **Root cause.** {esc(line)}" if not out else f"> {esc(line)}"]
        else:
            out.append(f"> - {esc(line)}")
    return [*out, ""] if out else []


def _diagnoses(result: AuditResult) -> list[str]:
    out = ["### Diagnoses", ""]
    groups = _condense.diagnosis_groups(_shared.diagnoses(result))
    out += [_finding_item(f, also) for f, also in groups[:MAX_DIAGNOSES]] or ["None."]
    if len(groups) > MAX_DIAGNOSES:
        out.append(f"- … and {len(groups) - MAX_DIAGNOSES} more ({_condense.SEE_JSON})")
    return [*out, ""]


def _other(result: AuditResult) -> list[str]:
    other = _shared.other_findings(result)
    if not other:
        return []
    out = ["### Other findings", ""]
    loud = [f for f in other if f.severity > Severity.INFO]
    infos = [f for f in other if f.severity is Severity.INFO]
    shown, left = _condense.listed_findings(loud, total=MAX_LISTED)
    out += [_finding_item(f) for f in shown]
    if left:
        n = sum(k for _, k in left)
        out.append(f"- … and {n} more ({esc(', '.join(f'{c} ×{k}' for c, k in left))}; {_condense.SEE_JSON})")
    if infos:
        if shown or left:
            out.append("")
        out += [f"{_condense.plural(len(infos), 'info')}, by code:", ""]
        out += _table(
            ["code", "count", "what"],
            [[code, str(n), esc(text)] for code, n, text, _ in _condense.info_groups(infos)],
            right={1},
        )
    return [*out, ""]


def _precision(result: AuditResult) -> list[str]:
    out = ["### Precision and proof", ""]
    out += [f"- {esc(item)}" for item in _condense.precision_items(result.precision)]
    rows = _condense.precision_case_rows(result.precision)
    if rows:
        headers = [esc(h) for h in _condense.PRECISION_CASE_HEADERS]
        out += ["", *_table(headers, [[esc(c) for c in r] for r in rows], right={2, 4, 5})]
        out += ["", esc(_condense.PRECISION_CASE_LEGEND)]
    return [*out, ""]


def render(result: AuditResult, model: Model | None = None, context: Mapping[str, Any] | None = None) -> str:
    """The Markdown report.  ``context["max_rows"]`` limits the discrepancy table (default 20)."""
    out = [f"## truss-audit: {esc(result.title)}", "", f"**{esc(_shared.verdict_line(result))}**", ""]
    out += _lead(result)
    out.append(f"Model: {esc(_shared.model_sentence(result.model_summary))}.")
    out.append("")
    inputs = "; ".join(f"{esc(_shared.file_name(n))} (sha256 `{sha}`)" for n, sha in result.inputs)
    out.append(f"truss-audit {esc(result.version)}" + (f"; inputs: {inputs}" if inputs else "") + ".")
    out += ["", "### Stability", "", *_stability(result), ""]
    out += _checks(result)
    out += _discrepancies(result, _shared.max_rows(context))
    out += _diagnoses(result)
    out += _other(result)
    out += ["### Tolerances used", ""]
    out += [f"- {esc(item)}" for item in _condense.tolerance_items(result.tolerances)]
    out.append("")
    out += _precision(result)
    out += [f"> {esc(_shared.CAUTION)}", ""]
    return "\n".join(out)


__all__ = ["esc", "render"]
