"""The terminal report: plain text readable at 100 columns, ANSI colour only when asked.

Sections, in order: header (verdict first, model summary, inputs), stability in
words, each check per case, the worst discrepancies as a table, other
findings, diagnoses, tolerances used, precision and proof, the caution.
"""

from __future__ import annotations

import re
import textwrap
from collections.abc import Mapping
from typing import Any

from tabulate import DataRow, Line, TableFormat, tabulate

from audit.findings import AuditResult, CheckOutcome, Finding, Severity, Status
from audit.model import Model
from audit.reporters import _shared

WIDTH = 100
#: check × case rows shown one by one; beyond this, the passing rows of each check are merged
MAX_CHECK_ROWS = 60
#: findings without numbers listed at most
MAX_OTHER = 30

_ANSI = {"red": "\x1b[1;31m", "green": "\x1b[1;32m", "yellow": "\x1b[33m", "dim": "\x1b[2m", "bold": "\x1b[1m"}
_RESET = "\x1b[0m"


class _Paint:
    def __init__(self, on: bool) -> None:
        self.on = on

    def __call__(self, text: str, style: str) -> str:
        return f"{_ANSI[style]}{text}{_RESET}" if self.on and text else text

    def status(self, s: Status) -> str:
        word = _shared.STATUS_WORDS[s]
        return self(word, {Status.PASS: "green", Status.FAIL: "red", Status.NOT_RUN: "yellow"}[s])

    def severity(self, sev: Severity, text: str) -> str:
        return self(text, {Severity.ERROR: "red", Severity.WARNING: "yellow", Severity.INFO: "dim"}[sev])


def _clip(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 1] + "…"


def _wrap(text: str, indent: str = "  ", width: int = WIDTH, hang: str = "  ") -> list[str]:
    return textwrap.wrap(text, width, initial_indent=indent, subsequent_indent=indent + hang) or [indent]


def _heading(title: str, paint: _Paint) -> list[str]:
    return ["", paint(title.upper(), "bold"), "-" * len(title)]


def _header(result: AuditResult, paint: _Paint) -> list[str]:
    verdict = _shared.verdict_line(result)
    colour = "green" if result.verdict == "pass" else "red"
    lines = (
        [paint(verdict, colour)] if len(verdict) <= WIDTH else [paint(v, colour) for v in textwrap.wrap(verdict, WIDTH)]
    )
    lines.append(f"truss-audit {result.version or '(version unknown)'}: audit of '{result.title}'")
    lines += _wrap("Model: " + _shared.model_sentence(result.model_summary), "")
    for name, sha in result.inputs:
        lines.append(f"Input: {_clip(_shared.file_name(name), 28)}  sha256 {sha}")
    return lines


def _check_rows(result: AuditResult, paint: _Paint, note_width: int = 40) -> list[list[str]]:
    rows: list[list[str]] = []
    merge = len(result.outcomes) > MAX_CHECK_ROWS
    passing: dict[str, list[CheckOutcome]] = {}
    for o in result.outcomes:
        if merge and o.status is Status.PASS and not o.findings:
            passing.setdefault(o.check, []).append(o)
            continue
        note = _shared.outcome_note(o, result.crashed)
        rows.append(
            [
                _clip(o.check, 18),
                _clip(_shared.case_label(o.case), 16),
                paint.status(o.status),
                _shared.count_text(_shared.outcome_counts(o)),
                "\n".join(textwrap.wrap(note, note_width)) if note else "",
            ]
        )
    for check, group in passing.items():
        rows.append([check, f"{len(group)} cases", paint.status(Status.PASS), "no findings", ""])
    return rows


#: cell widths of the discrepancy table (where, case, quantity, verdict) and column gap, tightened until it fits
_CLIPS = ((16, 12, 20, 24, 2), (16, 12, 20, 24, 1), (14, 10, 16, 18, 1), (12, 8, 12, 16, 1), (10, 6, 10, 12, 1))
_ALIGN = ("left",) * 4 + ("right",) * 4 + ("left",)
_HEADERS = ["code", "where", "case", "quantity", "reported", "expected", "diff", "tol", "verdict"]


def _check_table(result: AuditResult, paint: _Paint) -> list[str]:
    """The check × case table, indented; the note column narrows until the table fits :data:`WIDTH`."""
    lines: list[str] = []
    for note_width in (40, 32, 24, 16):
        rows = _check_rows(result, paint, note_width)
        if not rows:
            return []
        table = tabulate(rows, headers=["check", "case", "status", "findings", "note"], tablefmt="simple")
        lines = ["  " + line.rstrip() for line in table.splitlines()]
        if max(len(_strip_ansi(line)) for line in lines) <= WIDTH:
            break
    return lines


def _table_format(gap: int) -> TableFormat:
    rule = Line("", "-", " " * gap, "")
    return TableFormat(None, rule, None, None, DataRow("", " " * gap, ""), DataRow("", " " * gap, ""), 0, None)


def _discrepancy_table(findings: list[Finding], paint: _Paint) -> list[str]:
    """The table, indented, at most :data:`WIDTH` columns wide (cells clipped with … as needed)."""
    lines: list[str] = []
    for where, case, quantity, note, gap in _CLIPS:
        rows = [
            [
                f.code,
                _clip(f.location.label(), where),
                _clip(_shared.case_label(f.case), case),
                _clip(_shared.quantity_of(f), quantity),
                _shared.fmt_number(f.reported, 5),
                _shared.fmt_number(f.expected, 5),
                _shared.fmt_number(_shared.difference_of(f), 3),
                _shared.fmt_number(f.tolerance, 3),
                paint.severity(f.severity, _clip(_shared.rounding_note(f), note)),
            ]
            for f in findings
        ]
        table = tabulate(rows, headers=_HEADERS, tablefmt=_table_format(gap), disable_numparse=True, colalign=_ALIGN)
        lines = ["  " + line.rstrip() for line in table.splitlines()]
        if max(len(_strip_ansi(line)) for line in lines) <= WIDTH:
            break
    return lines


def _strip_ansi(text: str) -> str:
    return re.sub(r"\x1b\[[0-9;]*m", "", text)


def _finding_line(f: Finding, paint: _Paint) -> list[str]:
    where = f.location.label()
    case = f", case {f.case}" if f.case is not None else ""
    head = f"{paint.severity(f.severity, f.severity.label)} {f.code} {where}{case}: "
    lines = textwrap.wrap(head + f.message, WIDTH, initial_indent="  - ", subsequent_indent="      ")
    extra = _shared.extra_data(f)
    if extra:
        lines += textwrap.wrap(
            ", ".join(f"{k} = {v}" for k, v in extra), WIDTH, initial_indent="      ", subsequent_indent="      "
        )
    return lines


def _pairs(pairs: list[tuple[str, str]], empty: str) -> list[str]:
    if not pairs:
        return [f"  {empty}"]
    out = []
    for k, v in pairs:
        out += textwrap.wrap(f"{k}: {v}", WIDTH, initial_indent="  ", subsequent_indent="      ")
    return out


def render(
    result: AuditResult,
    model: Model | None = None,
    context: Mapping[str, Any] | None = None,
    *,
    colour: bool | None = None,
) -> str:
    """The terminal report.

    Parameters
    ----------
    result
        What the audit established.
    model
        Not needed for text; accepted so that every reporter has one signature.
    context
        Optional: ``max_rows`` (rows of the discrepancy table, default 20) and
        ``colour``.
    colour
        ANSI colour; off unless asked (here or as ``context["colour"]``).
    """
    on = bool(colour if colour is not None else (context or {}).get("colour", False))
    paint = _Paint(on)
    out = _header(result, paint)

    out += _heading("Stability", paint)
    for sentence in _shared.stability_sentences(result.stability):
        out += _wrap(sentence)
    for k, v in _shared.stability_extras(result.stability):
        out += _wrap(f"{k}: {v}")

    out += _heading("Checks", paint)
    tot = _shared.status_totals(result)
    out.append(f"  {tot['pass']} passed, {tot['fail']} failed, {tot['not_run']} not run")
    out += _check_table(result, paint)

    limit = _shared.max_rows(context)
    disc = _shared.discrepancies(result)
    title = "Worst discrepancies"
    out += _heading(title, paint)
    if disc:
        shown = disc[:limit]
        out.append(f"  {len(shown)} of {len(disc)}, worst first (difference = reported − expected)")
        out += _discrepancy_table(shown, paint)
    else:
        out.append("  none: no finding compares a reported number with a recomputed one")

    other = _shared.other_findings(result)
    if other:
        out += _heading("Other findings", paint)
        for f in other[:MAX_OTHER]:
            out += _finding_line(f, paint)
        if len(other) > MAX_OTHER:
            out.append(f"  … and {len(other) - MAX_OTHER} more (see the JSON report)")

    out += _heading("Diagnoses", paint)
    diag = _shared.diagnoses(result)
    if diag:
        for f in diag[:MAX_OTHER]:
            out += _finding_line(f, paint)
        if len(diag) > MAX_OTHER:
            out.append(f"  … and {len(diag) - MAX_OTHER} more (see the JSON report)")
    else:
        out.append("  none")

    out += _heading("Tolerances used", paint)
    out += _pairs(_shared.tolerance_lines(result.tolerances), "none stated")
    out += _heading("Precision and proof", paint)
    out += _pairs(_shared.precision_lines(result.precision), "not reported")
    out += _heading("Caution", paint)
    out += _wrap(_shared.CAUTION, hang="")
    return "\n".join(out) + "\n"


__all__ = ["render"]
