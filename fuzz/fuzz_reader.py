"""Coverage-guided fuzzing of the exchange reader and the command line (atheris / libFuzzer).

Every input is fed, as bytes, to

1. ``audit.exchange.parse_model`` -- it must return a model or raise
   :class:`audit.errors.InputError`, nothing else;
2. ``audit.exchange.parse_results`` against each seed model of ``fuzz/corpus``
   -- the same;
3. the command line, through files on disk: ``solve`` and ``check`` when the
   input is a model, ``check`` of the seed roof model with the input as its
   results file when it is a results file for it.  The exit code must be 0, 1, 2 or 4
   (never 3, a crashed check, and never an uncaught exception), exit 2 must
   come with a message whose every line names the file, and the input file
   must be left as it was.

Anything else raises, and libFuzzer saves the input as a crash reproducer.
Run (see fuzz/README.md)::

    timeout 600 python fuzz/fuzz_reader.py -max_total_time=600 \\
        -artifact_prefix=fuzz/crashes/ fuzz/corpus
"""

from __future__ import annotations

import collections
import contextlib
import io
import os
import sys
import tempfile
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")  # before numpy loads its BLAS

import atheris

with atheris.instrument_imports(include=["audit"]):
    # import here every module the command line loads lazily, so that all of them are instrumented
    import audit.engine
    import audit.fileio
    import audit.reporters.text
    import audit.solve  # noqa: F401
    from audit import cli, exchange
    from audit.errors import InputError

HERE = Path(__file__).resolve().parent
CORPUS = HERE / "corpus"
SEED_MODELS = {p.name: exchange.load_model(p) for p in sorted(CORPUS.glob("*.model.json"))}
ROOF = CORPUS / "boathouse.model.json"
ROOF_MODEL = SEED_MODELS[ROOF.name]
WORK = Path(tempfile.mkdtemp(prefix="truss-audit-fuzz-"))

#: set TRUSS_AUDIT_FUZZ_READER_ONLY=1 to fuzz the reader alone (much faster; no command line)
READER_ONLY = os.environ.get("TRUSS_AUDIT_FUZZ_READER_ONLY", "") == "1"

#: exit codes the command line may give for any input
ALLOWED = {"check": {0, 1, 2}, "solve": {0, 2, 4}}


#: how many inputs reached each stage (printed after 2**k inputs, k >= 10: libFuzzer exits without atexit)
COUNTS: collections.Counter[str] = collections.Counter()


def _report_counts() -> None:
    n = COUNTS["inputs"]
    if n >= 1024 and n & (n - 1) == 0:
        print(f"fuzz_reader stages after {n} inputs: {dict(sorted(COUNTS.items()))}", file=sys.stderr, flush=True)


class ContractBrokenError(Exception):
    """The reader or the command line broke its contract on this input."""


def _cli(argv: list[str], files: list[Path]) -> int:
    COUNTS[f"{argv[0]} run"] += 1
    before = {p: (p.read_bytes(), p.stat().st_mtime_ns) for p in files}
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv, out=out, err=err)
    COUNTS[f"{argv[0]} exit {code}"] += 1
    text = err.getvalue()
    if code not in ALLOWED[argv[0]]:
        raise ContractBrokenError(f"{argv[0]} exit {code}:\n{text}\n{out.getvalue()}")
    if "Traceback" in text:
        raise ContractBrokenError(f"traceback on stderr:\n{text}")
    if code == 2:
        lines = [ln for ln in text.splitlines() if ln.strip()]
        if not lines or not all(any(ln.startswith(f"{p}: ") for p in files) for ln in lines):
            raise ContractBrokenError(f"exit 2 with a message that does not name the file:\n{text}")
    for p, state in before.items():
        if (p.read_bytes(), p.stat().st_mtime_ns) != state:
            raise ContractBrokenError(f"{argv[0]} changed its input {p}")
    return code


def TestOneInput(data: bytes) -> None:
    """One fuzz input: the reader's and the command line's contracts (module docstring)."""
    COUNTS["inputs"] += 1
    _report_counts()
    model = None
    with contextlib.suppress(InputError):
        model = exchange.parse_model(data, "fuzz-input")
    COUNTS["valid models"] += model is not None
    results_ok = False
    for seed in SEED_MODELS.values():
        try:
            exchange.parse_results(data, seed, "fuzz-input")
            results_ok = results_ok or seed is ROOF_MODEL
        except InputError:
            pass
    COUNTS["valid roof results"] += results_ok
    if READER_ONLY or (model is None and not results_ok):
        return
    path = WORK / "input.json"
    path.write_bytes(data)
    out_path = WORK / "solved.json"
    if model is not None:
        _cli(["solve", str(path), "-o", str(out_path)], [path])
        if out_path.exists():
            out_path.unlink()
        _cli(["check", str(path), "--quiet", "--digits", "16"], [path])
    if results_ok:
        _cli(["check", str(ROOF), "--results", str(path), "--quiet", "--digits", "16"], [ROOF, path])


def main() -> None:
    atheris.Setup(sys.argv, TestOneInput)
    atheris.Fuzz()


if __name__ == "__main__":
    main()
