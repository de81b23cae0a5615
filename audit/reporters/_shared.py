"""What every reporter shares: the caution text, ordering of findings, number formatting.

Reporters read the fields of :class:`audit.findings.AuditResult`; they never
parse messages.  The optional ``context`` dict a reporter receives may hold
(all keys optional, all read defensively):

``"case"`` (or ``"deformed_case"``)
    the load case or combination whose forces and deformed shape are drawn;
``"displacements"``
    ``{case id: (n_nodes, dim) array}``, recomputed nodal displacements;
``"axial_forces"``
    ``{case id: (n_members,) array}``, recomputed member forces (tension positive);
``"solution"``
    an object with ``.case(case_id)`` returning ``.displacements`` and
    ``.axial_forces`` (an :class:`audit.solve.Solution`), used where the two
    dicts above are absent;
``"max_rows"``
    how many rows the worst-discrepancy table shows;
``"colour"``
    ANSI colour in the terminal report (text reporter only).

Finding ``data`` keys read here, when a check provides them: ``"quantity"``
(what was compared, e.g. ``"axial force"``), ``"quantum"`` (half a unit in the
last printed digit of the reported number) and ``"within_rounding"`` (bool).
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping
from pathlib import PurePath
from typing import Any

from audit.findings import AuditResult, CheckOutcome, Finding, Severity, Status

#: printed, in these words, in every report
CAUTION = (
    "This audit checks the arithmetic and the internal consistency of one truss model and the results "
    "reported for it. It does not judge whether the design is adequate, and it does not replace design "
    "checks to the governing codes or the judgement of a licensed engineer."
)

#: the family prefix of diagnosis findings
DIAGNOSIS_PREFIX = "DX"

#: rows in the worst-discrepancy table unless ``context["max_rows"]`` says otherwise
DEFAULT_MAX_ROWS = 20

STATUS_WORDS = {Status.PASS: "pass", Status.FAIL: "fail", Status.NOT_RUN: "not run"}


# ----------------------------------------------------------------- numbers
def is_number(x: object) -> bool:
    """True for a real number that is not a bool."""
    if isinstance(x, bool):
        return False
    try:
        float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return False
    return not isinstance(x, str)


def fmt_number(x: object, sig: int = 6) -> str:
    """A number in at most ``sig`` significant digits; ``-`` for None, text for nan and inf."""
    if x is None:
        return "-"
    if not is_number(x):
        return str(x)
    v = float(x)  # type: ignore[arg-type]
    if math.isnan(v):
        return "nan"
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    if v == 0.0:
        return "0"
    text = f"{v:.{sig}g}"
    if "e" in text:
        mant, exp = text.split("e")
        text = f"{mant}e{int(exp):+d}"
    return text


def fmt_value(x: Any, sig: int = 6) -> str:
    """A tolerance, summary or data value: numbers by :func:`fmt_number`, containers flattened."""
    if isinstance(x, Mapping):
        return ", ".join(f"{k}={fmt_value(v, sig)}" for k, v in sorted(x.items(), key=lambda kv: str(kv[0])))
    if isinstance(x, (list, tuple)):
        if len(x) > 8:
            return "[" + ", ".join(fmt_value(v, sig) for v in x[:8]) + f", … ({len(x)} values)]"
        return "[" + ", ".join(fmt_value(v, sig) for v in x) + "]"
    if isinstance(x, bool) or x is None:
        return str(x).lower()
    if hasattr(x, "shape") and getattr(x, "ndim", 0) > 0:  # a numpy array
        return fmt_value(list(x.ravel().tolist()), sig)
    if is_number(x):
        return fmt_number(x, sig)
    return str(x)


def difference_of(f: Finding) -> float | None:
    """The finding's own difference, else reported minus expected when both are numbers."""
    if f.difference is not None:
        return float(f.difference)
    if f.reported is not None and f.expected is not None:
        return float(f.reported) - float(f.expected)
    return None


def excess(f: Finding) -> float:
    """|difference| / tolerance: how many tolerances the discrepancy spans (inf when tolerance is 0)."""
    d = difference_of(f)
    if d is None or math.isnan(d):
        return 0.0
    tol = f.tolerance
    if tol is None or math.isnan(float(tol)):
        return abs(d)
    if float(tol) <= 0.0:
        return math.inf if d != 0.0 else 0.0
    return abs(d) / float(tol)


# ---------------------------------------------------------------- ordering
def location_key(f: Finding) -> tuple[str, str, str]:
    loc = f.location
    return (loc.member or "", loc.node or "", loc.axis or "")


def finding_order(f: Finding) -> tuple[Any, ...]:
    """Worst first: severity, then size of the discrepancy, then code, case and place (deterministic)."""
    ex = excess(f)
    return (-int(f.severity), -ex if not math.isnan(ex) else 0.0, f.code, f.case or "", location_key(f), f.message)


def sorted_findings(findings: Iterable[Finding]) -> list[Finding]:
    return sorted(findings, key=finding_order)


def has_numbers(f: Finding) -> bool:
    return f.reported is not None and f.expected is not None


def is_diagnosis(f: Finding) -> bool:
    return f.code.startswith(DIAGNOSIS_PREFIX)


def discrepancies(result: AuditResult) -> list[Finding]:
    """Findings that compare a reported number with an expected one, worst first (diagnoses excluded)."""
    return sorted_findings(f for f in result.findings if has_numbers(f) and not is_diagnosis(f))


def diagnoses(result: AuditResult) -> list[Finding]:
    return sorted_findings(f for f in result.findings if is_diagnosis(f))


def other_findings(result: AuditResult) -> list[Finding]:
    """Findings that are neither numeric discrepancies nor diagnoses, worst first."""
    return sorted_findings(f for f in result.findings if not has_numbers(f) and not is_diagnosis(f))


def max_rows(context: Mapping[str, Any] | None, default: int = DEFAULT_MAX_ROWS) -> int:
    if context and isinstance(context.get("max_rows"), int) and context["max_rows"] > 0:
        return int(context["max_rows"])
    return default


# ------------------------------------------------------------- fine detail
def case_label(case: str | None) -> str:
    return case if case is not None else "(model)"


#: the family of each code prefix (the prefixes are fixed by the check protocol)
FAMILIES = {
    "ST": "stability",
    "KH": "stiffness health",
    "EQ": "equilibrium",
    "SP": "support consistency",
    "CP": "compatibility",
    "RC": "recomputation",
    "CB": "combinations",
    "HP": "high precision",
    "DX": "diagnosis",
    "AU": "engine",
}


def family_of(code: str) -> str:
    """The family a finding code belongs to, in words (the code itself when its prefix is unknown)."""
    return FAMILIES.get(code[:2], code)


def quantity_of(f: Finding) -> str:
    """What was compared: the check's ``quantity`` data, else the code's family; units appended."""
    q = f.data_dict().get("quantity") or family_of(f.code)
    return f"{q} [{f.units}]" if f.units else str(q)


def rounding_note(f: Finding) -> str:
    """The severity, plus what the check said about print rounding (``within_rounding``, ``quantum``)."""
    data = f.data_dict()
    quantum = data.get("quantum")
    notes = []
    if data.get("within_rounding") is True:
        notes.append("in rounding")
    if is_number(quantum) and float(quantum) > 0.0:  # type: ignore[arg-type]
        notes.append(f"±{fmt_number(quantum, 2)}")
    return f.severity.label + (f" ({', '.join(notes)})" if notes else "")


def extra_data(f: Finding, skip: tuple[str, ...] = ("quantity", "quantum", "within_rounding")) -> list[tuple[str, str]]:
    return [(str(k), fmt_value(v)) for k, v in f.data if k not in skip]


def outcome_counts(o: CheckOutcome) -> dict[str, int]:
    counts = {s.label: 0 for s in sorted(Severity, reverse=True)}
    for f in o.findings:
        counts[f.severity.label] += 1
    return counts


def count_text(counts: Mapping[str, int]) -> str:
    parts = [f"{n} {label}{'s' if n != 1 else ''}" for label, n in counts.items() if n]
    return ", ".join(parts) if parts else "no findings"


def status_totals(result: AuditResult) -> dict[str, int]:
    totals = {"pass": 0, "fail": 0, "not_run": 0}
    for o in result.outcomes:
        totals[o.status.value] += 1
    return totals


def severity_totals(result: AuditResult) -> dict[str, int]:
    totals = {s.label: 0 for s in sorted(Severity, reverse=True)}
    for f in result.findings:
        totals[f.severity.label] += 1
    return totals


def model_sentence(summary: Mapping[str, Any]) -> str:
    """The model summary in one sentence, from ``AuditResult.model_summary``."""
    if not summary:
        return "no model summary available"

    def n(key: str, word: str) -> str | None:
        v = summary.get(key)
        if v is None:
            return None
        return f"{v} {word}{'' if v == 1 else 's'}"

    dim = summary.get("dimensions")
    head = {2: "plane truss (2-D)", 3: "space truss (3-D)"}.get(dim, "truss") if dim is not None else "truss"
    parts = [
        p
        for p in (
            n("joints", "joint"),
            n("members", "member"),
            n("restraints", "restraint"),
            n("springs", "spring"),
            n("load_cases", "load case"),
            n("combinations", "combination"),
        )
        if p
    ]
    units = summary.get("units")
    utext = ""
    if isinstance(units, Mapping) and units:
        utext = "; units " + ", ".join(f"{k} {v}" for k, v in units.items())
    return f"{head}: " + ", ".join(parts) + utext


def _plural(n: int, word: str, plural: str | None = None) -> str:
    return f"{n} {word if n == 1 else (plural or word + 's')}"


def mechanism_details(stability: Mapping[str, Any]) -> list[dict[str, Any]]:
    """The stability block's mechanism descriptions, normalised to dicts with ``description`` and ``mode``.

    Read defensively: ``mechanisms_detail`` (or ``mechanism_details``, ``mechanism_modes``)
    may be a list of strings or of dicts with a description under ``description``,
    ``text`` or ``summary`` and a per-node movement under ``mode``, ``vector`` or
    ``displacements``.
    """
    raw: Any = None
    for key in ("mechanisms_detail", "mechanism_details", "mechanism_modes", "mechanisms_details"):
        if stability.get(key):
            raw = stability[key]
            break
    if raw is None or isinstance(raw, (str, bytes)) or not isinstance(raw, Iterable):
        return []
    out: list[dict[str, Any]] = []
    for item in raw:
        if isinstance(item, str):
            out.append({"description": item, "mode": None})
        elif isinstance(item, Mapping):
            desc = next((str(item[k]) for k in ("description", "text", "summary", "kind") if item.get(k)), "")
            mode = next((item[k] for k in ("mode", "vector", "displacements", "movement") if k in item), None)
            out.append({"description": desc, "mode": mode, "raw": dict(item)})
    return out


def tolerance_lines(tolerances: Mapping[str, Any]) -> list[tuple[str, str]]:
    return [(str(k), fmt_value(v)) for k, v in sorted(tolerances.items(), key=lambda kv: str(kv[0]))]


def verdict_line(result: AuditResult) -> str:
    """The line ``VERDICT: FAIL (…)``: the verdict word and :func:`verdict_detail`."""
    return f"VERDICT: {result.verdict.upper()} ({verdict_detail(result)})"


def verdict_detail(result: AuditResult) -> str:
    """How many findings reach the failing severity, crashed checks, and the totals by severity."""
    tot = severity_totals(result)
    failing = sum(1 for f in result.findings if f.severity >= result.fail_on)
    tail = f"{failing} finding{'s' if failing != 1 else ''} at or above {result.fail_on.label}"
    if result.crashed:
        tail += f"; crashed checks: {', '.join(result.crashed)}"
    return f"{tail}; {count_text(tot)} in all"


def member_verdicts(result: AuditResult) -> dict[str, Severity]:
    """The worst severity raised against each member id."""
    worst: dict[str, Severity] = {}
    for f in result.findings:
        m = f.location.member
        if m is not None and (m not in worst or f.severity > worst[m]):
            worst[m] = f.severity
    return worst


def failing_members(result: AuditResult) -> list[str]:
    """Member ids with a finding at or above the failing severity, sorted naturally."""
    return sorted((m for m, s in member_verdicts(result).items() if s >= result.fail_on), key=natural_key)


def natural_key(text: str) -> tuple[Any, ...]:
    """Sort key putting "2" before "10" and keeping text ids in order."""
    return tuple((0, int(p), "") if p.isdigit() else (1, 0, p) for p in re.split(r"(\d+)", text) if p)


def file_name(name: str) -> str:
    """The last part of an input's name: reports carry no directories (no absolute paths)."""
    return PurePath(name.replace("\\", "/")).name or name
