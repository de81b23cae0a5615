"""One self-contained HTML page: inline CSS and inline SVG, no script, nothing fetched.

A Content-Security-Policy in the page forbids every network fetch, so the
file behaves the same opened from disk or served.  Order: verdict, model,
stability in words, drawings, a table per check and case, failing members,
worst discrepancies, diagnoses, tolerances, precision and proof, caution,
tool version and input checksums.

Size limits (so that a 10⁵-member model still gives a usable page):
each drawing follows :mod:`audit.reporters.drawing` (at most 20,000 members
drawn one by one, the rest shaded; at most 30 labels; at most 6 mechanism
drawings); each findings table shows at most :data:`MAX_TABLE_ROWS` rows; the
failing-member list at most :data:`MAX_LISTED_MEMBERS` ids; the JSON report
always carries everything.
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from typing import Any

from audit.findings import AuditResult, CheckOutcome, Finding, Status
from audit.model import Model
from audit.reporters import _shared, drawing
from audit.reporters.scene import to_svg

MAX_TABLE_ROWS = 200
MAX_LISTED_MEMBERS = 5000
MAX_DISCREPANCY_ROWS = 50

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
table { border-collapse: collapse; margin: 6px 0 10px; font-size: 13.5px; width: 100%; }
th, td { border-bottom: 1px solid var(--rule); padding: 3px 8px; text-align: left; vertical-align: top; }
th { background: #eef2f5; } td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.st { font-weight: 700; } .st.pass { color: var(--pass); } .st.fail { color: var(--fail); }
.st.not_run { color: var(--idle); } .sev-error { color: var(--fail); font-weight: 700; }
.sev-warning { color: var(--idle); font-weight: 700; } .sev-info { color: var(--muted); }
figure { margin: 14px 0; background: #fff; border: 1px solid var(--rule); border-radius: 6px; padding: 6px; }
figure svg { width: 100%; height: auto; display: block; } figcaption { color: var(--muted); font-size: 13px; }
.caution { border-left: 5px solid var(--idle); background: #fff8e6; padding: 10px 14px; }
.ids { font-family: ui-monospace, monospace; font-size: 13px; word-break: break-word; }
code, .mono { font-family: ui-monospace, monospace; font-size: 13px; } .muted { color: var(--muted); }
@media print { body { background: #fff; } figure { break-inside: avoid; } }
"""

_CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"


def e(x: object) -> str:
    return html.escape(str(x), quote=True)


def _pairs_table(pairs: list[tuple[str, str]], empty: str) -> str:
    if not pairs:
        return f"<p class='muted'>{e(empty)}</p>"
    rows = "".join(f"<tr><th>{e(k)}</th><td>{e(v)}</td></tr>" for k, v in pairs)
    return f"<table>{rows}</table>"


def _status(s: Status) -> str:
    return f"<span class='st {s.value}'>{e(_shared.STATUS_WORDS[s])}</span>"


def _num(x: object, sig: int = 6) -> str:
    return f"<td class='num'>{e(_shared.fmt_number(x, sig))}</td>"


def _findings_table(findings: list[Finding], limit: int) -> str:
    head = (
        "<tr><th>code</th><th>severity</th><th>where</th><th>message</th><th>reported</th><th>expected</th>"
        "<th>difference</th><th>tolerance</th><th>units</th></tr>"
    )
    rows = []
    for f in findings[:limit]:
        extra = _shared.extra_data(f)
        more = f"<br><span class='muted'>{e('; '.join(f'{k} = {v}' for k, v in extra))}</span>" if extra else ""
        rows.append(
            f"<tr><td class='mono'>{e(f.code)}</td>"
            f"<td class='sev-{f.severity.label}'>{e(_shared.rounding_note(f))}</td>"
            f"<td>{e(f.location.label())}</td><td>{e(f.message)}{more}</td>"
            f"{_num(f.reported)}{_num(f.expected)}{_num(_shared.difference_of(f), 4)}{_num(f.tolerance, 4)}"
            f"<td>{e(f.units or '')}</td></tr>"
        )
    tail = ""
    if len(findings) > limit:
        tail = f"<p class='muted'>{len(findings) - limit} more findings are in the JSON report.</p>"
    return f"<table>{head}{''.join(rows)}</table>{tail}"


def _checks(result: AuditResult) -> str:
    tot = _shared.status_totals(result)
    out = [f"<p>{tot['pass']} passed, {tot['fail']} failed, {tot['not_run']} not run.</p>"]
    rows = []
    for o in result.outcomes:
        note = _shared.outcome_note(o, result.crashed)
        rows.append(
            f"<tr><td>{e(o.check)}</td><td>{e(_shared.case_label(o.case))}</td><td>{_status(o.status)}</td>"
            f"<td>{e(_shared.count_text(_shared.outcome_counts(o)))}</td><td>{e(note)}</td></tr>"
        )
    out.append(
        "<table><tr><th>check</th><th>case</th><th>status</th><th>findings</th><th>note</th></tr>"
        + "".join(rows)
        + "</table>"
    )
    for o in result.outcomes:
        if o.findings:
            out.append(_outcome_detail(o))
    return "".join(out)


def _outcome_detail(o: CheckOutcome) -> str:
    summary = ", ".join(f"{k} = {_shared.fmt_value(v)}" for k, v in o.summary)
    extra = f"<p class='muted'>{e(summary)}</p>" if summary else ""
    return f"<h3>{e(o.check)}, {e(_shared.case_label(o.case))}: {_status(o.status)}</h3>{extra}" + _findings_table(
        _shared.sorted_findings(o.findings), MAX_TABLE_ROWS
    )


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
    more = f" … and {len(ids) - len(shown)} more (see the JSON report)" if len(ids) > len(shown) else ""
    return f"<p>{len(ids)} member(s):</p><p class='ids'>{e(', '.join(shown))}{e(more)}</p>"


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
        (see :mod:`audit.reporters._shared`).
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
        f"<h1>{e(result.title)}</h1>",
        f"<p>{e(_shared.model_sentence(result.model_summary))}.</p>",
        "<h2>Stability</h2>",
        "<p>" + " ".join(e(s) for s in _shared.stability_sentences(result.stability)) + "</p>",
    ]
    extras = _shared.stability_extras(result.stability)
    if extras:
        parts.append(_pairs_table(extras, ""))
    parts += ["<h2>Drawings</h2>", _drawings(result, model, context)]
    parts += ["<h2>Checks</h2>", _checks(result)]
    parts += ["<h2>Failing members</h2>", _failing_members(result)]
    disc = _shared.discrepancies(result)
    limit = _shared.max_rows(context, MAX_DISCREPANCY_ROWS)
    parts.append("<h2>Worst discrepancies</h2>")
    if disc:
        parts.append(
            f"<p>{min(len(disc), limit)} of {len(disc)}, worst first; difference = reported − expected.</p>"
            + _findings_table(disc, limit)
        )
    else:
        parts.append("<p>None: no finding compares a reported number with a recomputed one.</p>")
    other = _shared.other_findings(result)
    if other:
        parts += ["<h2>Other findings</h2>", _findings_table(other, MAX_TABLE_ROWS)]
    diag = _shared.diagnoses(result)
    parts.append("<h2>Diagnoses</h2>")
    parts.append(_findings_table(diag, MAX_TABLE_ROWS) if diag else "<p>None.</p>")
    parts += ["<h2>Tolerances used</h2>", _pairs_table(_shared.tolerance_lines(result.tolerances), "none stated")]
    parts += ["<h2>Precision and proof</h2>", _pairs_table(_shared.precision_lines(result.precision), "not reported")]
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
        f"{drawing.MAX_DRAWN_MEMBERS:,} members one by one and {drawing.MAX_LABELS} labels; each table at most "
        f"{MAX_TABLE_ROWS} rows; the JSON report carries every finding.</p>"
    )
    parts.append("</body></html>")
    return "\n".join(parts) + "\n"


__all__ = ["MAX_LISTED_MEMBERS", "MAX_TABLE_ROWS", "render"]
