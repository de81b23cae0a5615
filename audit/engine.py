"""Runs the checks on one model: builds the context, wraps crashing checks, filters.

Data flow: model -> system (assembly, supports) -> factor -> stability ->
solution -> precision -> checks -> outcomes -> filter (only / skip) ->
AuditResult.  No printing and no exit codes here.
"""

from __future__ import annotations

import traceback
from collections.abc import Callable, Iterable
from dataclasses import replace
from types import ModuleType
from typing import Any

from audit import __version__, precision, rules, stability
from audit.checks import (
    combinations,
    compatibility,
    diagnosis,
    equilibrium,
    nonlinear_states,
    precision_check,
    recompute,
    source_notes,
    stability_check,
    stiffness_health,
    supports,
)
from audit.context import Context
from audit.errors import UnsolvableError
from audit.findings import AuditResult, CheckOutcome, Finding, Location, Severity, Status
from audit.model import Model, Results
from audit.nonlinear.exact import nonlinear_precision
from audit.solve import build_system, factorize_system, solve_with
from audit.sources import SourceNote
from audit.timing import Timings, stage
from audit.tolerances import Tolerances

#: the check families, in the order they run and are reported
CHECK_MODULES: tuple[ModuleType, ...] = (
    source_notes,
    stability_check,
    nonlinear_states,
    stiffness_health,
    equilibrium,
    supports,
    compatibility,
    recompute,
    combinations,
    precision_check,
    diagnosis,
)


def registry() -> dict[str, rules.Rule]:
    """All finding codes, from the check modules' own RULES."""
    return rules.collect((rules.ENGINE_RULES, *(m.RULES for m in CHECK_MODULES)))


def build_context(
    model: Model,
    results: Results | None = None,
    *,
    tolerances: Tolerances | None = None,
    digits: int = 30,
    backend: str = "auto",
    progress: Callable[[str], None] | None = None,
    source_notes: tuple[SourceNote, ...] = (),
    timings: Timings | None = None,
) -> Context:
    """Assemble, factorise, analyse stability, solve and refine: the immutable context.

    ``timings``, when given, receives the seconds of each stage (:mod:`audit.timing`).
    """
    say = progress or (lambda _s: None)
    tol = tolerances or Tolerances()
    results = results if results is not None else model.results
    say("assembling the stiffness matrix")
    with stage(timings, "build"):
        system = build_system(model)
    factor = None
    cond = float("nan")
    reason = ""
    say("factorising the restrained stiffness")
    try:
        with stage(timings, "factorise"):
            factor, cond = factorize_system(model, system, backend)
    except UnsolvableError as exc:
        reason = exc.message
    say("checking stability and determinacy")
    with stage(timings, "stability"):
        stab = stability.analyse(model, system, factor, condition=cond)
    solution = None
    if factor is not None and stab.stable:
        say("recomputing displacements, forces and reactions")
        try:
            with stage(timings, "recompute"):
                solution = solve_with(model, system, factor, cond)
        except UnsolvableError as exc:
            reason = exc.message
    elif not reason:
        reason = "the model is unstable: " + stab.summary()
    prec = None
    prec_fault = ""
    if solution is not None and factor is not None and solution.nonlinear is not None:
        say("refining the active structures in high precision")
        try:
            prec = nonlinear_precision(model, solution, results, digits)
        except Exception as exc:  # reported as a crash of the precision stage, never as a pass
            last = traceback.extract_tb(exc.__traceback__)[-1]
            prec_fault = f"{type(exc).__name__}: {exc} at {last.filename.rsplit('/', 1)[-1]}:{last.lineno}"
    elif solution is not None and factor is not None:
        say("refining in high precision and proving error bounds")
        t0 = timings.clock() if timings is not None else 0.0
        try:
            prec = precision.analyse(model, system, factor, solution, results, digits=digits)
        except Exception as exc:  # reported as a crash of the precision stage, never as a pass
            last = traceback.extract_tb(exc.__traceback__)[-1]
            prec_fault = f"{type(exc).__name__}: {exc} at {last.filename.rsplit('/', 1)[-1]}:{last.lineno}"
        if timings is not None:
            _record_precision(timings, timings.clock() - t0, prec)
    return Context(
        model=model,
        results=results,
        tolerances=tol,
        system=system,
        factor=factor,
        condition=cond,
        stability=stab,
        solution=solution,
        unsolvable_reason=reason,
        precision=prec,
        precision_fault=prec_fault,
        source_notes=tuple(source_notes),
    )


def _record_precision(timings: Timings, seconds: float, prec: Any) -> None:
    """Split the precision stage into ``refine`` and ``certificate`` (the report's own timings)."""
    cert = dict(prec.timings).get("certificate", 0.0) if prec is not None else 0.0
    timings.add("refine", seconds - cert)
    timings.add("certificate", cert)


def run_checks(
    ctx: Context, modules: Iterable[ModuleType] = CHECK_MODULES, timings: Timings | None = None
) -> tuple[tuple[CheckOutcome, ...], tuple[str, ...]]:
    """Run every check family; a crashing family becomes an AU901 error under its own name.

    ``timings``: the diagnosis family is recorded as ``diagnosis``, all others as ``checks``.
    """
    outcomes: list[CheckOutcome] = []
    crashed: list[str] = []
    for module in modules:
        check_id = module.CHECK_ID
        try:
            with stage(timings, "diagnosis" if module is diagnosis else "checks"):
                outcomes.extend(module.run(ctx))
        except Exception as exc:  # a crashing check must never pass silently
            crashed.append(check_id)
            last = traceback.extract_tb(exc.__traceback__)[-1]
            outcomes.append(
                CheckOutcome(
                    check=check_id,
                    case=None,
                    status=Status.NOT_RUN,
                    reason=f"the check crashed: {type(exc).__name__}: {exc}",
                    findings=(
                        Finding(
                            code="AU901",
                            severity=Severity.ERROR,
                            message=f"check '{check_id}' crashed ({type(exc).__name__}: {exc}) "
                            f"at {last.filename.rsplit('/', 1)[-1]}:{last.lineno}; its result is unknown",
                            location=Location(),
                        ),
                    ),
                )
            )
    return tuple(outcomes), tuple(crashed)


def _keep(code: str, only: tuple[str, ...], skip: tuple[str, ...]) -> bool:
    if only and not any(code.startswith(s) for s in only):
        return False
    return not any(code.startswith(i) for i in skip)


def filter_outcomes(
    outcomes: tuple[CheckOutcome, ...], only: tuple[str, ...] = (), skip: tuple[str, ...] = ()
) -> tuple[CheckOutcome, ...]:
    """The decision step after all checks ran: keep only the findings whose codes start with one of ``only``
    (all when empty) and drop those whose codes start with one of ``skip``.

    AU9xx (engine) findings are never dropped.
    """
    out = []
    for o in outcomes:
        kept = tuple(f for f in o.findings if f.code.startswith("AU9") or _keep(f.code, only, skip))
        out.append(replace(o, findings=kept))
    return tuple(out)


def model_summary(model: Model) -> dict[str, object]:
    return {
        "title": model.title,
        "dimensions": model.dim,
        "joints": model.n_nodes,
        "members": model.n_members,
        "restraints": model.n_restraints,
        "springs": int(model.spring_node.size),
        "load_cases": len(model.load_cases),
        "combinations": len(model.combinations),
        "units": {"length": model.units.length, "force": model.units.force}
        | ({"temperature": model.units.temperature} if model.units.temperature else {}),
    }


def audit(model: Model, results: Results | None = None, **kwargs: Any) -> AuditResult:
    """Audit ``model`` against ``results`` (or the results inside the model).  See :func:`audit_with_context`."""
    return audit_with_context(model, results, **kwargs)[0]


def audit_with_context(
    model: Model,
    results: Results | None = None,
    *,
    tolerances: Tolerances | None = None,
    fail_on: Severity = Severity.ERROR,
    only: tuple[str, ...] = (),
    skip: tuple[str, ...] = (),
    digits: int = 30,
    backend: str = "auto",
    inputs: tuple[tuple[str, str], ...] = (),
    progress: Callable[[str], None] | None = None,
    source_notes: tuple[SourceNote, ...] = (),
    timings: Timings | None = None,
) -> tuple[AuditResult, Context]:
    """Audit ``model`` against ``results``; also return the context the checks read.

    ``source_notes`` are the source reader's remarks (:class:`audit.sources.SourceNote`), reported as findings.
    ``timings``, when given, receives the seconds of each stage (:mod:`audit.timing`); nothing of it
    goes into the result.
    """
    ctx = build_context(
        model,
        results,
        tolerances=tolerances,
        digits=digits,
        backend=backend,
        progress=progress,
        source_notes=source_notes,
        timings=timings,
    )
    if progress is not None:
        progress("running the checks")
    outcomes, crashed = run_checks(ctx, timings=timings)
    if ctx.precision_fault:
        crashed = (*crashed, "precision-stage")
        outcomes = (
            *outcomes,
            CheckOutcome(
                check="precision-stage",
                case=None,
                status=Status.NOT_RUN,
                reason="the high-precision stage crashed: " + ctx.precision_fault,
                findings=(
                    Finding(
                        code="AU901",
                        severity=Severity.ERROR,
                        message="the high-precision recomputation crashed (" + ctx.precision_fault + "); "
                        "its bounds are unknown",
                    ),
                ),
            ),
        )
    if ctx.solution is None:
        outcomes = (
            CheckOutcome(
                check="solve",
                case=None,
                status=Status.FAIL,
                reason=ctx.unsolvable_reason,
                findings=(
                    Finding(
                        code="AU902",
                        severity=Severity.ERROR,
                        message="the model could not be solved, so nothing could be recomputed: "
                        + ctx.unsolvable_reason,
                    ),
                ),
            ),
            *outcomes,
        )
    outcomes = filter_outcomes(outcomes, only, skip)
    result = AuditResult(
        title=model.title,
        outcomes=outcomes,
        fail_on=fail_on,
        tolerances=ctx.tolerances.as_dict(),
        model_summary=model_summary(model),
        stability=ctx.stability.as_dict(),
        precision=ctx.precision.as_dict()
        if ctx.precision is not None
        else {
            "status": "crashed" if ctx.precision_fault else "not_run",
            "reason": ctx.precision_fault or ctx.unsolvable_reason or "no solution",
        },
        crashed=crashed,
        inputs=inputs,
        version=__version__,
    )
    return result, ctx


def drawing_context(ctx: Context, deformed_case: str | None = None) -> dict[str, Any]:
    """Arrays the drawings need (recomputed displacements and forces per case), keyed for the reporters."""
    out: dict[str, Any] = {"displacements": {}, "axial_forces": {}, "deformed_case": None}
    if ctx.solution is not None:
        for c in ctx.solution.cases:
            out["displacements"][c.case_id] = c.displacements
            out["axial_forces"][c.case_id] = c.axial_forces
        ids = [c.case_id for c in ctx.solution.cases]
        if deformed_case in ids:
            out["deformed_case"] = deformed_case
        elif ids:
            out["deformed_case"] = ids[0]
    if ctx.results is not None:
        out["reported_axial_forces"] = {c.case_id: c.axial_forces for c in ctx.results.cases if c.has_axial_forces}
    return out


__all__ = [
    "CHECK_MODULES",
    "audit",
    "audit_with_context",
    "build_context",
    "drawing_context",
    "filter_outcomes",
    "registry",
    "run_checks",
]
