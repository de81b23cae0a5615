"""One self-contained HTML page: inline CSS and inline SVG, no script, nothing fetched.

A Content-Security-Policy in the page forbids every network fetch, so the
file behaves the same opened from disk or served.  Order: verdict, model,
stability in words, drawings, the checks (one row per check and case, each
with one short note, and the findings of each check folded under it),
failing members, worst discrepancies, diagnoses, other findings (infos
grouped by code), tolerances, precision and proof, caution, tool version and
input checksums.

The page says what the terminal report says, in the same words: both take
their sentences, digests and groups from :mod:`audit.reporters._condense`.
It shows more rows than the terminal (it can scroll) and keeps the findings
of every check in a folded ``<details>`` block (no script needed to open it).

Size limits (so that a 10⁵-member model still gives a usable page):
each drawing follows :mod:`audit.reporters.drawing` (at most 20,000 members
drawn one by one, the rest shaded; at most 30 labels; at most 6 mechanism
drawings); each findings table shows at most :data:`MAX_TABLE_ROWS` rows; the
worst-discrepancy table :data:`MAX_DISCREPANCY_ROWS`; the failing-member list
at most :data:`MAX_LISTED_MEMBERS` ids; the JSON report always carries
everything.
"""

from __future__ import annotations

import html
from collections.abc import Iterable, Mapping
from typing import Any

from audit.findings import AuditResult, CheckOutcome, Finding, Severity, Status
from audit.model import Model
from audit.reporters import _condense, _explain, _shared, drawing
from audit.reporters.scene import to_svg

MAX_TABLE_ROWS = 200
MAX_LISTED_MEMBERS = 5000
MAX_DISCREPANCY_ROWS = 50
#: width, in characters, of the one-line note of a check in the checks table
NOTE_WIDTH = 72
#: warnings and errors without numbers listed one by one, at most (and at most 4 of one code)
MAX_LISTED = 12
#: diagnoses shown, at most
MAX_DIAGNOSES = 10
#: characters of a finding's message shown in a list before it is cut at a word
MAX_MESSAGE_CHARS = 320

_CSS = """
:root { --ink:#1f2a36; --muted:#5d6b78; --rule:#d5dce2; --pass:#1d6b45; --fail:#b5123e; --idle:#7a5c00; }
* { box-sizing: border-box; }
body { margin: 0 auto; max-width: 1040px; padding: 24px; color: var(--ink);
  font: 15px/1.45 ui-sans-serif, system-ui, sans-serif; background: #fbfcfd; }
h1 { font-size: 22px; margin: 12px 0 4px; } h2 { font-size: 18px; margin: 28px 0 8px;
  border-bottom: 2px solid var(--rule); padding-bottom: 3px; } h3 { font-size: 15px; margin: 18px 0 6px; }
.verdict { padding: 14px 18px; border-radius: 6px; color: #fff; font-size: 20px; font-weight: 700; }
.verdict.pass { background: var(--pass); } .verdict.fail { background: var(--fail); }
.verdict small { display: block; font-size: 14px; font-weight: 400; }
.cause { border-left: 6px solid var(--cause, #7b2cbf); padding: 4px 14px; margin: 10px 0; background: #f6f0fb; }
.cause p { margin: 6px 0; } .cause .grouped { margin-left: 18px; color: #333; }
table { border-collapse: collapse; margin: 6px 0 10px; font-size: 13.5px; width: 100%; }
th, td { border-bottom: 1px solid var(--rule); padding: 3px 8px; text-align: left; vertical-align: top; }
th { background: #eef2f5; } td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
th.num { text-align: right; } td.nowrap { white-space: nowrap; } table.fit { width: auto; min-width: 60%; }
.st { font-weight: 700; } .st.pass { color: var(--pass); } .st.fail { color: var(--fail); }
.st.not_run { color: var(--idle); } .sev-error { color: var(--fail); font-weight: 700; }
.sev-warning { color: var(--idle); font-weight: 700; } .sev-info { color: var(--muted); }
ul.say { margin: 4px 0 10px; padding-left: 20px; } ul.say li { margin: 2px 0; }
ul.say ul { margin: 2px 0; padding-left: 18px; list-style: none; }
details { margin: 4px 0; } summary { cursor: pointer; } details[open] summary { margin-bottom: 4px; }
figure { margin: 14px 0; background: #fff; border: 1px solid var(--rule); border-radius: 6px; padding: 6px; }
figure svg { width: 100%; height: auto; display: block; } figcaption { color: var(--muted); font-size: 13px; }
.caution { border-left: 5px solid var(--idle); background: #fff8e6; padding: 10px 14px; }
.ids { font-family: ui-monospace, monospace; font-size: 13px; word-break: break-word; }
code, .mono { font-family: ui-monospace, monospace; font-size: 13px; } .muted { color: var(--muted); }
@media print { body { background: #fff; } figure { break-inside: avoid; } }
"""

_CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"


def e(x: object) -> str:
    """``x`` as HTML text (``<``, ``>``, ``&`` and quotes escaped)."""
    return html.escape(str(x), quote=True)


def _status(s: Status) -> str:
    return f"<span class='st {s.value}'>{e(_shared.STATUS_WORDS[s])}</span>"


def _num(x: object, sig: int = 6) -> str:
    return f"<td class='num'>{e(_shared.fmt_number(x, sig))}</td>"


def _items(texts: Iterable[str], empty: str = "") -> str:
    """Sentences as a bulleted list (``empty`` in a muted paragraph when there is none)."""
    lis = "".join(f"<li>{e(t)}</li>" for t in texts)
    return f"<ul class='say'>{lis}</ul>" if lis else (f"<p class='muted'>{e(empty)}</p>" if empty else "")


def _sev(f: Finding) -> str:
    return f"<span class='sev-{f.severity.label}'>{e(f.severity.label)}</span>"


# ---------------------------------------------------------------- stability
def _stability(result: AuditResult) -> str:
    """The stability block in words (:func:`audit.reporters._condense.stability_items`), sub-items nested."""
    lis = []
    for head, subs in _condense.stability_items(result.stability):
        inner = "".join(f"<li>{e(s)}</li>" for s in subs)
        lis.append(f"<li>{e(head)}" + (f"<ul>{inner}</ul>" if inner else "") + "</li>")
    return f"<ul class='say' id='stability'>{''.join(lis)}</ul>"


# ------------------------------------------------------------------- checks
def _note(o: CheckOutcome, crashed: tuple[str, ...]) -> str:
    """Why a check did not run (in full), else its one-line digest."""
    if o.status is Status.NOT_RUN or o.check in crashed:
        return o.reason or ("the check crashed" if o.check in crashed else "no reason given")
    return _condense.outcome_digest(o, NOTE_WIDTH, crashed)


def _count_cells(o: CheckOutcome | None) -> str:
    if o is None:
        return "<td class='num'></td>" * 3
    c = _shared.outcome_counts(o)
    return "".join(f"<td class='num'>{c[s.label] or ''}</td>" for s in sorted(Severity, reverse=True))


def _checks(result: AuditResult) -> str:
    tot = _shared.status_totals(result)
    out = [f"<p>{tot['pass']} passed, {tot['fail']} failed, {tot['not_run']} not run.</p>"]
    rows = []
    for o, check, case, merged in _condense.outcome_rows(result.outcomes):
        status = _status(o.status) if o is not None else ""
        note = _note(o, result.crashed) if o is not None else merged
        rows.append(
            f"<tr><td>{e(check)}</td><td>{e(case)}</td><td>{status}</td>{_count_cells(o)}<td>{e(note)}</td></tr>"
        )
    if rows:
        out.append(
            "<table id='checks'><tr><th>check</th><th>case</th><th>status</th><th class='num'>errors</th>"
            "<th class='num'>warnings</th><th class='num'>infos</th><th>note</th></tr>" + "".join(rows) + "</table>"
        )
    else:
        out.append("<p>No check ran.</p>")
    details = [_outcome_detail(o, result.crashed) for o in result.outcomes if o.findings]
    if details:
        out.append("<h3>Findings of each check</h3>" + "".join(details))
    return "".join(out)


def _extra_data(f: Finding) -> list[str]:
    """A finding's further data as ``key = value``; a list or table only counted (it is in the JSON report)."""
    out = []
    for k, v in f.data:
        if k in ("quantity", "quantum", "within_rounding"):  # already in the quantity and verdict cells
            continue
        if isinstance(v, (Mapping, list, tuple)) or getattr(v, "ndim", 0) > 0:
            out.append(f"{k}: {_condense.plural(len(v), 'entry', 'entries')} ({_condense.SEE_JSON})")
        else:
            out.append(f"{k} = {_shared.fmt_value(v)}")
    return out


def _findings_table(findings: list[Finding], limit: int) -> str:
    """Every finding of a check with its numbers and extra data (at most ``limit`` rows)."""
    head = (
        "<tr><th>code</th><th>severity</th><th>where</th><th>message</th><th class='num'>reported</th>"
        "<th class='num'>expected</th><th class='num'>difference</th><th class='num'>tolerance</th><th>units</th></tr>"
    )
    rows = []
    for f in findings[:limit]:
        extra = _extra_data(f)
        more = f"<br><span class='muted'>{e('; '.join(extra))}</span>" if extra else ""
        rows.append(
            f"<tr><td class='mono'>{e(f.code)}</td>"
            f"<td class='sev-{f.severity.label}'>{e(_shared.rounding_note(f))}</td>"
            f"<td>{e(f.location.label())}</td><td>{e(_condense.strip_location(f))}{more}</td>"
            f"{_num(f.reported)}{_num(f.expected)}{_num(_shared.difference_of(f), 4)}{_num(f.tolerance, 4)}"
            f"<td>{e(f.units or '')}</td></tr>"
        )
    tail = ""
    if len(findings) > limit:
        tail = f"<p class='muted'>{len(findings) - limit} more findings ({_condense.SEE_JSON}).</p>"
    return f"<table>{head}{''.join(rows)}</table>{tail}"


def _outcome_detail(o: CheckOutcome, crashed: tuple[str, ...]) -> str:
    """A folded block: the check, case, status, its note and counts; opened, the table of its findings."""
    counts = _shared.count_text(_shared.outcome_counts(o))
    note = _note(o, crashed)
    head = f"{e(o.check)}, {e(_shared.case_label(o.case))}: {_status(o.status)}, {e(counts)}"
    head += f" <span class='muted'>({e(note)})</span>" if note else ""
    table = _findings_table(_shared.sorted_findings(o.findings), MAX_TABLE_ROWS)
    return f"<details><summary>{head}</summary>{table}</details>"


# ------------------------------------------------------------ discrepancies
def _discrepancies(result: AuditResult, limit: int) -> str:
    disc = _shared.discrepancies(result)
    if not disc:
        return "<p>None: no finding compares a reported number with a recomputed one.</p>"
    shown = disc[:limit]
    head = (
        "<tr><th>code</th><th>where</th><th>case</th><th>quantity</th><th class='num'>reported</th>"
        "<th class='num'>expected</th><th class='num'>difference</th><th class='num'>tolerance</th>"
        "<th>verdict</th></tr>"
    )
    rows = "".join(
        f"<tr><td class='mono'>{e(f.code)}</td><td class='nowrap'>{e(f.location.label())}</td>"
        f"<td>{e(_shared.case_label(f.case))}</td><td>{e(_shared.quantity_of(f))}</td>"
        f"{_num(f.reported, 5)}{_num(f.expected, 5)}{_num(_shared.difference_of(f), 4)}{_num(f.tolerance, 4)}"
        f"<td class='sev-{f.severity.label}'>{e(_shared.rounding_note(f))}</td></tr>"
        for f in shown
    )
    out = (
        f"<p>{len(shown)} of {len(disc)}, worst first; difference = reported − expected; "
        "tolerance = allowed difference.</p>"
        f"<table id='discrepancies'>{head}{rows}</table>"
    )
    rest = _condense.not_shown(disc, shown)
    return out + (f"<p class='muted'>{e(rest)}</p>" if rest else "")


# ----------------------------------------------------------------- findings
def _finding_item(f: Finding, also: list[str] | None = None) -> str:
    """``<li>`` severity, code, place (and the other cases), message cut at :data:`MAX_MESSAGE_CHARS`."""
    place = ", ".join(
        p for p in (f.location.label() if f.location.label() != "model" else "", _case_words(f.case)) if p
    )
    if also:
        place += f" (also {', '.join(also)})"
    msg = _condense.clip_words(_condense.strip_location(f), MAX_MESSAGE_CHARS)
    return f"<li>{_sev(f)} <code>{e(f.code)}</code>{' ' + e(place) if place else ''}: {e(msg)}</li>"


def _case_words(case: str | None) -> str:
    return f"case {case}" if case is not None else ""


def _lead(result: AuditResult) -> str:
    """The root cause in plain words right under the verdict ("" for a clean hand-off)."""
    lines = _explain.lead(result)
    if not lines:
        return ""
    items = "".join(
        f"<p><strong>Root cause.</strong> {e(t)}</p>" if t[:1].isupper() else f"<p class='grouped'>{e(t)}</p>"
        for t in lines
    )
    return f"<div class='cause' id='root-cause'>{items}</div>"


def _diagnoses(result: AuditResult) -> str:
    groups = _condense.diagnosis_groups(_shared.diagnoses(result))
    if not groups:
        return "<p>None.</p>"
    lis = [_finding_item(f, also) for f, also in groups[:MAX_DIAGNOSES]]
    if len(groups) > MAX_DIAGNOSES:
        lis.append(f"<li>… and {len(groups) - MAX_DIAGNOSES} more ({_condense.SEE_JSON})</li>")
    return f"<ul class='say' id='diagnoses'>{''.join(lis)}</ul>"


def _other_findings(result: AuditResult) -> str:
    other = _shared.other_findings(result)
    loud = [f for f in other if f.severity > Severity.INFO]
    infos = [f for f in other if f.severity is Severity.INFO]
    out = []
    shown, left = _condense.listed_findings(loud, total=MAX_LISTED)
    lis = [_finding_item(f) for f in shown]
    if left:
        n = sum(k for _, k in left)
        lis.append(f"<li>… and {n} more ({e(', '.join(f'{c} ×{k}' for c, k in left))}; {_condense.SEE_JSON})</li>")
    if lis:
        out.append(f"<ul class='say'>{''.join(lis)}</ul>")
    if infos:
        rows = "".join(
            f"<tr><td class='mono'>{e(code)}</td><td class='num'>{n}</td><td>{e(text)}</td>"
            f"<td>{e(_condense.name_list(cases))}</td></tr>"
            for code, n, text, cases in _condense.info_groups(infos)
        )
        out.append(
            f"<p>{e(_condense.plural(len(infos), 'info'))}, by code:</p>"
            "<table id='infos'><tr><th>code</th><th class='num'>count</th><th>what</th><th>cases</th></tr>"
            f"{rows}</table>"
        )
    return "".join(out)


# --------------------------------------------------------- precision, tail
def _tolerances(result: AuditResult) -> str:
    items = _condense.tolerance_items(result.tolerances)
    if not result.tolerances:
        return _items(items)
    rule = [i for i in items if i.startswith("allowed = ")]
    rest = [i for i in items if not i.startswith("allowed = ")]
    out = "".join(f"<p><code>{e(r)}</code></p>" for r in rule)
    return out + "".join(f"<p>{e(r)}</p>" for r in rest)


def _precision(result: AuditResult) -> str:
    out = [_items(_condense.precision_items(result.precision))]
    rows = _condense.precision_case_rows(result.precision)
    if rows:
        right = {2, 4, 5}
        head = "".join(
            f"<th class='num'>{e(h)}</th>" if k in right else f"<th>{e(h)}</th>"
            for k, h in enumerate(_condense.PRECISION_CASE_HEADERS)
        )
        body = "".join(
            "<tr>"
            + "".join(f"<td class='num'>{e(c)}</td>" if k in right else f"<td>{e(c)}</td>" for k, c in enumerate(r))
            + "</tr>"
            for r in rows
        )
        out.append(f"<table class='fit' id='precision-cases'><tr>{head}</tr>{body}</table>")
        out.append(f"<p class='muted'>{e(_condense.PRECISION_CASE_LEGEND)}</p>")
    return "".join(out)


def _drawings(result: AuditResult, model: Model | None, context: Mapping[str, Any] | None) -> str:
    if model is None:
        return "<p class='muted'>No drawings: the model was not passed to the reporter.</p>"
    out = []
    for _name, scene in drawing.all_scenes(result, model, context):
        out.append(f"<figure>{to_svg(scene)}<figcaption>{e(scene.title)}</figcaption></figure>")
    case = drawing.pick_case(result, model, context)
    u, n = drawing.case_arrays(context, case)
    if case is not None and (u is None or n is None):
        missing = " and ".join(w for w, a in (("member forces", n), ("deformed shape", u)) if a is None)
        out.append(f"<p class='muted'>No drawing of the {e(missing)}: no recomputed values were passed.</p>")
    return "".join(out)


def _failing_members(result: AuditResult) -> str:
    ids = _shared.failing_members(result)
    if not ids:
        return "<p>No member has a failing finding.</p>"
    shown = ids[:MAX_LISTED_MEMBERS]
    more = f" … and {len(ids) - len(shown)} more ({_condense.SEE_JSON})" if len(ids) > len(shown) else ""
    return f"<p>{e(_condense.plural(len(ids), 'member'))}:</p><p class='ids'>{e(', '.join(shown))}{e(more)}</p>"


def render(result: AuditResult, model: Model | None = None, context: Mapping[str, Any] | None = None) -> str:
    """The HTML page.

    Parameters
    ----------
    result
        What the audit established.
    model
        The model, for the drawings (omitted: no drawings, said so on the page).
    context
        ``case``, ``displacements``, ``axial_forces``, ``solution``, ``max_rows``
        (see :mod:`audit.reporters._shared`; ``max_rows`` defaults to
        :data:`MAX_DISCREPANCY_ROWS` here).
    """
    verdict = result.verdict
    title = f"truss-audit: {result.title}"
    parts = [
        "<!DOCTYPE html>",
        "<html lang='en'><head><meta charset='utf-8'>",
        f"<meta http-equiv='Content-Security-Policy' content=\"{_CSP}\">",
        "<meta name='viewport' content='width=device-width, initial-scale=1'>",
        f"<title>{e(title)} ({verdict})</title><style>{_CSS}</style></head><body>",
        f"<div class='verdict {verdict}' id='verdict'>VERDICT: {verdict.upper()}"
        f"<small>{e(_shared.verdict_detail(result))}</small></div>",
        _lead(result),
        f"<h1>{e(result.title)}</h1>",
        f"<p>{e(_condense.sentence('Model: ' + _shared.model_sentence(result.model_summary)))}</p>",
        "<h2>Stability</h2>",
        _stability(result),
    ]
    parts += ["<h2>Drawings</h2>", _drawings(result, model, context)]
    parts += ["<h2>Checks</h2>", _checks(result)]
    parts += ["<h2>Failing members</h2>", _failing_members(result)]
    limit = _shared.max_rows(context, MAX_DISCREPANCY_ROWS)
    parts += ["<h2>Worst discrepancies</h2>", _discrepancies(result, limit)]
    parts += ["<h2>Diagnoses</h2>", _diagnoses(result)]
    other = _other_findings(result)
    if other:
        parts += ["<h2>Other findings</h2>", other]
    parts += ["<h2>Tolerances used</h2>", _tolerances(result)]
    parts += ["<h2>Precision and proof</h2>", _precision(result)]
    parts += ["<h2>Caution</h2>", f"<p class='caution'>{e(_shared.CAUTION)}</p>"]
    inputs = "".join(
        f"<tr><td>{e(_shared.file_name(n))}</td><td class='mono'>{e(sha)}</td></tr>" for n, sha in result.inputs
    )
    parts.append(
        f"<h2>Tool and inputs</h2><p>truss-audit {e(result.version or '(version unknown)')}</p>"
        + (f"<table><tr><th>input file</th><th>sha256</th></tr>{inputs}</table>" if inputs else "")
    )
    parts.append(
        "<p class='muted'>Limits of this page: each drawing shows at most "
        f"{drawing.MAX_DRAWN_MEMBERS:,} members one by one and {drawing.MAX_LABELS} labels; each findings table "
        f"at most {MAX_TABLE_ROWS} rows, the worst-discrepancy table {limit}; the JSON report carries every "
        "finding.</p>"
    )
    parts.append("</body></html>")
    return "\n".join(parts) + "\n"


__all__ = ["MAX_DISCREPANCY_ROWS", "MAX_LISTED_MEMBERS", "MAX_TABLE_ROWS", "NOTE_WIDTH", "e", "render"]
