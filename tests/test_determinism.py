"""Determinism: the same inputs give byte-identical reports.

The text (stdout), JSON, JUnit and HTML reports of ``check`` must be the same
bytes

* when run twice, from different folders (no timestamps, no absolute paths);
* when the keys of every JSON object in the inputs are shuffled (the order
  of a JSON object's members carries no meaning: RFC 8259, §4), which also
  reorders every results map (cases, nodes, members);
* when BLAS / OpenMP run with 1 or 2 threads (separate processes).

The reports name their inputs by a SHA-256 digest of the file bytes, which
must change when the bytes change; for the shuffled inputs the digests are
replaced by a placeholder before comparing, and everything else must match.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import random
import re
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest
from bench_generator import generator

from audit import cli

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT / "fuzz" / "corpus"
REPORTS = {"json": "report.json", "junit": "report.xml", "html": "report.html"}

#: dates and times as any report might print them
TIMESTAMP = re.compile(r"\b(19|20)\d\d-[01]\d-[0-3]\d([T ][0-2]\d:[0-5]\d)?|\b[0-2]\d:[0-5]\d:[0-5]\d\b")


def roof_model() -> dict[str, Any]:
    return json.loads((CORPUS / "boathouse.model.json").read_text(encoding="utf-8"))


def roof_results(wrong: bool = True) -> dict[str, Any]:
    """Results for the roof: the snow case by the method of joints, member 3 wrong by 8 % if ``wrong``.

    Joint D: N3 = N4 = -12.5 / (2 · 3/5) = -10.4167; joint A: N1 = -0.8 N3; joint B: N5 = 0;
    reactions 6.25 up at A and C by symmetry (common practice: method of joints).
    """
    n3 = -10.4167 * (1.08 if wrong else 1.0)
    return {
        "format": "truss-audit-results",
        "version": 1,
        "source": "hand calculation",
        "sign_convention": "tension_positive",
        "cases": {
            "snow": {
                "axial_forces": {"1": 8.3333, "2": 8.3333, "3": n3, "4": -10.4167, "5": 0.0},
                "reactions": {"A": {"x": 0.0, "y": 6.25}, "C": {"y": 6.25}},
                "displacements": {"A": {"x": 0.0, "y": 0.0}, "C": {"y": 0.0}},
            },
            "heat": {"axial_forces": {"1": 0.0, "2": 0.0, "3": 0.0, "4": 0.0, "5": 0.0}},
        },
    }


def shuffled(doc: Any, rng: random.Random) -> Any:
    """``doc`` with the members of every JSON object in a random order (lists keep theirs)."""
    if isinstance(doc, dict):
        keys = list(doc)
        rng.shuffle(keys)
        return {k: shuffled(doc[k], rng) for k in keys}
    if isinstance(doc, list):
        return [shuffled(v, rng) for v in doc]
    return doc


def write_inputs(folder: Path, model: dict[str, Any], results: dict[str, Any]) -> tuple[Path, Path]:
    folder.mkdir(parents=True, exist_ok=True)
    m, r = folder / "roof.json", folder / "roof-reported.json"
    m.write_text(json.dumps(model, indent=2), encoding="utf-8")
    r.write_text(json.dumps(results, indent=2), encoding="utf-8")
    return m, r


def argv_for(model: Path, results: Path, folder: Path) -> list[str]:
    argv = ["check", str(model), "--results", str(results)]
    for option, name in REPORTS.items():
        argv += [f"--{option}", str(folder / name)]
    return argv


def audit_in_process(model: Path, results: Path, folder: Path) -> dict[str, bytes]:
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv_for(model, results, folder), out=out, err=err)
    assert code == 1, err.getvalue()
    reports = {k: (folder / name).read_bytes() for k, name in REPORTS.items()}
    reports["text"] = out.getvalue().encode("utf-8")
    return reports


def without_digests(reports: dict[str, bytes], *inputs: Path) -> dict[str, bytes]:
    """The reports with each input's SHA-256 digest replaced by a placeholder."""
    clean = {}
    for kind, data in reports.items():
        for i, path in enumerate(inputs):
            digest = hashlib.sha256(path.read_bytes()).hexdigest().encode()
            data = data.replace(digest, f"<digest of input {i}>".encode())
        clean[kind] = data
    return clean


@pytest.fixture(scope="module")
def first_run(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, bytes]]:
    folder = tmp_path_factory.mktemp("first")
    m, r = write_inputs(folder / "in", roof_model(), roof_results())
    return folder, audit_in_process(m, r, folder)


@pytest.fixture(scope="module")
def elsewhere_run(tmp_path_factory: pytest.TempPathFactory) -> dict[str, bytes]:
    folder = tmp_path_factory.mktemp("second")
    m, r = write_inputs(folder / "elsewhere" / "deeper", roof_model(), roof_results())
    return audit_in_process(m, r, folder)


@pytest.mark.parametrize("kind", ["text", *REPORTS])
def test_same_inputs_same_bytes_from_another_folder(
    first_run: tuple[Path, dict[str, bytes]], elsewhere_run: dict[str, bytes], kind: str
) -> None:
    assert elsewhere_run[kind] == first_run[1][kind]


@pytest.mark.parametrize("kind", ["text", *REPORTS])
def test_reports_hold_no_absolute_path_and_no_timestamp(first_run: tuple[Path, dict[str, bytes]], kind: str) -> None:
    folder, reports = first_run
    text = reports[kind].decode("utf-8")
    assert str(folder) not in text
    assert str(Path.home()) + os.sep not in text
    stamp = TIMESTAMP.search(text)
    assert stamp is None, f"{kind} report holds a date or time: {text[max(0, stamp.start() - 60) : stamp.end() + 20]!r}"


def test_reports_name_the_inputs_by_digest(first_run: tuple[Path, dict[str, bytes]]) -> None:
    folder, reports = first_run
    digest = hashlib.sha256((folder / "in" / "roof.json").read_bytes()).hexdigest()
    assert digest in reports["json"].decode("utf-8")


@pytest.fixture(scope="module", params=[1, 2, 3], ids=lambda seed: f"shuffle-{seed}")
def shuffled_run(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> dict[str, bytes]:
    """The reports for inputs whose JSON objects have their keys in a random order, digests masked."""
    folder = tmp_path_factory.mktemp(f"shuffled{request.param}")
    rng = random.Random(request.param)
    m, r = write_inputs(folder / "in", shuffled(roof_model(), rng), shuffled(roof_results(), rng))
    assert json.loads(m.read_bytes()) == roof_model()
    assert m.read_bytes() != json.dumps(roof_model(), indent=2).encode()
    return without_digests(audit_in_process(m, r, folder), m, r)


@pytest.mark.parametrize("kind", ["text", *REPORTS])
def test_shuffled_keys_give_the_same_report(
    first_run: tuple[Path, dict[str, bytes]], shuffled_run: dict[str, bytes], kind: str
) -> None:
    folder, first = first_run
    reference = without_digests(first, folder / "in" / "roof.json", folder / "in" / "roof-reported.json")
    assert shuffled_run[kind] == reference[kind]


# --------------------------------------------------------------------------- thread counts
def lattice(nx: int, ny: int) -> tuple[dict[str, Any], dict[str, Any]]:
    """A braced grid cantilever (x-bracing in every panel) with one load, and rough results for it.

    Invented data (a demo structure); the results are deliberately approximate so that
    findings of several kinds appear in the report.
    """
    nodes = [{"id": f"n{i}_{j}", "x": i * 1.5, "y": j * 1.5} for i in range(nx + 1) for j in range(ny + 1)]
    members: list[dict[str, Any]] = []

    def add(a: str, b: str) -> None:
        members.append({"id": f"m{len(members)}", "start": a, "end": b, "E": 2.1e8, "A": 2.0e-3})

    for i in range(nx + 1):
        for j in range(ny + 1):
            if i < nx:
                add(f"n{i}_{j}", f"n{i + 1}_{j}")
            if j < ny:
                add(f"n{i}_{j}", f"n{i}_{j + 1}")
            if i < nx and j < ny:
                add(f"n{i}_{j}", f"n{i + 1}_{j + 1}")
                add(f"n{i + 1}_{j}", f"n{i}_{j + 1}")
    model = {
        "format": "truss-audit-model",
        "version": 1,
        "title": "braced grid cantilever",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "members": members,
        "supports": [{"node": f"n0_{j}", "restrain": ["x", "y"]} for j in range(ny + 1)],
        "load_cases": [
            {"id": "tip", "loads": [{"node": f"n{nx}_{ny}", "fy": -40.0}]},
            {"id": "side", "loads": [{"node": f"n{nx}_0", "fx": 15.0}]},
        ],
        "combinations": [{"id": "both", "factors": {"tip": 1.35, "side": 1.5}}],
    }
    results = {
        "format": "truss-audit-results",
        "version": 1,
        "cases": {"tip": {"reactions": {f"n0_{j}": {"x": 0.0, "y": 40.0 / (ny + 1)} for j in range(ny + 1)}}},
    }
    return model, results


def run_process(folder: Path, threads: int) -> dict[str, bytes]:
    env = {**os.environ, "PYTHONWARNINGS": "ignore"}
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        env[var] = str(threads)
    out_dir = folder / f"threads{threads}"
    out_dir.mkdir()
    proc = subprocess.run(
        [sys.executable, "-m", "audit", *argv_for(folder / "roof.json", folder / "roof-reported.json", out_dir)],
        capture_output=True,
        timeout=300,
        env=env,
        cwd=folder,
        check=False,
    )
    assert proc.returncode in (0, 1), proc.stderr.decode()
    reports = {k: (out_dir / name).read_bytes() for k, name in REPORTS.items()}
    reports["text"] = proc.stdout
    return reports


@pytest.fixture(scope="module")
def thread_runs(tmp_path_factory: pytest.TempPathFactory) -> tuple[dict[str, bytes], dict[str, bytes]]:
    folder = tmp_path_factory.mktemp("threads")
    model, results = lattice(12, 3)
    write_inputs(folder, model, results)
    return run_process(folder, 1), run_process(folder, 2)


@pytest.mark.parametrize("kind", ["text", *REPORTS])
def test_thread_count_does_not_change_the_report(
    thread_runs: tuple[dict[str, bytes], dict[str, bytes]], kind: str
) -> None:
    one, two = thread_runs
    assert one[kind] == two[kind]


@pytest.mark.slow
def test_large_model_gives_the_same_json_run_after_run(tmp_path: Path) -> None:
    """Three fresh processes on a grid of about 2·10⁴ members, 2 threads, no MKL_CBWR of the caller's.

    Large enough that PARDISO runs its threaded kernels: without a conditional
    numerical reproducibility branch (Intel oneMKL Developer Guide, Linux,
    "Reproducibility Conditions") three such runs gave three different JSON
    reports (the condition estimate and the backward error moved in their last
    digits); ``audit.linsolve`` sets ``MKL_CBWR=AUTO`` before MKL is loaded.
    """
    model = tmp_path / "grid.json"
    generator().write(str(model), "grid2d", 20000)
    env = {k: v for k, v in os.environ.items() if k != "MKL_CBWR"}
    env.update({"PYTHONWARNINGS": "ignore", "OMP_NUM_THREADS": "2", "MKL_NUM_THREADS": "2"})
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT), env.get("PYTHONPATH", "")])
    reports = []
    for i in range(3):
        out = tmp_path / f"run{i}.json"
        proc = subprocess.run(
            [sys.executable, "-m", "audit", "check", str(model), "--quiet", "--json", str(out)],
            capture_output=True,
            timeout=300,
            env=env,
            cwd=tmp_path,
            check=False,
        )
        assert proc.returncode in (0, 1), proc.stderr.decode()
        reports.append(out.read_bytes())
    assert reports[0] == reports[1] == reports[2]
