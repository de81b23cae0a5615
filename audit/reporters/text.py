"""The terminal report: one or two screens at 100 columns, ANSI colour only when asked.

Sections, in order: header (verdict first, model summary, input checksums),
stability in words, each check per case in one line, the worst discrepancies
as a table, diagnoses, other findings (infos grouped by code), tolerances
used, precision and proof, the caution.  Everything left out is in the JSON
report (``--json``), and the report says so where it leaves something out.
"""

from __future__ import annotations

import re
import textwrap
from collections.abc import Mapping
from typing import Any

from audit.findings import AuditResult, CheckOutcome, Finding, Severity, Status
from audit.model import Model
from audit.reporters import _condense, _explain, _shared

WIDTH = 100
#: warnings and errors without numbers listed one by one, at most (and at most 4 of one code)
MAX_LISTED = 12
#: diagnoses shown, at most
MAX_DIAGNOSES = 10
#: lines the root-cause explanation may take under the verdict
MAX_LEAD_LINES = 10
#: lines a finding's message may take before it is cut
MAX_MESSAGE_LINES = 3

_ANSI = {"red": "\x1b[1;31m", "green": "\x1b[1;32m", "yellow": "\x1b[33m", "dim": "\x1b[2m", "bold": "\x1b[1m"}
_RESET = "\x1b[0m"
_SEVERITY_COLOUR = {Severity.ERROR: "red", Severity.WARNING: "yellow", Severity.INFO: "dim"}


class _Paint:
    def __init__(self, on: bool) -> None:
        self.on = on

    def __call__(self, text: str, style: str) -> str:
        return f"{_ANSI[style]}{text}{_RESET}" if self.on and text else text

    def status(self, s: Status) -> str:
        word = _shared.STATUS_WORDS[s]
        return self(word, {Status.PASS: "green", Status.FAIL: "red", Status.NOT_RUN: "yellow"}[s])

    def severity(self, sev: Severity, text: str) -> str:
        return self(text, _SEVERITY_COLOUR[sev])


def _clip(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 1] + "…"


def _wrap(text: str, indent: str = "  ", width: int = WIDTH, hang: str = "  ") -> list[str]:
    return textwrap.wrap(text, width, initial_indent=indent, subsequent_indent=indent + hang) or [indent]


def _wrap_capped(text: str, indent: str, hang: str, max_lines: int = MAX_MESSAGE_LINES) -> list[str]:
    """``text`` wrapped; beyond ``max_lines`` the last line is cut with ``…``."""
    lines = _wrap(text, indent, hang=hang)
    if len(lines) <= max_lines:
        return lines
    last = lines[max_lines - 1]
    return [*lines[: max_lines - 1], _clip(last + " " * WIDTH, WIDTH - 1).rstrip() + "…"]


def _heading(title: str, paint: _Paint) -> list[str]:
    return ["", paint(title.upper(), "bold"), "-" * len(title)]


def _strip_ansi(text: str) -> str:
    return re.sub(r"\x1b\[[0-9;]*m", "", text)


def _table(headers: list[str], rows: list[list[str]], align: str, gap: int = 2) -> list[str]:
    """A plain table, indented by two spaces: header, dashes, rows; ``align`` holds ``l``/``r`` per column.

    A cell may hold several lines (``\\n``); widths ignore ANSI colour codes.
    """
    split = [[cell.split("\n") for cell in row] for row in [headers, *rows]]
    widths = [max(len(_strip_ansi(line)) for row in split for line in row[k]) for k in range(len(headers))]
    sep = " " * gap

    def fit(text: str, k: int) -> str:
        pad = " " * (widths[k] - len(_strip_ansi(text)))
        return pad + text if align[k] == "r" else text + pad

    out = []
    for n, row in enumerate(split):
        for i in range(max(len(cell) for cell in row)):
            out.append("  " + sep.join(fit(cell[i] if i < len(cell) else "", k) for k, cell in enumerate(row)).rstrip())
        if n == 0:
            out.append("  " + sep.join("-" * w for w in widths))
    return out


# ------------------------------------------------------------------- header
def _header(result: AuditResult, paint: _Paint) -> list[str]:
    verdict = _shared.verdict_line(result)
    colour = "green" if result.verdict == "pass" else "red"
    lines = [paint(v, colour) for v in textwrap.wrap(verdict, WIDTH)]
    lines += _lead(result, paint)
    lines.append(f"truss-audit {result.version or '(version unknown)'}: audit of '{result.title}'")
    lines += _wrap("Model: " + _shared.model_sentence(result.model_summary), "")
    if result.inputs:
        names = [_clip(_shared.file_name(name), WIDTH - 6 - 64) for name, _ in result.inputs]
        width = max(len(n) for n in names)
        lines.append("Inputs and their sha256:")
        lines += [f"  {n.ljust(width)}  {sha}" for n, (_, sha) in zip(names, result.inputs, strict=True)]
    return lines


def _lead(result: AuditResult, paint: _Paint) -> list[str]:
    """The root cause in plain words, right under the verdict (nothing for a clean hand-off); at most
    ``MAX_LEAD_LINES`` lines, the rest under Diagnoses."""
    out: list[str] = []
    for i, sentence in enumerate(_explain.lead(result)):
        grouped = i > 0 and not sentence[:1].isupper()
        lines = _wrap(sentence, "  " if grouped else "", hang="  ")
        out += [paint(lines[0], "bold") if not grouped else lines[0], *lines[1:]]
    if len(out) > MAX_LEAD_LINES:
        out = [*out[: MAX_LEAD_LINES - 1], out[MAX_LEAD_LINES - 1][: WIDTH - 2] + " …"]
    return out


# ---------------------------------------------------------------- stability
def _stability(result: AuditResult) -> list[str]:
    out: list[str] = []
    for head, subs in _condense.stability_items(result.stability):
        out += _wrap(head)
        for sub in subs:
            out += _wrap(sub, "    ", hang="   ")
    return out


# ------------------------------------------------------------------- checks
def _counts(o: CheckOutcome | None) -> list[str]:
    """Errors, warnings and infos of an outcome, blank for none (and for a merged row)."""
    if o is None:
        return ["", "", ""]
    c = _shared.outcome_counts(o)
    return [str(c[s.label]) if c[s.label] else "" for s in sorted(Severity, reverse=True)]


def _not_run_note(o: CheckOutcome, crashed: tuple[str, ...], width: int) -> str:
    """Why a check did not run (or crashed), in full, wrapped to at most three lines."""
    reason = o.reason or ("the check crashed" if o.check in crashed else "no reason given")
    lines = textwrap.wrap(reason, width)
    if len(lines) > 3:
        lines = [*lines[:2], _condense.clip_words(" ".join(lines[2:]), width)]
    return "\n".join(lines)


def _check_table(result: AuditResult, paint: _Paint) -> list[str]:
    """The check × case table: one line per row, not-run reasons in full (wrapped), within :data:`WIDTH`."""
    rows = _condense.outcome_rows(result.outcomes)
    if not rows:
        return ["  no check ran"]
    headers = ["check", "case", "status", "err", "warn", "info", "note"]
    cells = [
        [_clip(check, 16), _clip(case, 14), _shared.STATUS_WORDS[o.status] if o else "", *_counts(o)]
        for o, check, case, _ in rows
    ]
    widths = [max(len(h), *(len(c[k]) for c in cells)) for k, h in enumerate(headers[:6])]
    note_width = max(WIDTH - 2 - sum(widths) - 2 * 6, 30)
    for cell, (o, _, _, merged) in zip(cells, rows, strict=True):
        if o is None:
            cell.append(merged)
            continue
        cell[2] = paint.status(o.status)
        if o.status is Status.NOT_RUN or o.check in result.crashed:
            cell.append(_not_run_note(o, result.crashed, note_width))
        else:
            cell.append(_condense.outcome_digest(o, note_width, result.crashed))
    return _table(headers, cells, "lllrrrl")


# ------------------------------------------------------------ discrepancies
#: cell widths of the discrepancy table (where, case, quantity, verdict) and column gap, tightened until it fits
_CLIPS = (
    (16, 12, 24, 28, 2),
    (16, 12, 24, 28, 1),
    (16, 12, 22, 20, 1),
    (14, 10, 18, 18, 1),
    (12, 8, 14, 16, 1),
    (10, 6, 10, 12, 1),
)
_ALIGN = "llllrrrrl"
_HEADERS = ["code", "where", "case", "quantity", "reported", "expected", "diff", "tol", "verdict"]


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
        lines = _table(_HEADERS, rows, _ALIGN, gap)
        if max(len(_strip_ansi(line)) for line in lines) <= WIDTH:
            break
    return lines


def _discrepancies(result: AuditResult, limit: int, paint: _Paint) -> list[str]:
    disc = _shared.discrepancies(result)
    if not disc:
        return ["  none: no finding compares a reported number with a recomputed one"]
    shown = disc[:limit]
    out = [f"  {len(shown)} of {len(disc)}, worst first (diff = reported − expected; tol = allowed difference)"]
    out += _discrepancy_table(shown, paint)
    rest = _condense.not_shown(disc, shown)
    if rest:
        out += _wrap(rest)
    return out


# ----------------------------------------------------------------- findings
def _where(f: Finding) -> str:
    where = f.location.label()
    case = f"case {f.case}" if f.case is not None else ""
    return ", ".join(p for p in (where if where != "model" else "", case) if p)


def _finding_lines(f: Finding, paint: _Paint, also: list[str] | None = None) -> list[str]:
    place = _where(f)
    if also:
        place += f" (also {', '.join(also)})"
    head = f"- {f.severity.label} {f.code}" + (f" {place}" if place else "") + ": "
    lines = _wrap_capped(head + _condense.strip_location(f), "  ", hang="    ")
    label = f.severity.label
    lines[0] = lines[0].replace(label, paint.severity(f.severity, label), 1)
    return lines


def _diagnoses(result: AuditResult, paint: _Paint) -> list[str]:
    groups = _condense.diagnosis_groups(_shared.diagnoses(result))
    if not groups:
        return ["  none"]
    out: list[str] = []
    for f, also in groups[:MAX_DIAGNOSES]:
        out += _finding_lines(f, paint, also)
    if len(groups) > MAX_DIAGNOSES:
        out.append(f"  … and {len(groups) - MAX_DIAGNOSES} more ({_condense.SEE_JSON})")
    return out


def _other_findings(result: AuditResult, paint: _Paint) -> list[str]:
    other = _shared.other_findings(result)
    loud = [f for f in other if f.severity > Severity.INFO]
    infos = [f for f in other if f.severity is Severity.INFO]
    out: list[str] = []
    shown, left = _condense.listed_findings(loud, total=MAX_LISTED)
    for f in shown:
        out += _finding_lines(f, paint)
    if left:
        n = sum(k for _, k in left)
        out += _wrap(f"… and {n} more ({', '.join(f'{c} ×{k}' for c, k in left)}; {_condense.SEE_JSON})")
    if infos:
        out.append(f"  {paint(_condense.plural(len(infos), 'info'), 'dim')}, by code:")
        groups = _condense.info_groups(infos)
        tag_width = max(len(f"{code} ×{n}") for code, n, _, _ in groups)
        for code, n, text, _cases in groups:
            tag = f"{code} ×{n}".ljust(tag_width)
            out.append(f"  {tag}  " + _condense.clip_words(text, WIDTH - 4 - tag_width))
    return out


# --------------------------------------------------------- precision, tail
def _precision(result: AuditResult) -> list[str]:
    out: list[str] = []
    for item in _condense.precision_items(result.precision):
        out += _wrap(item)
    rows = _condense.precision_case_rows(result.precision)
    if rows:
        out += _table(_condense.PRECISION_CASE_HEADERS, rows, "llrlrr")
        out += _wrap(_condense.PRECISION_CASE_LEGEND)
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
    out += _heading("Stability", paint) + _stability(result)

    out += _heading("Checks", paint)
    tot = _shared.status_totals(result)
    out.append(f"  {tot['pass']} passed, {tot['fail']} failed, {tot['not_run']} not run")
    out += _check_table(result, paint)

    out += _heading("Worst discrepancies", paint)
    out += _discrepancies(result, _shared.max_rows(context), paint)
    out += _heading("Diagnoses", paint) + _diagnoses(result, paint)
    other = _other_findings(result, paint)
    if other:
        out += _heading("Other findings", paint) + other

    out += _heading("Tolerances used", paint)
    for item in _condense.tolerance_items(result.tolerances):
        out += _wrap(item)
    out += _heading("Precision and proof", paint) + _precision(result)
    out += _heading("Caution", paint)
    out += _wrap(_shared.CAUTION, hang="")
    return "\n".join(out) + "\n"


__all__ = ["render"]
