"""Audit many models: one process per job, one verdict per model, one summary for the batch.

Each model is read and audited in a worker process of a
:class:`concurrent.futures.ProcessPoolExecutor` (``jobs`` of them; with
``jobs=1`` in this process).  A model that cannot be read is reported with
its reader problems and does not stop the others; neither does a model
whose audit raises.  The entries come back in the order of their paths
(sorted), whatever order the workers finish in, so that the summary and the
JSON and JUnit documents of a batch are reproducible.

Workers start by ``spawn`` (a fresh interpreter: the OpenMP runtime behind
MKL does not survive ``fork``) and each uses one BLAS/OpenMP thread, as does
``jobs=1`` (:func:`single_thread`) and a Dask cluster (:mod:`audit.cluster`):
kernels sum in an order that depends on their thread count, and a batch's
documents must be the same bytes however it ran.

Entry status, and the batch exit code (the worst over the entries, the same
codes as for one model): ``pass`` 0, ``fail`` 1, ``input_error`` 2
(unreadable file or bad results file), ``crashed`` 3 (the audit raised, or
a check crashed, or the worker died).
"""

from __future__ import annotations

import json
import os
import time
import traceback
import xml.etree.ElementTree as ET
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import Future, ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from multiprocessing import get_context
from pathlib import Path
from typing import Any

from audit.exchange.positions import ModelPositions
from audit.findings import AuditResult, Severity

#: exit code of each entry status (the same as the single-model command line)
EXIT_CODES = {"pass": 0, "fail": 1, "input_error": 2, "crashed": 3}

BATCH_FORMAT = "truss-audit-batch-report"


@dataclass(frozen=True)
class BatchEntry:
    """The outcome of one model of the batch."""

    path: str  #: the model file
    results_path: str | None  #: a separate results file, if any
    status: str  #: "pass", "fail", "input_error" or "crashed"
    seconds: float  #: wall time of reading and auditing this model
    result: AuditResult | None = None  #: None when the model could not be read or the audit raised
    #: reader problems: (JSON path, message), for status "input_error"
    problems: tuple[tuple[str, str], ...] = ()
    #: for each problem, the item its path points at by id (``member '9'``), or ""
    problem_items: tuple[str, ...] = ()
    error: str = ""  #: one-line reason for "input_error" / "crashed"
    json_report: str | None = None  #: the per-model JSON report (audit.reporters.json_report), when rendered
    junit_report: str | None = None  #: the per-model JUnit XML (audit.reporters.junit), when rendered
    model_facts: tuple[tuple[str, Any], ...] = ()  #: (key, value) from the model summary: dimensions, joints, ...
    #: where the model's items are written in its file (for SARIF; only when asked, audit_kwargs["sarif"])
    positions: ModelPositions | None = None

    @property
    def exit_code(self) -> int:
        return EXIT_CODES[self.status]

    def counts(self) -> dict[str, int]:
        """Findings by severity and checks by status (zeros when not audited)."""
        out = {"errors": 0, "warnings": 0, "checks_failed": 0, "checks_not_run": 0}
        if self.result is None:
            return out
        for f in self.result.findings:
            if f.severity >= Severity.ERROR:
                out["errors"] += 1
            elif f.severity >= Severity.WARNING:
                out["warnings"] += 1
        for o in self.result.outcomes:
            if o.status.value == "fail":
                out["checks_failed"] += 1
            elif o.status.value == "not_run":
                out["checks_not_run"] += 1
        return out


@dataclass(frozen=True)
class BatchResult:
    entries: tuple[BatchEntry, ...]  #: sorted by path
    jobs: int
    seconds: float  #: wall time of the whole batch
    tally: dict[str, int] = field(default_factory=dict)  #: entries per status
    cluster: str = ""  #: the Dask cluster it ran on (``local:2``, ``tcp://host:8786``), "" for local processes

    @property
    def verdict(self) -> str:
        return "pass" if all(e.status == "pass" for e in self.entries) else "fail"


# ------------------------------------------------------------------ worker
def _limit_threads(threads: int) -> None:
    """Cap the OpenMP/BLAS threads of this worker (read by MKL and OpenBLAS when first loaded)."""
    for name in ("OMP_NUM_THREADS", "MKL_NUM_THREADS", "OPENBLAS_NUM_THREADS"):
        os.environ[name] = str(threads)


def single_thread() -> Any:
    """A context in which MKL, OpenBLAS and OpenMP use one thread (threadpoolctl), as batch workers do.

    Dense and sparse kernels sum in an order that depends on their thread count, so the last bits of
    a bound differ between 1 and 2 threads; every way of running a batch therefore uses one thread
    per model, and its documents are the same bytes.
    """
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1)


def _tolerances(kwargs: Mapping[str, Any]) -> Any:
    from audit.tolerances import Tolerances

    policy = kwargs.get("policy")
    tol = Tolerances.from_policy(policy) if policy else Tolerances()
    overrides: dict[str, float] = {}
    for item in kwargs.get("tol", ()):
        name, _sep, value = str(item).partition("=")
        try:
            overrides[name.strip()] = float(value)
        except ValueError:
            raise ValueError(f"tolerance {item!r}: give NAME=NUMBER, e.g. relative=0.001") from None
    return tol.override(**overrides) if overrides else tol


def _engine_kwargs(kwargs: Mapping[str, Any]) -> dict[str, Any]:
    """audit_kwargs of the batch -> keyword arguments of :func:`audit.engine.audit`."""
    out: dict[str, Any] = {}
    for key in ("only", "skip"):
        if key in kwargs:
            out[key] = tuple(kwargs[key])
    for key in ("digits", "backend"):
        if key in kwargs:
            out[key] = kwargs[key]
    if "fail_on" in kwargs:
        fo = kwargs["fail_on"]
        out["fail_on"] = fo if isinstance(fo, Severity) else Severity.parse(str(fo))
    if kwargs.get("policy") or kwargs.get("tol"):
        out["tolerances"] = _tolerances(kwargs)
    elif "tolerances" in kwargs:
        out["tolerances"] = kwargs["tolerances"]
    return out


def _render(result: AuditResult, model: Any) -> tuple[str | None, str | None]:
    """The per-model JSON and JUnit reports (None for a reporter that is not installed)."""
    texts: list[str | None] = []
    for name in ("json_report", "junit"):
        try:
            module = __import__(f"audit.reporters.{name}", fromlist=["render"])
        except ImportError:
            texts.append(None)
            continue
        texts.append(module.render(result, model))
    return texts[0], texts[1]


def audit_file(model_path: str, results_path: str | None, audit_kwargs: Mapping[str, Any]) -> BatchEntry:
    """Read and audit one model; never raises (every failure becomes the entry's status)."""
    from audit import engine
    from audit.errors import InputError
    from audit.sources import load_source, load_source_results

    t0 = time.perf_counter()
    try:
        read = load_source(model_path)  # a model JSON, a workbook, a folder of tables or an IFC file
        model, results, notes = read.model, read.results, read.notes
        if results_path:
            given = load_source_results(results_path, model)
            results, notes = given.results, notes + given.notes
    except InputError as exc:
        problems = tuple((p.path, p.message) for p in exc.problems)
        first = problems[0][1] if problems else str(exc)
        return BatchEntry(
            model_path,
            results_path,
            "input_error",
            time.perf_counter() - t0,
            problems=problems,
            problem_items=tuple(p.item for p in exc.problems),
            error=first,
        )
    except OSError as exc:
        return BatchEntry(
            model_path, results_path, "input_error", time.perf_counter() - t0, error=f"{exc.strerror or exc}"
        )
    try:
        result = engine.audit(model, results, source_notes=notes, **_engine_kwargs(audit_kwargs))
        json_text, junit_text = _render(result, model)
    except Exception as exc:  # the audit itself must not take the batch down
        last = traceback.extract_tb(exc.__traceback__)[-1]
        where = f"{Path(last.filename).name}:{last.lineno}"
        return BatchEntry(
            model_path,
            results_path,
            "crashed",
            time.perf_counter() - t0,
            error=f"{type(exc).__name__}: {exc} (at {where})",
        )
    positions = None
    if audit_kwargs.get("sarif"):
        from audit.exchange.positions import locate_file

        positions = locate_file(model_path)
    status = "crashed" if result.crashed else result.verdict
    facts = tuple(
        (k, result.model_summary[k]) for k in ("dimensions", "joints", "members") if k in result.model_summary
    )
    return BatchEntry(
        model_path,
        results_path,
        status,
        time.perf_counter() - t0,
        result=result,
        error=f"check(s) crashed: {', '.join(result.crashed)}" if result.crashed else "",
        json_report=json_text,
        junit_report=junit_text,
        model_facts=facts,
        positions=positions,
    )


# ------------------------------------------------------------------- batch
def _pairs(paths: Sequence[str | os.PathLike[str] | tuple[Any, Any]]) -> list[tuple[str, str | None]]:
    pairs: list[tuple[str, str | None]] = []
    for item in paths:
        if isinstance(item, tuple):
            model, res = item
            pairs.append((str(model), None if res is None else str(res)))
        else:
            pairs.append((str(item), None))
    return sorted(pairs)


def run_batch(
    paths: Sequence[str | os.PathLike[str] | tuple[Any, Any]],
    jobs: int = 1,
    audit_kwargs: Mapping[str, Any] | None = None,
    *,
    cluster: str | None = None,
    cluster_timeout: float | None = None,
    work: Callable[[str, str | None, Mapping[str, Any]], BatchEntry] | None = None,
) -> BatchResult:
    """Audit every model in ``paths``; the entries come back sorted by path.

    Parameters
    ----------
    paths
        Model files, or (model file, results file or None) pairs.
    jobs
        Worker processes; 1 audits in this process.  More than the number of
        models is not used.
    audit_kwargs
        Passed on to :func:`audit.engine.audit`: ``fail_on`` (a Severity or
        its name), ``only``, ``skip``, ``digits``, ``backend``, and the
        tolerances, either ``tolerances`` (a Tolerances) or ``policy`` (a
        policy file) and ``tol`` (``NAME=VALUE`` overrides); ``sarif`` (True: locate the
        items in each model file for the SARIF report).
    cluster
        None: local processes (``jobs``).  A Dask scheduler address or ``local:N``: the models
        are sent to that cluster (:mod:`audit.cluster`); ``jobs`` is then not used.
    cluster_timeout
        Seconds allowed to reach the scheduler or start the local cluster
        (default :data:`audit.cluster.CONNECT_TIMEOUT`).
    work
        The unit of work, :func:`audit_file` unless a test wraps it.

    Raises
    ------
    ValueError
        for a bad option in ``audit_kwargs`` (before any model is read);
        problems with a model are never raised, they are its entry's status.
    audit.cluster.ClusterError
        for a bad ``cluster`` value, dask missing, or a scheduler that does not answer (before any
        model is sent).
    """
    kwargs = dict(audit_kwargs or {})
    _engine_kwargs(kwargs)  # a bad option (tolerance, severity) fails here, once, before any model is read
    pairs = _pairs(paths)
    t0 = time.perf_counter()
    task = work or audit_file
    if cluster is not None:
        from audit import cluster as dask_cluster

        spec = dask_cluster.parse(cluster)
        timeout = dask_cluster.CONNECT_TIMEOUT if cluster_timeout is None else cluster_timeout
        entries = dask_cluster.run(pairs, spec, kwargs, work=task, timeout=timeout) if pairs else []
        jobs = spec.local_workers or max(1, int(jobs))
    else:
        jobs = max(1, min(int(jobs), len(pairs) or 1))
        if jobs == 1:
            with single_thread():
                entries = [task(m, r, kwargs) for m, r in pairs]
        else:
            entries = _run_pool(pairs, jobs, kwargs, task)
    tally = {s: sum(e.status == s for e in entries) for s in EXIT_CODES}
    return BatchResult(
        entries=tuple(entries),
        jobs=jobs,
        seconds=time.perf_counter() - t0,
        tally=tally,
        cluster=spec.label if cluster is not None else "",
    )


def _run_pool(
    pairs: list[tuple[str, str | None]],
    jobs: int,
    kwargs: dict[str, Any],
    task: Callable[[str, str | None, Mapping[str, Any]], BatchEntry],
) -> list[BatchEntry]:
    threads = 1  # as in every other way of running a batch: the same sums in the same order, the same bytes
    out: list[BatchEntry | None] = [None] * len(pairs)
    with ProcessPoolExecutor(
        max_workers=jobs, mp_context=get_context("spawn"), initializer=_limit_threads, initargs=(threads,)
    ) as pool:
        futures: list[Future[BatchEntry]] = [pool.submit(task, m, r, kwargs) for m, r in pairs]
        for i, fut in enumerate(futures):
            try:
                out[i] = fut.result()
            except BrokenProcessPool:
                m, r = pairs[i]
                out[i] = BatchEntry(m, r, "crashed", 0.0, error="the worker process died (out of memory or killed)")
            except Exception as exc:  # e.g. a result that could not be sent back
                m, r = pairs[i]
                out[i] = BatchEntry(m, r, "crashed", 0.0, error=f"{type(exc).__name__}: {exc}")
    return [e for e in out if e is not None]


def exit_code(batch: BatchResult) -> int:
    """The worst exit code over the entries (0 when all pass; 2 for an empty batch)."""
    if not batch.entries:
        return EXIT_CODES["input_error"]
    return max(e.exit_code for e in batch.entries)


# --------------------------------------------------------------- reporting
def render_summary(batch: BatchResult) -> str:
    """A plain-text table, one row per model, and a tally line.

    No wall times and nothing of how the batch ran: the same models give the same bytes with
    ``--jobs 1``, ``--jobs N`` or a cluster (:func:`render_timing` says how long it took).
    """
    from tabulate import tabulate

    rows = []
    for e in batch.entries:
        c = e.counts()
        facts = dict(e.model_facts)
        size = f"{facts.get('dimensions', '')}D {facts.get('members', '')}" if facts else ""
        note = e.error
        if e.status == "input_error" and e.problems:
            more = f" (+{len(e.problems) - 1} more)" if len(e.problems) > 1 else ""
            note = f"{_problem_text(e, 0)}{more}"
        rows.append((e.path, e.status, size, c["errors"], c["warnings"], c["checks_not_run"], note))
    table = tabulate(
        rows,
        headers=["model", "status", "members", "errors", "warnings", "not run", "note"],
        tablefmt="simple",
        disable_numparse=True,
    )
    tally = ", ".join(f"{n} {s.replace('_', ' ')}" for s, n in batch.tally.items() if n)
    return f"{table}\n\nbatch: {len(batch.entries)} models ({tally or 'none'}), verdict {batch.verdict}\n"


def render_timing(batch: BatchResult) -> str:
    """How long the batch took and where it ran, and the slowest model: one line for the terminal."""
    slowest = max(batch.entries, key=lambda e: e.seconds, default=None)
    where = f"on the cluster {batch.cluster}" if batch.cluster else f"with {batch.jobs} job(s)"
    tail = f"; slowest {slowest.path} {slowest.seconds:.2f} s" if slowest is not None else ""
    return f"batch: {batch.seconds:.1f} s {where}{tail}\n"


def _problem_text(e: BatchEntry, i: int) -> str:
    """One reader problem as people read it: ``members[3] (member '9'): zero length ...``."""
    path, msg = e.problems[i]
    item = e.problem_items[i] if i < len(e.problem_items) else ""
    return f"{path} ({item}): {msg}" if item else f"{path}: {msg}"


def _entry_doc(e: BatchEntry) -> dict[str, Any]:
    doc: dict[str, Any] = {
        "path": e.path,
        "results": e.results_path,
        "status": e.status,
    }  # no wall times: the same inputs must give the same bytes (times are in the terminal summary)
    doc.update(e.counts())
    if e.error:
        doc["error"] = e.error
    if e.problems:
        items = e.problem_items or ("",) * len(e.problems)
        doc["problems"] = [
            {"path": p, **({"item": it} if it else {}), "message": m}
            for (p, m), it in zip(e.problems, items, strict=False)
        ]
    if e.json_report is not None:
        doc["report"] = json.loads(e.json_report)
    return doc


def render_batch_json(batch: BatchResult) -> str:
    """One JSON document for the batch: verdict, tally, and per model its status and its own JSON report."""
    doc = {
        "format": BATCH_FORMAT,
        "version": 1,
        "verdict": batch.verdict,
        "exit_code": exit_code(batch),
        "tally": batch.tally,
        "models": [_entry_doc(e) for e in batch.entries],
    }
    return json.dumps(doc, indent=2, sort_keys=False) + "\n"


def _error_suite(e: BatchEntry) -> ET.Element:
    suite = ET.Element("testsuite", name=e.path, tests="1", failures="0", errors="1", skipped="0")
    case = ET.SubElement(suite, "testcase", classname=e.path, name="read" if e.status == "input_error" else "audit")
    err = ET.SubElement(case, "error", message=e.error, type=e.status)
    err.text = "\n".join(_problem_text(e, i) for i in range(len(e.problems))) or e.error
    return suite


def _outcome_suite(e: BatchEntry, result: AuditResult) -> ET.Element:
    """A plain suite from the outcomes, used only when the JUnit reporter was not available to the worker."""
    suite = ET.Element("testsuite", name=e.path, tests=str(len(result.outcomes)), errors="0")
    failures = skipped = 0
    for o in result.outcomes:
        case = ET.SubElement(suite, "testcase", classname=e.path, name=f"{o.check}[{o.case or 'model'}]")
        if o.status.value == "fail":
            failures += 1
            codes = " ".join(f.code for f in o.findings if f.severity >= result.fail_on)
            ET.SubElement(case, "failure", message=o.reason or codes, type=codes)
        elif o.status.value == "not_run":
            skipped += 1
            ET.SubElement(case, "skipped", message=o.reason)
    suite.set("failures", str(failures))
    suite.set("skipped", str(skipped))
    return suite


def render_batch_sarif(batch: BatchResult, min_severity: Severity = Severity.INFO) -> str:
    """SARIF 2.1.0 for the batch: one run, the models' findings in path order; unread models as notifications."""
    from audit.engine import registry
    from audit.reporters import sarif

    models = []
    for e in batch.entries:
        problems = tuple(_problem_text(e, i) for i in range(len(e.problems))) or ((e.error,) if e.error else ())
        models.append(sarif.SarifModel(e.path, e.result, e.positions, problems if e.result is None else ()))
    return sarif.render(models, registry(), min_severity)


def render_batch_junit(batch: BatchResult) -> str:
    """JUnit XML: the per-model suites (from audit.reporters.junit) under one ``testsuites`` root.

    A model that could not be read or whose audit raised gets a suite of one
    test case with an ``error`` element carrying the problems.
    """
    root = ET.Element("testsuites", name="truss-audit batch")
    for e in batch.entries:
        if e.result is None:
            root.append(_error_suite(e))
            continue
        if e.junit_report is None:
            root.append(_outcome_suite(e, e.result))
            continue
        doc = ET.fromstring(e.junit_report)
        suites = [doc] if doc.tag == "testsuite" else list(doc.iter("testsuite"))
        for s in suites:  # the same check families recur in every model: qualify them by the file
            s.set("name", f"{e.path}: {s.get('name', '')}")
            s.set("file", e.path)
            for case in s.iter("testcase"):
                case.set("classname", f"{e.path}: {case.get('classname', '')}")
            root.append(s)
    totals = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    for s in root.iter("testsuite"):
        for k in totals:
            totals[k] += int(s.get(k, "0"))
    for k, v in totals.items():
        root.set(k, str(v))
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


__all__ = [
    "BATCH_FORMAT",
    "EXIT_CODES",
    "BatchEntry",
    "BatchResult",
    "audit_file",
    "exit_code",
    "render_batch_json",
    "render_batch_junit",
    "render_batch_sarif",
    "render_summary",
    "render_timing",
    "run_batch",
]
