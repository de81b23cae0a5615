"""The command line: the only place that reads argv, prints or exits.

Commands
--------
``truss-audit check SOURCE [RESULTS] ...``  audit reported results (exit 0 pass, 1 fail); a source is a
                                            model JSON, a workbook, a folder of tables or an IFC file
``truss-audit solve MODEL -o RESULTS``      solve every case and write a results file
``truss-audit import SOURCE -o MODEL.json`` write a source in the neutral format
``truss-audit template -o BLANK.xlsx``      write the empty tables of the tables contract
``truss-audit explain [CODE]``               the finding codes, or what one code establishes and how to act

Exit codes (documented in the README):

====  ==========================================================
0     pass (``check``) or written (``solve``)
1     the audit failed: a finding at or above ``--fail-on``
2     bad input or usage; nothing was written
3     a check crashed (reported under its own name); audit failed
4     ``solve`` only: the model cannot be solved (mechanism or singular), or a case of a model with
      tension-only or compression-only members has no solution (the other cases are written)
====  ==========================================================
"""

from __future__ import annotations

import argparse
import contextlib
import hashlib
import json
import re
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, TextIO

from audit import __version__
from audit.errors import InputError, Problem, UnsolvableError
from audit.findings import AuditResult, Severity
from audit.timing import Timings, stage

if TYPE_CHECKING:
    from audit.model import Model
    from audit.tolerances import Tolerances

EXIT_PASS = 0
EXIT_FAIL = 1
EXIT_INPUT = 2
EXIT_CRASH = 3
EXIT_UNSOLVABLE = 4

#: solver names accepted by --solver (audit.linsolve.BACKENDS, kept here so argv parsing imports no numerics)
_SOLVERS = ("auto", "pardiso", "cholmod", "splu")


class _Parser(argparse.ArgumentParser):
    """argparse that raises instead of exiting, so usage errors become exit code 2 with our message."""

    def error(self, message: str) -> None:  # type: ignore[override]
        raise _UsageError(f"{self.prog}: {message}")


class _UsageError(Exception):
    pass


def _parser() -> _Parser:
    p = _Parser(prog="truss-audit", description="Independent verification of truss analyses.")
    p.add_argument("--version", action="version", version=f"truss-audit {__version__}")
    sub = p.add_subparsers(dest="command", parser_class=_Parser)

    c = sub.add_parser("check", help="audit the results reported for one or more models")
    c.add_argument(
        "inputs",
        nargs="+",
        metavar="SOURCE",
        help="model sources (JSON, workbook, folder of tables, IFC; results may follow their model), or folders",
    )
    c.add_argument("--map", metavar="MAP.toml", help="mapping file for tables whose names or headers differ")
    c.add_argument("--ifc-model", metavar="NAME", help="the structural analysis model to read from an IFC file")
    c.add_argument("--results", metavar="PATH", help="results file for a single model (instead of a second positional)")
    c.add_argument("--json", metavar="PATH", help="write the report as JSON")
    c.add_argument("--junit", metavar="PATH", help="write JUnit XML (one test case per check and case)")
    c.add_argument("--sarif", metavar="PATH", help="write SARIF 2.1.0 for code review (also for a batch)")
    c.add_argument(
        "--sarif-min",
        choices=["info", "warning", "error"],
        default="info",
        help="lowest severity written to the SARIF file (default info: every finding)",
    )
    c.add_argument("--markdown", metavar="PATH", help="write a Markdown report for a review record")
    c.add_argument("--html", metavar="PATH", help="write a self-contained HTML report with drawings")
    c.add_argument("--plot", metavar="DIR", help="write the drawings as SVG and PNG files into DIR")
    c.add_argument(
        "--deformed-case", metavar="CASE", help="load case or combination drawn deformed (default: the first)"
    )
    c.add_argument(
        "--fail-on", choices=["error", "warning"], default="error", help="lowest severity that fails the audit"
    )
    c.add_argument("--policy", metavar="PATH", help="JSON tolerance policy file")
    c.add_argument("--tol", action="append", default=[], metavar="NAME=VALUE", help="override one tolerance")
    c.add_argument(
        "--only", action="append", default=[], metavar="CODE", help="keep only findings whose code starts with CODE"
    )
    c.add_argument(
        "--skip", action="append", default=[], metavar="CODE", help="drop findings whose code starts with CODE"
    )
    c.add_argument("--digits", type=int, default=30, help="significant digits of the high-precision recomputation")
    c.add_argument("--solver", default="auto", choices=_SOLVERS, help="sparse solver backend (auto picks the fastest)")
    c.add_argument("--jobs", type=int, default=1, help="models audited in parallel (processes)")
    c.add_argument(
        "--cluster",
        metavar="ADDRESS",
        help="send a batch to a Dask scheduler (tcp://host:8786), or local:N to start N local worker processes",
    )
    c.add_argument(
        "--cluster-timeout",
        type=float,
        default=20.0,
        metavar="SECONDS",
        help="seconds allowed to reach the scheduler or start the local cluster (default 20)",
    )
    c.add_argument("--quiet", action="store_true", help="print only the verdict line; no progress display")
    c.add_argument("--colour", action="store_true", help="colour the terminal report")
    c.add_argument("--timings", action="store_true", help="print the time of each stage to stderr (one model only)")

    s = sub.add_parser("solve", help="solve every load case and combination and write a results file")
    s.add_argument("model", metavar="MODEL", help="a model JSON, workbook, table folder or IFC file")
    s.add_argument("-o", "--output", required=True, metavar="RESULTS", help="results file to write")
    s.add_argument("--ifc-model", metavar="NAME", help="the structural analysis model to read from an IFC file")
    s.add_argument("--digits", type=int, default=None, help="write N significant digits from the high-precision path")
    s.add_argument("--solver", default="auto", choices=_SOLVERS, help="sparse solver backend (auto picks the fastest)")
    s.add_argument("--timings", action="store_true", help="print the time of each stage to stderr")

    i = sub.add_parser("import", help="write a source (tables, workbook, IFC) in the neutral JSON format")
    i.add_argument("source", metavar="SOURCE")
    i.add_argument("-o", "--output", required=True, metavar="MODEL.json", help="model file to write")
    i.add_argument("--results-out", metavar="RESULTS.json", help="write the source's results to their own file")
    i.add_argument("--map", metavar="MAP.toml", help="mapping file for tables whose names or headers differ")
    i.add_argument("--ifc-model", metavar="NAME", help="the structural analysis model to read from an IFC file")

    t = sub.add_parser("template", help="write the empty tables of the tables contract, to be filled in")
    t.add_argument("--dimensions", type=int, choices=[2, 3], default=2, help="plane (2) or space (3) truss")
    t.add_argument("-o", "--output", required=True, metavar="BLANK", help="a .xlsx or .ods workbook, or a folder")

    e = sub.add_parser("explain", help="list the finding codes, or explain one code")
    e.add_argument("code", nargs="?", metavar="CODE", help="a finding code (e.g. EQ101) or a code prefix (e.g. ST)")
    return p


def _sha256(path: str) -> str:
    """The digest of a file, or of a folder's files (names and contents, in name order)."""
    h = hashlib.sha256()
    files = sorted(q for q in Path(path).iterdir() if q.is_file()) if Path(path).is_dir() else [Path(path)]
    for f in files:
        if len(files) > 1 or f != Path(path):
            h.update(f.name.encode() + b"\0")
        h.update(f.read_bytes())
    return h.hexdigest()


_FORMAT_KEY = re.compile(rb'"format"\s*:\s*"([^"]{1,40})"')


def _sniff_format(path: str) -> str | None:
    """The document's ``format`` value, read cheaply from the head of the file (None if not found)."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(1 << 16)
    except OSError:
        return None  # the reader reports the problem properly
    m = _FORMAT_KEY.search(head)
    if m:
        return m.group(1).decode("utf-8", "replace")
    try:
        with open(path, "rb") as fh:
            doc = json.loads(fh.read().decode("utf-8-sig"))
    except (OSError, ValueError, RecursionError):
        return None
    return doc.get("format") if isinstance(doc, dict) and isinstance(doc.get("format"), str) else None


def _expand_inputs(items: Sequence[str]) -> list[tuple[str, str | None]]:
    """Pair model files with the results file that follows them; expand folders.

    In a folder, ``NAME.json`` pairs with ``NAME.results.json`` beside it.  On the
    command line a results file pairs with the model file just before it.
    """
    from audit.sources import holds_only_results, source_kind

    paths: list[tuple[str, bool]] = []  # (path, came from a folder)
    for item in items:
        p = Path(item)
        if p.is_dir() and source_kind(p) is None and not holds_only_results(p):
            paths.extend((str(q), True) for q in sorted(p.glob("*.json")))
        else:
            paths.append((item, False))
    pairs: list[tuple[str, str | None]] = []
    folder_models: set[str] = set()
    for path, from_folder in paths:
        if not from_folder and source_kind(path) != "json":  # tables, a workbook or IFC
            if pairs and pairs[-1][1] is None and holds_only_results(path):
                pairs[-1] = (pairs[-1][0], path)
            else:
                pairs.append((path, None))
            continue
        kind = _sniff_format(path)
        if kind == "truss-audit-results":
            if from_folder and path.endswith(".results.json"):
                continue  # pairs with its model by name below
            if pairs and pairs[-1][1] is None:
                pairs[-1] = (pairs[-1][0], path)
                continue
            raise InputError(
                (Problem("format", "this is a results file (truss-audit-results) with no model before it"),), path
            )
        pairs.append((path, None))
        if from_folder:
            folder_models.add(path)
    out = []
    for model_path, res in pairs:
        if res is None and model_path in folder_models:
            cand = Path(model_path).with_suffix("").as_posix() + ".results.json"
            if Path(cand).is_file() and cand not in (m for m, _ in pairs):
                res = cand
        out.append((model_path, res))
    return out


def _write_outputs(
    args: argparse.Namespace, result: AuditResult, model: Model, ctx_extra: dict[str, Any], model_path: str
) -> None:
    from audit.fileio import atomic_write_bytes, atomic_write_text
    from audit.reporters import html, json_report, junit, markdown

    if args.sarif:
        from audit.engine import registry
        from audit.exchange.positions import locate_file
        from audit.reporters import sarif

        doc = sarif.render(
            [sarif.SarifModel(model_path, result, locate_file(model_path))], registry(), Severity.parse(args.sarif_min)
        )
        atomic_write_text(args.sarif, doc)
    if args.json:
        atomic_write_text(args.json, json_report.render(result, model))
    if args.junit:
        atomic_write_text(args.junit, junit.render(result, model))
    if args.markdown:
        atomic_write_text(args.markdown, markdown.render(result, model))
    if args.html:
        atomic_write_text(args.html, html.render(result, model, ctx_extra))
    if args.plot:
        from audit.reporters import plots

        Path(args.plot).mkdir(parents=True, exist_ok=True)
        for name, data in plots.render_files(result, model, ctx_extra).items():
            target = str(Path(args.plot) / name)
            if isinstance(data, bytes):
                atomic_write_bytes(target, data)
            else:
                atomic_write_text(target, data)


def _tolerances(args: argparse.Namespace) -> Tolerances:
    from audit.tolerances import Tolerances

    try:
        tol = Tolerances.from_policy(args.policy) if args.policy else Tolerances()
    except OSError as exc:
        raise _UsageError(f"--policy {args.policy}: {exc.strerror or exc}") from None
    except ValueError as exc:
        raise _UsageError(f"--policy {args.policy}: {exc}") from None
    overrides: dict[str, float] = {}
    for item in args.tol:
        name, sep, value = item.partition("=")
        if not sep:
            raise _UsageError(f"--tol expects NAME=VALUE, got {item!r}")
        try:
            overrides[name.strip()] = float(value)
        except ValueError:
            raise _UsageError(f"--tol {name}: {value!r} is not a number") from None
    try:
        return tol.override(**overrides) if overrides else tol
    except (ValueError, TypeError) as exc:
        raise _UsageError(f"--tol: {exc}") from None


def _check_outputs(paths: Sequence[str | None]) -> None:
    """Refuse, before any work, two reports to one file and a report path that is a folder."""
    given = [p for p in paths if p]
    seen: dict[str, str] = {}
    problems = []
    for p in given:
        key = str(Path(p).resolve())
        if key in seen:
            raise _UsageError(f"two reports would be written to the same file {p}")
        seen[key] = p
        if Path(p).is_dir():
            problems.append(p)
        elif not Path(p).resolve().parent.is_dir():
            raise _UsageError(f"{p}: the folder for this report does not exist")
    if problems:
        raise InputError(
            tuple(Problem("$", "is a folder, not a file a report can be written to") for _ in problems[:1]), problems[0]
        )


def _check_one(args: argparse.Namespace, model_path: str, results_path: str | None, out: TextIO, err: TextIO) -> int:
    from audit import engine
    from audit.fileio import refuse_same_path
    from audit.progress import Progress
    from audit.reporters import text
    from audit.sources import load_source, load_source_results

    outputs = [p for p in (args.json, args.junit, args.sarif, args.markdown, args.html) if p]
    inputs = [model_path] + ([results_path] if results_path else [])
    _check_outputs(outputs)
    refuse_same_path(outputs, inputs)
    tol = _tolerances(args)
    timings = Timings() if args.timings else None
    with stage(timings, "read"):
        read = load_source(model_path, map_path=args.map, ifc_model=args.ifc_model)
        model, results, notes = read.model, read.results, read.notes
        if results_path:
            given = load_source_results(results_path, model, map_path=args.map)
            results, notes = given.results, notes + given.notes
    progress = Progress(err, enabled=not args.quiet)
    try:
        result, ctx = engine.audit_with_context(
            model,
            results,
            tolerances=tol,
            fail_on=Severity.parse(args.fail_on),
            only=tuple(args.only),
            skip=tuple(args.skip),
            digits=args.digits,
            backend=args.solver,
            inputs=tuple((Path(p).name, _sha256(p)) for p in inputs),
            progress=progress.step,
            source_notes=notes,
            timings=timings,
        )
    finally:
        progress.close()
    with stage(timings, "report"):
        ctx_extra = engine.drawing_context(ctx, args.deformed_case)
        if args.quiet:
            out.write(f"{model_path}: {result.verdict}\n")
        else:
            out.write(text.render(result, model, {"colour": args.colour}))
        _write_outputs(args, result, model, ctx_extra, model_path)
    if timings is not None:
        err.write(timings.render())
    if result.crashed:
        return EXIT_CRASH
    return EXIT_FAIL if result.verdict == "fail" else EXIT_PASS


def _check(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    if args.digits < 16 or args.digits > 200:
        raise _UsageError("--digits must be between 16 and 200")
    if args.cluster is not None:  # a bad --cluster value is refused before anything is read
        from audit.cluster import ClusterError, parse

        if not args.cluster_timeout > 0:
            raise _UsageError("--cluster-timeout must be a positive number of seconds")
        try:
            parse(args.cluster)
        except ClusterError as exc:
            raise _UsageError(f"truss-audit: {exc}") from None
    if args.map and len(args.inputs) <= 2:  # one table source (its tables named by the mapping file)
        pairs = [(args.inputs[0], args.inputs[1] if len(args.inputs) == 2 else None)]
    else:
        pairs = _expand_inputs(args.inputs)
    if args.results:
        if len(pairs) != 1:
            raise _UsageError("--results goes with exactly one model")
        pairs = [(pairs[0][0], args.results)]
    if not pairs:
        from audit.tables import read_tables

        for item in args.inputs:  # a folder of tables without its nodes or members: let the reader say so
            if Path(item).is_dir() and any(Path(item).glob("*.csv")):
                read_tables(item, map_path=args.map)
        raise _UsageError("no model files found")
    if len(pairs) == 1 and not args.cluster:  # with --cluster even one model goes to the cluster
        return _check_one(args, pairs[0][0], pairs[0][1], out, err)
    if args.map or args.ifc_model:
        raise _UsageError("--map and --ifc-model go with exactly one source")
    if args.timings:
        raise _UsageError("--timings takes a single model (the stages of a batch overlap)")
    from audit import batch

    _check_outputs([args.json, args.junit, args.sarif])
    _tolerances(args)
    if args.html or args.plot or args.markdown:
        raise _UsageError(
            "--html, --plot and --markdown take a single model; use --json, --junit or --sarif for a batch"
        )
    from audit.cluster import ClusterError

    try:
        result = _run_batch(args, pairs)
    except ClusterError as exc:
        raise _UsageError(f"truss-audit: {exc}") from None
    from audit.fileio import atomic_write_text

    out.write(batch.render_summary(result))
    if not args.quiet:
        err.write(batch.render_timing(result))
    if args.json:
        atomic_write_text(args.json, batch.render_batch_json(result))
    if args.junit:
        atomic_write_text(args.junit, batch.render_batch_junit(result))
    if args.sarif:
        atomic_write_text(args.sarif, batch.render_batch_sarif(result, Severity.parse(args.sarif_min)))
    return batch.exit_code(result)


def _run_batch(args: argparse.Namespace, pairs: list[tuple[str, str | None]]) -> Any:
    from audit import batch

    return batch.run_batch(
        pairs,
        jobs=max(1, args.jobs),
        cluster=args.cluster,
        cluster_timeout=args.cluster_timeout,
        audit_kwargs={
            "fail_on": args.fail_on,
            "only": tuple(args.only),
            "skip": tuple(args.skip),
            "digits": args.digits,
            "backend": args.solver,
            "policy": args.policy,
            "tol": tuple(args.tol),
            "sarif": bool(args.sarif),
        },
    )


def _solve(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    from audit import exchange
    from audit.fileio import atomic_write_text, refuse_same_path

    refuse_same_path([args.output], [args.model])
    timings = Timings() if args.timings else None
    with stage(timings, "read"):
        from audit.sources import load_source  # any source; results come out in the source's own units

        model = load_source(args.model, ifc_model=args.ifc_model).model
    if args.digits is not None:
        if args.digits < 1 or args.digits > 200:
            raise _UsageError("--digits must be between 1 and 200")
        from audit import precision

        cases, report = precision.solve_high_precision(model, args.digits, args.solver, timings=timings)
        unsolved = report.unsolved
        with stage(timings, "report"):
            text = exchange.dump_results(
                model, cases, source=f"truss-audit {__version__} solve --digits {args.digits}", digits=args.digits
            )
    else:
        from audit.solve import solve_model

        solution = solve_model(model, args.solver, timings=timings)
        unsolved = tuple((s.case_id, s.message) for s in solution.nonlinear.unsolved) if solution.nonlinear else ()
        with stage(timings, "report"):
            text = exchange.dump_results(
                model, solution.cases, source=f"truss-audit {__version__} solve ({solution.backend})"
            )
    with stage(timings, "report"):
        atomic_write_text(args.output, text)
    if timings is not None:
        err.write(timings.render())
    out.write(f"wrote {args.output}: {len(model.load_cases)} load cases, {len(model.combinations)} combinations\n")
    if unsolved:  # a non-linear model: the other cases were solved and written
        for case_id, why in unsolved:
            err.write(f"truss-audit: case {case_id!r} has no solution and is not in {args.output}: {why}\n")
        return EXIT_UNSOLVABLE
    return EXIT_PASS


def _import(args: argparse.Namespace, out: TextIO) -> int:
    from audit.fileio import atomic_write_text, refuse_same_path
    from audit.sources import neutral_documents

    refuse_same_path([p for p in (args.output, args.results_out) if p], [args.source])
    if args.results_out and Path(args.results_out).resolve() == Path(args.output).resolve():
        raise _UsageError("the model and its results would be written to the same file")
    model_text, results_text, read = neutral_documents(
        args.source, map_path=args.map, ifc_model=args.ifc_model, separate_results=bool(args.results_out)
    )
    if args.results_out and results_text is None:
        raise _UsageError(f"{args.source}: the source carries no results to write to --results-out")
    atomic_write_text(args.output, model_text)
    if args.results_out and results_text is not None:
        atomic_write_text(args.results_out, results_text)
    out.write(f"wrote {args.output}: {read.model.n_nodes} nodes, {read.model.n_members} members\n")
    for note in read.notes:
        out.write(f"  note {note.code}: {note.place + ': ' if note.place else ''}{note.message}\n")
    return EXIT_PASS


def _template(args: argparse.Namespace, out: TextIO) -> int:
    from audit.tables.write import write_template

    written = write_template(args.output, args.dimensions)
    out.write(f"wrote {args.output}: {written} empty tables for a {args.dimensions}D truss\n")
    return EXIT_PASS


def _explain(code: str | None, out: TextIO) -> int:
    """The table of codes (all, or those starting with a prefix), or one code explained, from the registry."""
    import textwrap

    from tabulate import tabulate

    from audit.engine import registry

    reg = registry()
    wanted = (code or "").strip().upper()
    rule = reg.get(wanted)
    if rule is not None:
        out.write(f"{rule.code} ({rule.severity.label}, {rule.family} check): {rule.summary}\n")
        for title, body in (
            ("What it establishes", rule.establishes),
            ("Example finding", rule.example),
            ("How to act on it", rule.action),
        ):
            wrapped = textwrap.fill(body, width=88, initial_indent="  ", subsequent_indent="  ")
            out.write(f"\n{title}:\n{wrapped}\n")
        return EXIT_PASS
    rows = [(r.code, r.severity.label, r.family, r.summary) for r in reg.values() if r.code.startswith(wanted)]
    if not rows:
        raise _UsageError(
            f"explain: no finding code is or starts with {code!r}; give a code such as EQ101 or a prefix such as ST "
            "(truss-audit explain lists them all)"
        )
    out.write(tabulate(rows, headers=["code", "severity", "check", "summary"], tablefmt="simple") + "\n")
    return EXIT_PASS


def main(argv: Sequence[str] | None = None, out: TextIO | None = None, err: TextIO | None = None) -> int:
    """Run the command line; returns the exit code (never raises for bad input)."""
    out = out or sys.stdout
    err = err or sys.stderr
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            args = _parser().parse_args(list(sys.argv[1:] if argv is None else argv))
        if args.command == "check":
            return _check(args, out, err)
        if args.command == "solve":
            return _solve(args, out, err)
        if args.command == "import":
            return _import(args, out)
        if args.command == "template":
            return _template(args, out)
        if args.command == "explain":
            return _explain(args.code, out)
        _parser().print_help(out)
        return EXIT_INPUT
    except SystemExit as exc:  # argparse's --help and --version
        return int(exc.code) if isinstance(exc.code, int) else EXIT_PASS
    except _UsageError as exc:
        err.write(f"{exc}\n")
        return EXIT_INPUT
    except InputError as exc:
        err.write(f"{exc}\n")
        return EXIT_INPUT
    except UnsolvableError as exc:
        err.write(f"truss-audit: the model cannot be solved: {exc.message}\n")
        for d in exc.details:
            err.write(f"  {d}\n")
        return EXIT_UNSOLVABLE
    except KeyboardInterrupt:
        err.write("truss-audit: interrupted; no output file was left half-written\n")
        return 130
    except OSError as exc:
        err.write(f"truss-audit: {exc.filename or ''}: {exc.strerror or exc}\n")
        return EXIT_INPUT
    except Exception as exc:  # an internal fault: say so plainly, never pass, never dump a traceback
        import traceback

        last = traceback.extract_tb(exc.__traceback__)[-1]
        where = f"{last.filename.rsplit('/', 1)[-1]}:{last.lineno}"
        err.write(f"truss-audit: internal error ({type(exc).__name__}: {exc}) at {where}; nothing was passed\n")
        return EXIT_CRASH


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())


__all__ = ["main"]
