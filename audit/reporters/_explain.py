"""The root cause in plain words, for the opening lines of every report (right under the verdict).

Reads the diagnosis findings (code family DX) and the diagnosis outcomes' summaries (how many numbers
differed in each case); never parses messages beyond joining them.  A clean hand-off (no diagnosis
finding) gets no explanation at all.  The same sentences feed the terminal, Markdown, HTML and JUnit
reports, so they say the same thing.
"""

from __future__ import annotations

from dataclasses import dataclass

from audit.findings import AuditResult, Finding, Severity
from audit.reporters import _shared

#: the diagnosis check's id (the family of its outcomes)
DIAGNOSIS_CHECK = "diagnosis"
#: the code of "no explanation found"
NO_EXPLANATION = "DX001"
#: distinct explanations given in the opening lines, at most (the Diagnoses section has them all)
MAX_LEAD = 3


@dataclass(frozen=True)
class Explanation:
    """The causes found for one case (or the same causes for several cases)."""

    cases: tuple[str, ...]
    causes: tuple[Finding, ...]  #: empty when no explanation was found
    differing: int  #: numbers that differed from the recomputation in the first of the cases
    closest: Finding | None = None  #: the DX001 finding when nothing explained the differences

    def sentence(self) -> str:
        where = _cases(self.cases)
        if not self.causes:
            msg = self.closest.message if self.closest is not None else "no explanation found"
            return f"No explanation found{where}: {_tail(msg)}."
        n = len(self.causes)
        texts = [_cause_text(f) for f in self.causes]
        agreement = next((str(a) for f in self.causes if (a := f.data_dict().get("agreement"))), "")
        end = f"; {agreement}." if agreement else "."
        if n == 1:
            return f"The reported results{where} agree with the model except for one cause: {texts[0]}{end}"
        parts = "; ".join(f"({i}) {t}" for i, t in enumerate(texts, 1))
        return f"The reported results{where} agree with the model except for {n} causes: {parts}{end}"

    def grouped(self) -> list[str]:
        """``"132 differences, all explained by member X2"``, one line per cause."""
        if not self.causes or self.differing == 0:
            return []
        if len(self.causes) == 1:
            f = self.causes[0]
            return [f"{_shared_plural(self.differing, 'difference')}, all explained by {_where(f)} ({f.code})"]
        out = []
        for f in self.causes:
            k = f.data_dict().get("explains")
            if isinstance(k, int) and k > 0:
                out.append(f"{_shared_plural(k, 'difference')} explained by {_where(f)} ({f.code})")
        return out


def _cause_text(f: Finding) -> str:
    """The cause in words without its closing agreement clause (given once for the whole set)."""
    data = f.data_dict()
    text = str(data["cause"]) if isinstance(data.get("cause"), str) and data.get("agreement") else f.message
    return _first_lower(text.rstrip("."))


def _shared_plural(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def _where(f: Finding) -> str:
    label = f.location.label()
    if label == "model":
        return "the whole kind of quantity" if f.code in {"DX101", "DX102", "DX103", "DX110"} else "the model"
    return label


def _first_lower(text: str) -> str:
    return text[:1].lower() + text[1:] if text[:2] != text[:2].upper() else text


def _tail(text: str) -> str:
    return text.rstrip(".")


def _cases(cases: tuple[str, ...]) -> str:
    if not cases:
        return ""
    if len(cases) == 1:
        return f" of case '{cases[0]}'"
    shown = ", ".join(f"'{c}'" for c in cases[:4])
    more = f" and {len(cases) - 4} more" if len(cases) > 4 else ""
    return f" of cases {shown}{more}"


def _differing(result: AuditResult, case: str | None) -> int:
    for o in result.outcomes:
        if o.check == DIAGNOSIS_CHECK and o.case == case:
            return sum(int(v) for k, v in o.summary if k.endswith("_differing") and isinstance(v, int))
    return 0


def _signature(f: Finding) -> tuple[str, tuple[str, str, str], str]:
    text = f.message
    if f.case:
        text = text.replace(f"'{f.case}'", "'…'")
    return (f.code, _shared.location_key(f), text)


def explanations(result: AuditResult) -> list[Explanation]:
    """One explanation per distinct set of causes, cases with the same causes together, in case order."""
    by_case: dict[str | None, list[Finding]] = {}
    for f in result.findings:
        if _shared.is_diagnosis(f):
            by_case.setdefault(f.case, []).append(f)
    groups: dict[tuple[object, ...], tuple[list[str], list[Finding], int, Finding | None]] = {}
    for case, fs in by_case.items():
        causes = [f for f in fs if f.severity >= Severity.WARNING]
        closest = next((f for f in fs if f.code == NO_EXPLANATION), None)
        if not causes and closest is None:
            continue
        key: tuple[object, ...] = (
            tuple(sorted(_signature(f) for f in causes)) if causes else ("none", _signature(closest))  # type: ignore[arg-type]
        )
        label = _shared.case_label(case)
        if key in groups:
            groups[key][0].append(label)
        else:
            groups[key] = ([label], causes, _differing(result, case), closest)
    return [Explanation(tuple(c), tuple(fs), n, cl) for c, fs, n, cl in groups.values()]


def lead(result: AuditResult) -> list[str]:
    """The opening sentences (no line breaks): each distinct explanation, then the grouped differences; empty
    for a clean hand-off.  Explanations beyond ``MAX_LEAD`` are counted, not written."""
    items = explanations(result)
    if not items:
        return []
    out: list[str] = []
    for e in items[:MAX_LEAD]:
        out.append(e.sentence())
        out += e.grouped()
    if len(items) > MAX_LEAD:
        out.append(f"… and {len(items) - MAX_LEAD} more explanation(s) for other cases under Diagnoses.")
    return out


def cause_places(result: AuditResult) -> tuple[set[str], set[str]]:
    """(member ids, node ids) named as the place of a cause found, for drawings that mark them."""
    members: set[str] = set()
    nodes: set[str] = set()
    for f in result.findings:
        if _shared.is_diagnosis(f) and f.severity >= Severity.WARNING:
            if f.location.member is not None:
                members.add(f.location.member)
            elif f.location.node is not None:
                nodes.add(f.location.node)
    return members, nodes


__all__ = ["Explanation", "cause_places", "explanations", "lead"]
