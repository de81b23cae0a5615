"""What the terminal and Markdown reports say in few lines: digests, sentences and groups.

The JSON report carries everything; these helpers decide what a checking
engineer reads on one or two screens:

* :func:`outcome_digest`: one short line per check and case (its reason, cut
  at a clause, or the comparison counts of its summary), never the raw summary;
* :func:`stability_items`: the stability block in words (classification,
  counts, rank and its proof, mechanisms, states of self-stress, traps);
* :func:`precision_items` and :func:`precision_case_rows`: digits proven,
  condition, λ_lo and how it was certified, and the proof status per case;
* :func:`tolerance_items`: the rule of judgement and the figures used;
* :func:`info_groups`, :func:`listed_findings`, :func:`diagnosis_groups` and
  :func:`not_shown`: findings grouped by code so that twelve alike infos take
  one line.

Every function reads its input defensively (all keys optional) and returns
plain strings or tuples; layout (wrapping, tables, Markdown escapes) is the
reporter's business.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

from audit.findings import CheckOutcome, Finding, Severity, Status
from audit.reporters import _shared

#: where the report points for anything it leaves out
SEE_JSON = "see --json"
#: members of a state of self-stress named one by one
MAX_MEMBERS = 8
#: mechanisms and states of self-stress described one by one
MAX_MODES = 8
#: the kinds of quantity whose comparison counts are summed in an outcome's summary
KINDS = ("displacement", "axial_force", "reaction")


# ------------------------------------------------------------------ words
def plural(n: int, word: str, many: str | None = None) -> str:
    """``"1 member"``, ``"2 members"`` (or ``many`` for an irregular plural)."""
    return f"{n} {word if n == 1 else (many or word + 's')}"


def some(n: int, word: str, many: str | None = None) -> str:
    """Like :func:`plural`, with ``"no member"`` for none."""
    return f"no {word}" if n == 0 else plural(n, word, many)


def sentence(text: str) -> str:
    """Capitalised (a Latin first letter only: λ stays λ), one full stop at the end, whitespace collapsed."""
    text = " ".join(str(text).split()).rstrip(".")
    head = text[:1].upper() if text[:1].isascii() else text[:1]
    return (head + text[1:] + ".") if text else ""


def clip_words(text: str, width: int) -> str:
    """``text`` cut at a word boundary to at most ``width`` characters, ``…`` marking the cut."""
    text = " ".join(text.split())
    if len(text) <= width:
        return text
    cut = text[: max(width - 1, 1)]
    if " " in cut[width // 2 :]:
        cut = cut[: cut.rindex(" ")]
    return cut.rstrip(" ,;:(") + "…"


def name_list(names: Sequence[Any], limit: int = MAX_MEMBERS) -> str:
    """``"V3, V4, D3"``; beyond ``limit`` names: the first ``limit`` and ``"… N more"``."""
    shown = ", ".join(str(n) for n in names[:limit])
    return shown + (f" … {len(names) - limit} more" if len(names) > limit else "")


def _mapping(x: Any) -> Mapping[str, Any]:
    """``x`` when it is a mapping, else an empty one."""
    return x if isinstance(x, Mapping) else {}


def _int(x: Any) -> int | None:
    return int(float(x)) if _shared.is_number(x) else None


# --------------------------------------------------------------- outcomes
def _top_level_cut(text: str, sep: str) -> str:
    """``text`` up to the first ``sep`` outside parentheses (all of it when there is none)."""
    depth = 0
    for i, ch in enumerate(text):
        if ch in "([":
            depth += 1
        elif ch in ")]":
            depth = max(depth - 1, 0)
        elif depth == 0 and text.startswith(sep, i):
            return text[:i]
    return text


def _without_brackets(text: str) -> str:
    """``text`` with its parenthesised asides removed."""
    prev = None
    while prev != text:
        prev, text = text, re.sub(r"\s*\([^()]*\)", "", text)
    return " ".join(text.split())


def comparison_counts(summary: Iterable[tuple[str, Any]]) -> tuple[int, int | None, int | None] | None:
    """(compared, beyond tolerance, within rounding) from an outcome's summary, None when it holds no counts.

    Reads ``checked``/``failed``/``within_rounding``, the same keys prefixed by a
    kind (``axial_force_checked`` …, summed over the kinds), or ``compared``.
    """
    s = dict(summary)

    def total(name: str) -> int | None:
        vals = [_int(s[k]) for k in (name, *(f"{kind}_{name}" for kind in KINDS)) if _int(s.get(k)) is not None]
        return sum(v for v in vals if v is not None) if vals else None

    checked = total("checked")
    if checked is None:
        checked = _int(s.get("compared"))
    if checked is None:
        return None
    return checked, total("failed"), total("within_rounding")


def _comparison_texts(summary: Iterable[tuple[str, Any]]) -> list[str]:
    counts = comparison_counts(summary)
    if counts is None:
        return []
    checked, failed, rounding = counts
    long, short = [f"{checked} compared"], [f"{checked} compared"]
    if failed is not None:
        long.append(f"{failed} beyond tolerance")
        short.append(f"{failed} beyond tol.")
    if rounding is not None:
        long.append(f"{rounding} within rounding")
        short.append(f"{rounding} in rounding")
    return [", ".join(long), ", ".join(short)]


def outcome_digest(o: CheckOutcome, width: int = 60, crashed: Sequence[str] = ()) -> str:
    """One line of at most ``width`` characters saying what a check found for one case.

    In order of preference: the outcome's reason whole; without its asides in
    brackets; up to its first top-level ``;``; the comparison counts of its
    summary (``"24 compared, 0 beyond tolerance, 24 within rounding"``); the
    reason up to its first top-level ``:``; the reason cut at a word.  An
    outcome with no reason shows its comparison counts, or nothing.
    """
    reason = " ".join(o.reason.split())
    if not reason and o.check in crashed:
        reason = "the check crashed"
    comparison = _comparison_texts(o.summary)
    if not reason:
        return next((c for c in comparison if len(c) <= width), clip_words(comparison[0], width) if comparison else "")
    bare = _without_brackets(reason)
    head = _top_level_cut(bare, ": ")
    if len(head) < 20:  # too short to say much: rather the reason cut at a word
        head = clip_words(bare, width)
    for c in (reason, bare, _top_level_cut(bare, "; "), *comparison, head):
        c = c.strip().rstrip(";:,")
        if c and len(c) <= width:
            return c
    return clip_words(bare, width)


#: check × case rows shown one by one; beyond this, the passing rows of each check are merged
MAX_CHECK_ROWS = 60
#: when rows are merged, at most this many failing, not-run or noisy rows of one check are shown
MAX_ROWS_PER_CHECK = 6


def outcome_rows(
    outcomes: Sequence[CheckOutcome], limit: int = MAX_CHECK_ROWS, per_check: int = MAX_ROWS_PER_CHECK
) -> list[tuple[CheckOutcome | None, str, str, str]]:
    """Rows of the check × case table: (outcome, check, case, note); merged rows have no outcome.

    Up to ``limit`` outcomes every one is a row.  Beyond, per check: at most
    ``per_check`` outcomes that failed, did not run or raised findings, one row
    counting the rest of those, and one row counting the clean passes.
    """
    by_check: dict[str, list[CheckOutcome]] = {}
    for o in outcomes:
        by_check.setdefault(o.check, []).append(o)
    rows: list[tuple[CheckOutcome | None, str, str, str]] = []
    for check, group in by_check.items():
        if len(outcomes) <= limit:
            rows += [(o, check, _shared.case_label(o.case), "") for o in group]
            continue
        quiet = [o for o in group if o.status is Status.PASS and not o.findings]
        loud = [o for o in group if not (o.status is Status.PASS and not o.findings)]
        rows += [(o, check, _shared.case_label(o.case), "") for o in loud[:per_check]]
        rest = loud[per_check:]
        if rest:
            words = {Status.FAIL: "failed", Status.NOT_RUN: "not run", Status.PASS: "passed with findings"}
            tally = {w: sum(o.status is s for o in rest) for s, w in words.items()}
            note = ", ".join(f"{n} {w}" for w, n in tally.items() if n) + f" ({SEE_JSON})"
            rows.append((None, check, f"{len(rest)} more", note))
        if quiet:
            rows.append((None, check, plural(len(quiet), "case"), "pass, no findings"))
    return rows


# --------------------------------------------------------------- stability
def _mechanism_line(i: int, detail: Mapping[str, Any]) -> str:
    raw = detail.get("raw") or {}
    kind = str(raw.get("kind") or "")
    desc = str(detail.get("description") or "").rstrip(".")
    if not desc:
        joints = raw.get("joints") or []
        desc = f"joints {name_list(joints)} move" if joints else "no description"
    order = str(raw.get("order") or "")
    if order and f"[{order}]" not in desc:
        desc += f" [{order}]"
    return f"Mechanism {i}{f' ({kind})' if kind else ''}: {desc}."


def _self_stress_line(i: int, state: Mapping[str, Any]) -> str:
    members = list(state.get("members") or [])
    reactions = list(state.get("reactions") or [])
    parts = []
    if members:
        parts.append(f"{plural(len(members), 'member')}: {name_list(members)}")
    if reactions:
        parts.append(f"{plural(len(reactions), 'reaction')}: {name_list(reactions)}")
    return f"{i}. " + ("; ".join(parts) if parts else "(members not listed)")


def _classification(stab: Mapping[str, Any]) -> str | None:
    cls = stab.get("classification")
    mech = _int(stab.get("mechanisms"))
    sss = _int(stab.get("self_stress_states"))
    if cls == "stable-determinate":
        return "Stable and statically determinate: no mechanism, no state of self-stress."
    if cls == "stable-indeterminate":
        degree = f" to degree {sss}" if sss is not None else ""
        states = f", {some(sss, 'state')} of self-stress" if sss is not None else ""
        return f"Stable and statically indeterminate{degree}: no mechanism{states}."
    if cls == "unstable":
        if mech is None:
            return "Unstable: the model can move without straining a member."
        at_least = "at least " if stab.get("mechanism_count_is_lower_bound") is True else ""
        rigid, internal = _int(stab.get("rigid_body_mechanisms")), _int(stab.get("internal_mechanisms"))
        kinds = []
        if rigid:
            kinds.append(plural(rigid, "rigid-body motion") + " left free by the supports")
        if internal:
            kinds.append(plural(internal, "internal mechanism"))
        split = f" ({', '.join(kinds)})" if kinds else ""
        states = f", {some(sss, 'state')} of self-stress" if sss is not None else ""
        return f"Unstable: {at_least}{plural(mech, 'independent mechanism')}{split}{states}."
    if cls is not None:
        return f"Classification: {cls}."
    if stab.get("summary"):
        return sentence(str(stab["summary"]))
    return None


def _counts(stab: Mapping[str, Any]) -> str | None:
    """Maxwell's count with its terms: ``m + r − d·j = 23 + 3 − 2·12 = 2`` and what m, r, j, d are."""
    c = _mapping(stab.get("counts"))
    mc = stab.get("maxwell_count")
    m, r, j, d = (_int(c.get(k)) for k in ("members", "reaction_components", "joints", "dimensions"))
    if not _shared.is_number(mc):
        return None
    if m is None or r is None or j is None or d is None:
        return f"Maxwell count m + r − d·j = {_shared.fmt_number(mc)}."
    springs = _int(c.get("springs_counted_as_reactions")) or 0
    zero = _int(c.get("zero_springs_not_counted")) or 0
    aside = []
    if springs:
        aside.append(f"{plural(springs, 'spring')} counted in r")
    if zero:
        aside.append(f"{plural(zero, 'spring')} of zero stiffness not counted")
    terms = "m members, r reaction components, j joints, d = " + str(d)
    tail = f"; {', '.join(aside)}" if aside else ""
    return f"Maxwell count m + r − d·j = {m} + {r} − {d}·{j} = {_shared.fmt_number(mc)} ({terms}{tail})."


def _rank(stab: Mapping[str, Any]) -> str | None:
    rank = stab.get("rank")
    if not _shared.is_number(rank):
        return None
    c = _mapping(stab.get("counts"))
    j, d = _int(c.get("joints")), _int(c.get("dimensions"))
    dj = f" (d·j = {d * j})" if j is not None and d is not None else ""
    proof = stab.get("proof")
    how = {"exact": "proven in exact arithmetic", "numerical": "established numerically, not proven"}.get(
        str(proof), f"established by {proof}" if proof else ""
    )
    text = f"Rank of the equilibrium matrix {_shared.fmt_number(rank)}{dj}" + (f", {how}" if how else "")
    method = str(stab.get("method") or "")
    if method:
        method = re.sub(r"^(exact|numerical):\s*", "", method)
        text += f": {method}"
    evidence = str(stab.get("evidence") or "")
    if evidence:
        text += f"; {evidence}"
    threshold = stab.get("threshold")
    if _shared.is_number(threshold):
        text += f"; zero threshold {_shared.fmt_number(threshold, 3)} (relative)"
    return sentence(text)


def stability_items(stab: Mapping[str, Any]) -> list[tuple[str, list[str]]]:
    """The stability block in words: (sentence, sub-items) pairs, empty items skipped.

    Classification; counts and Maxwell's count m + r − d·j (a necessary
    condition only: the rank decides, Maxwell 1864, common practice); the rank
    of the equilibrium matrix and how it was established; each mechanism; the
    first-order test; each state of self-stress by its members (at most
    :data:`MAX_MEMBERS` named); the traps not already told by a mechanism; notes.
    """
    if not stab:
        return [("The stability analysis did not report anything.", [])]
    out: list[tuple[str, list[str]]] = []
    for line in (_classification(stab), _counts(stab), _rank(stab)):
        if line:
            out.append((line, []))
    if stab.get("mechanism_count_is_lower_bound") is True:
        out.append(("The mechanism count is a lower bound: the numerical search stopped before finding every one.", []))
    parts = _int(stab.get("connected_parts"))
    if parts is not None and parts > 1:
        out.append((f"The model falls into {parts} separate parts.", []))
    details = _shared.mechanism_details(stab)
    for i, detail in enumerate(details[:MAX_MODES], 1):
        out.append((_mechanism_line(i, detail), []))
    if len(details) > MAX_MODES:
        out.append((f"… and {len(details) - MAX_MODES} more mechanisms ({SEE_JSON}).", []))
    fo = stab.get("first_order_test")
    if isinstance(fo, Mapping) and fo and (_int(stab.get("internal_mechanisms")) or 0) > 0:
        proof = f" ({fo['proof']})" if fo.get("proof") else ""
        head = "First-order test" + proof if fo.get("tested") else "First-order test not run"
        result = str(fo.get("result") or "")
        out.append((sentence(f"{head}: {result}" + (f" — {fo['reason']}" if fo.get("reason") else "")), []))
    states = [s for s in stab.get("self_stress_detail") or [] if isinstance(s, Mapping)]
    if states:
        subs = [_self_stress_line(i, s) for i, s in enumerate(states[:MAX_MODES], 1)]
        total = _int(stab.get("self_stress_states")) or len(states)
        if total > len(subs):
            subs.append(f"… and {total - len(subs)} more ({SEE_JSON})")
        out.append((f"{plural(total, 'state')} of self-stress (forces with no load):", subs))
    told = " ".join(str(d.get("description") or "") for d in details)
    for trap in stab.get("traps") or []:
        msg = str(trap.get("message") if isinstance(trap, Mapping) else trap)
        if msg and msg.rstrip(".") not in told:
            out.append((sentence("Trap: " + msg), []))
    for note in stab.get("notes") or []:
        out.append((sentence(f"Note: {note}"), []))
    return out


# --------------------------------------------------------------- precision
_PRECISION_KNOWN = {
    "status",
    "reason",
    "digits_requested",
    "digits_proven_min",
    "method",
    "input",
    "lambda_lo",
    "lambda_lo_scaled",
    "lambda_certificate",
    "lambda_reason",
    "condition_estimate",
    "condition_upper_bound",
    "condition_scaled_estimate",
    "data_precision",
    "data_precision_source",
    "certificate",
    "timings_s",
    "cases",
}


def precision_items(prec: Mapping[str, Any]) -> list[str]:
    """The precision block in sentences: status, digits, λ_lo and its certificate, condition, data, method.

    λ_lo is a proven lower bound of the smallest eigenvalue of the restrained
    stiffness matrix (a shifted Cholesky factorisation succeeding in rounded
    arithmetic proves K − λI positive definite, Rump 2006, "Verification of
    positive definiteness", BIT 46; recalled from memory).  Fields not known
    here are listed as ``key: value`` when they are single values.
    """
    if not prec:
        return ["Not reported."]
    f = _shared.fmt_number
    out = []
    status = prec.get("status")
    reason = str(prec.get("reason") or "")
    if status is not None:
        words = {"proven": "proven for every case", "not_established": "not established", "not_run": "not run"}
        out.append(sentence(f"Status: {words.get(str(status), str(status))}" + (f": {reason}" if reason else "")))
    digits = []
    if prec.get("digits_requested") is not None:
        digits.append(f"{prec['digits_requested']} digits requested")
    if prec.get("digits_proven_min") is not None:
        digits.append(f"at least {prec['digits_proven_min']} digits proven in every case")
    elif "digits_proven_min" in prec:
        digits.append("no digit proven")
    if digits:
        out.append(sentence("; ".join(digits)))
    if _shared.is_number(prec.get("lambda_lo")):
        how = f", certified by {prec['lambda_certificate']}" if prec.get("lambda_certificate") else ""
        scaled = f" (scaled: {f(prec['lambda_lo_scaled'])})" if _shared.is_number(prec.get("lambda_lo_scaled")) else ""
        out.append(f"λ_lo = {f(prec['lambda_lo'])}{scaled}, proven lower bound of the smallest eigenvalue of K{how}.")
    elif "lambda_lo" in prec:
        why = str(prec.get("lambda_reason") or "")
        out.append(sentence("λ_lo not certified" + (f": {why}" if why else "")))
    cond = []
    if _shared.is_number(prec.get("condition_estimate")):
        cond.append(f"estimate {f(prec['condition_estimate'])}")
    if _shared.is_number(prec.get("condition_upper_bound")):
        cond.append(f"proven upper bound {f(prec['condition_upper_bound'])}")
    if _shared.is_number(prec.get("condition_scaled_estimate")):
        cond.append(f"diagonally scaled estimate {f(prec['condition_scaled_estimate'])}")
    if cond:
        out.append(f"Condition number of K: {', '.join(cond)}.")
    data = []
    if _shared.is_number(prec.get("data_precision")):
        src = f" (from {prec['data_precision_source']})" if prec.get("data_precision_source") else ""
        data.append(f"input data rounded to a relative {f(prec['data_precision'], 3)}{src}")
    if prec.get("input"):
        data.append(f"read as {prec['input']}")
    if data:
        out.append(sentence("; ".join(data)))
    if prec.get("method"):
        out.append(sentence(f"Method: {prec['method']}"))
    for k in sorted((k for k in prec if k not in _PRECISION_KNOWN), key=str):
        v = prec[k]
        if not isinstance(v, (Mapping, list, tuple)):
            out.append(f"{k}: {_shared.fmt_value(v)}")
    return out


def precision_case_rows(prec: Mapping[str, Any]) -> list[list[str]]:
    """Per case: case, our status, digits proven, reported quantities within / beyond / undecided, bound, ω.

    The bound is the proven 2-norm distance of the reported displacements from
    the exact solution; ω the Oettli–Prager backward error of the reported
    displacements (Oettli & Prager 1964, Numer. Math. 6).
    """
    rows = []
    for c in prec.get("cases") or []:
        if not isinstance(c, Mapping):
            continue
        rep = _mapping(c.get("reported"))
        q = _mapping(rep.get("quantities"))
        kinds = [_mapping(v) for v in q.values()]
        within, beyond, undecided = (
            sum(_int(v.get(k)) or 0 for v in kinds) for k in ("within_rounding", "beyond_rounding", "undecided")
        )
        status = str(rep.get("status") or "")
        counts = f"{within} / {beyond} / {undecided}" if q else (status.replace("_", " ") or "-")
        rows.append(
            [
                str(c.get("case", "-")),
                str(c.get("status", "-")).replace("_", " "),
                _shared.fmt_number(c.get("digits_proven")),
                counts,
                _shared.fmt_number(rep.get("bound_to_exact"), 3),
                _shared.fmt_number(rep.get("backward_error"), 3),
            ]
        )
    return rows


PRECISION_CASE_HEADERS = ["case", "status", "digits", "reported: in / beyond / undecided", "‖Δd‖ bound", "ω"]
#: what the columns of :func:`precision_case_rows` mean
PRECISION_CASE_LEGEND = (
    "status, digits: our recomputation and the digits proven; reported: the case's reported numbers proven "
    "within / beyond their printed rounding of the exact solution, or undecided; ‖Δd‖ bound: proven 2-norm "
    "distance of the reported displacements from the exact ones; ω: their backward error."
)


# --------------------------------------------------------------- tolerances
def tolerance_items(tol: Mapping[str, Any]) -> list[str]:
    """The rule of judgement (when the usual names are present) and every tolerance as ``name = value``.

    The rule, ``allowed = quantum + max(relative·|expected|, floor·scale)``, is
    that of :meth:`audit.tolerances.Tolerances.allowed` (common practice).
    """
    if not tol:
        return ["None stated."]
    out = []
    if "relative" in tol and "floor" in tol:
        rounding = "" if tol.get("use_quanta") is False else "quantum + "
        out.append(f"allowed = {rounding}max(relative·|expected|, floor·scale of the kind in the case)")
    out.append(", ".join(f"{k} = {v}" for k, v in _shared.tolerance_lines(tol)))
    return out


# ----------------------------------------------------------------- findings
@functools.lru_cache(maxsize=1)
def _rule_summaries() -> dict[str, str]:
    try:
        from audit import engine  # lazily: the reporters do not need the checks otherwise
    except ImportError:  # pragma: no cover - the package is always complete
        return {}
    return {code: rule.summary for code, rule in engine.registry().items()}


def rule_summary(code: str) -> str | None:
    """The one-line summary of a finding code from the rule registry, None when unknown."""
    return _rule_summaries().get(code)


def _cases_of(group: Sequence[Finding]) -> list[str]:
    return list(dict.fromkeys(_shared.case_label(f.case) for f in group))


def info_groups(findings: Iterable[Finding]) -> list[tuple[str, int, str, list[str]]]:
    """Infos grouped by code: (code, count, text, cases), by code.

    The text is the finding's own message when there is one finding and it is
    short (≤ 90 characters), else the rule's summary, else the first message.
    """
    groups: dict[str, list[Finding]] = {}
    for f in findings:
        groups.setdefault(f.code, []).append(f)
    out = []
    for code in sorted(groups):
        group = _shared.sorted_findings(groups[code])
        msg = " ".join(group[0].message.split())
        summary = rule_summary(code)
        text = msg if (len(group) == 1 and len(msg) <= 90) or not summary else summary
        out.append((code, len(group), text, _cases_of(group)))
    return out


def strip_location(f: Finding) -> str:
    """The message without a leading ``"member X2: "`` that repeats the finding's location."""
    msg = " ".join(f.message.split())
    label = f.location.label()
    for head in (label, label.split(" ", 1)[-1]):
        if head and head != "model" and msg.startswith(head + ": "):
            return msg[len(head) + 2 :]
    return msg


def listed_findings(
    findings: Sequence[Finding], per_code: int = 4, total: int = 12
) -> tuple[list[Finding], list[tuple[str, int]]]:
    """The findings to list one by one (worst first, at most ``per_code`` of a code and ``total`` in all)
    and, per code, how many were left out."""
    shown: list[Finding] = []
    left: dict[str, int] = {}
    seen: dict[str, int] = {}
    for f in _shared.sorted_findings(findings):
        seen[f.code] = seen.get(f.code, 0) + 1
        if seen[f.code] <= per_code and len(shown) < total:
            shown.append(f)
        else:
            left[f.code] = left.get(f.code, 0) + 1
    return shown, sorted(left.items())


def diagnosis_groups(findings: Iterable[Finding]) -> list[tuple[Finding, list[str]]]:
    """Diagnoses of the same code, place and severity taken together: (worst finding, the other cases)."""
    groups: dict[tuple[Any, ...], list[Finding]] = {}
    for f in _shared.sorted_findings(findings):
        groups.setdefault((f.code, f.severity, _shared.location_key(f)), []).append(f)
    return [(g[0], [c for c in _cases_of(g[1:]) if c != _shared.case_label(g[0].case)]) for g in groups.values()]


def code_counts(findings: Iterable[Finding]) -> str:
    """``"RC101 ×70, RC102 ×30"``: codes by decreasing count, then by code."""
    counts: dict[str, int] = {}
    for f in findings:
        counts[f.code] = counts.get(f.code, 0) + 1
    return ", ".join(f"{c} ×{n}" for c, n in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))


def not_shown(all_findings: Sequence[Finding], shown: Sequence[Finding]) -> str | None:
    """The discrepancies left out of the table, by severity and code, in one sentence (None when none)."""
    ids = {id(f) for f in shown}
    rest = [f for f in all_findings if id(f) not in ids]
    if not rest:
        return None
    parts = []
    for sev in sorted(Severity, reverse=True):
        group = [f for f in rest if f.severity is sev]
        if group:
            parts.append(f"{plural(len(group), sev.label)} ({code_counts(group)})")
    return f"Not shown: {'; '.join(parts)}; {SEE_JSON}."


__all__ = [
    "KINDS",
    "MAX_CHECK_ROWS",
    "MAX_MEMBERS",
    "MAX_MODES",
    "MAX_ROWS_PER_CHECK",
    "PRECISION_CASE_HEADERS",
    "PRECISION_CASE_LEGEND",
    "SEE_JSON",
    "clip_words",
    "code_counts",
    "comparison_counts",
    "diagnosis_groups",
    "info_groups",
    "listed_findings",
    "name_list",
    "not_shown",
    "outcome_digest",
    "outcome_rows",
    "plural",
    "precision_case_rows",
    "precision_items",
    "rule_summary",
    "sentence",
    "some",
    "stability_items",
    "strip_location",
    "tolerance_items",
]
