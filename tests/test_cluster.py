"""Batches on a Dask cluster (audit.cluster): the same documents as a local batch, and no model lost.

A ``LocalCluster`` of 2 worker processes runs here as it would in CI.  The mixed batch holds a model
that passes, one whose reported results are wrong (the contract's example roof, ``shared/FORMAT.md``,
with member 3 at -12.0 kN where the method of joints gives -10.417 kN: common practice, see
``tests/test_cli.py``), one the reader refuses (a member to an unknown node), one unstable model (a
panel with no diagonal) and one whose audit has a check crash (injected by the test's unit of work,
which wraps :func:`audit.batch.audit_file`).  The documents of the cluster run must be the same bytes
as those of ``--jobs 1``.  The killed-worker test uses a unit of work that ends its worker process
the first time it meets one model (and every time for another): the first must still be audited,
the second reported as crashed with the worker's message.

The timeouts here bound the tests on a loaded 2-core machine (each worker start imports numpy and
scipy); they are not performance targets.
"""

from __future__ import annotations

import io
import json
import os
import sys
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

import pytest

from audit import batch, cli, cluster
from audit.batch import BatchEntry, audit_file

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT / "fuzz" / "corpus"
WAIT = 300.0  #: seconds allowed for one batch on the cluster (bounded test time)

distributed = pytest.importorskip("distributed", reason="the cluster extra is part of the test extra")
cloudpickle = pytest.importorskip("cloudpickle")
cloudpickle.register_pickle_by_value(sys.modules[__name__])  # the workers cannot import this test module


# ------------------------------------------------------------------------------------ units of work
def crash_one_check(model: str, results: str | None, kwargs: Mapping[str, Any]) -> BatchEntry:
    """audit_file, with the compatibility check made to raise for a model whose name starts with 'crash'."""
    if not Path(model).name.startswith("crash"):
        return audit_file(model, results, kwargs)
    from audit.checks import compatibility

    original = compatibility.run

    def broken(ctx: Any) -> Any:
        raise ValueError("a fault injected by the test")

    compatibility.run = broken  # type: ignore[assignment]
    try:
        return audit_file(model, results, kwargs)
    finally:
        compatibility.run = original  # type: ignore[assignment]


def die_on_some(model: str, results: str | None, kwargs: Mapping[str, Any]) -> BatchEntry:
    """End the worker process: once for 'die-once*' (a marker file remembers), always for 'die-always*'."""
    name = Path(model).name
    marker = Path(model + ".died")
    if name.startswith("die-always") or (name.startswith("die-once") and not marker.exists()):
        marker.write_text("the worker process ended here once\n")
        os._exit(17)
    return audit_file(model, results, kwargs)


# ------------------------------------------------------------------------------------ models
def _mixed(folder: Path) -> list[tuple[str, str | None]]:
    folder.mkdir(parents=True, exist_ok=True)
    roof = json.loads((CORPUS / "boathouse.model.json").read_text(encoding="utf-8"))
    (folder / "a-pass.json").write_text((CORPUS / "tripod3d.model.json").read_text(encoding="utf-8"))
    (folder / "b-fail.json").write_text(json.dumps(roof, indent=2))
    wrong = {
        "format": "truss-audit-results",
        "version": 1,
        "cases": {"snow": {"axial_forces": {"1": 8.333, "2": 8.333, "3": -12.0, "4": -10.417, "5": 0.0}}},
    }
    (folder / "b-fail.results.json").write_text(json.dumps(wrong))
    broken = json.loads(json.dumps(roof))
    broken["members"][4]["end"] = "Q"
    (folder / "c-broken.json").write_text(json.dumps(broken, indent=2))
    unstable = json.loads(json.dumps(roof))
    del unstable["members"][4]  # B-D gone: B is a joint of two collinear bars
    (folder / "d-unstable.json").write_text(json.dumps(unstable, indent=2))
    (folder / "crash-check.json").write_text((CORPUS / "incline.model.json").read_text(encoding="utf-8"))
    return [
        (str(folder / "a-pass.json"), None),
        (str(folder / "b-fail.json"), str(folder / "b-fail.results.json")),
        (str(folder / "c-broken.json"), None),
        (str(folder / "crash-check.json"), None),
        (str(folder / "d-unstable.json"), None),
    ]


def _documents(result: batch.BatchResult) -> dict[str, str]:
    return {
        "json": batch.render_batch_json(result),
        "junit": batch.render_batch_junit(result),
        "sarif": batch.render_batch_sarif(result),
        "summary": batch.render_summary(result),
    }


@pytest.fixture(scope="module")
def scheduler() -> Iterator[str]:
    """A LocalCluster of 2 worker processes, one thread each; a worker that dies twice under a task ends it."""
    import dask

    config = {"distributed.scheduler.allowed-failures": 1, "distributed.scheduler.worker-saturation": 1.0}
    with dask.config.set(config):
        local = distributed.LocalCluster(
            n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None, silence_logs=50
        )
    try:
        yield str(local.scheduler_address)
    finally:
        local.close()


# ------------------------------------------------------------------------------------ the cluster runs
def test_a_mixed_batch_on_the_cluster_gives_the_bytes_of_jobs_1(tmp_path: Path, scheduler: str) -> None:
    pairs = _mixed(tmp_path / "models")
    kwargs = {"sarif": True}
    serial = batch.run_batch(pairs, jobs=1, audit_kwargs=kwargs, work=crash_one_check)
    spec = cluster.parse(scheduler)
    entries = cluster.run(sorted(pairs), spec, kwargs, work=crash_one_check, wait=WAIT)
    on_cluster = batch.BatchResult(
        entries=tuple(entries),
        jobs=2,
        seconds=0.0,
        tally={s: sum(e.status == s for e in entries) for s in batch.EXIT_CODES},
        cluster=spec.label,
    )
    assert [e.status for e in serial.entries] == ["pass", "fail", "input_error", "crashed", "fail"]
    assert "AU901" in {f.code for f in serial.entries[3].result.findings}  # type: ignore[union-attr]
    local, remote = _documents(serial), _documents(on_cluster)
    for kind in local:
        assert remote[kind] == local[kind], kind


def test_a_killed_worker_loses_no_model(tmp_path: Path, scheduler: str) -> None:
    folder = tmp_path / "models"
    pairs = _mixed(folder)[:2]
    for name in ("die-once.json", "die-always.json"):
        (folder / name).write_text((CORPUS / "tripod3d.model.json").read_text(encoding="utf-8"))
        pairs.append((str(folder / name), None))
    entries = cluster.run(sorted(pairs), cluster.parse(scheduler), {}, work=die_on_some, wait=WAIT)
    by_name = {Path(e.path).name: e for e in entries}
    assert sorted(by_name) == sorted(Path(p).name for p, _ in pairs)  # every model accounted for
    assert (folder / "die-once.json.died").exists()  # its first worker did die
    assert by_name["die-once.json"].status == "pass"
    assert by_name["a-pass.json"].status == "pass"
    assert by_name["b-fail.json"].status == "fail"
    lost = by_name["die-always.json"]
    assert lost.status == "crashed"
    assert "died" in lost.error


def test_the_command_line_on_a_local_cluster_writes_the_same_documents(tmp_path: Path) -> None:
    """``--cluster local:2`` against ``--jobs 1`` and ``--jobs 2``: JSON, JUnit, SARIF and summary."""
    folder = tmp_path / "models"
    _mixed(folder)
    (folder / "crash-check.json").unlink()
    outputs: dict[str, dict[str, bytes]] = {}
    for label, extra in (("serial", ["--jobs", "1"]), ("pool", ["--jobs", "2"]), ("cluster", ["--cluster", "local:2"])):
        out_dir = tmp_path / label
        out_dir.mkdir()
        stdout = io.StringIO()
        argv = ["check", str(folder), *extra, "--cluster-timeout", "120"]
        argv += [
            "--json",
            str(out_dir / "b.json"),
            "--junit",
            str(out_dir / "b.xml"),
            "--sarif",
            str(out_dir / "b.sarif"),
        ]
        assert cli.main(argv, out=stdout, err=io.StringIO()) == 2  # the broken model is an input error
        outputs[label] = {p.name: p.read_bytes() for p in sorted(out_dir.iterdir())}
        outputs[label]["summary"] = stdout.getvalue().encode()
    assert outputs["pool"] == outputs["serial"]
    assert outputs["cluster"] == outputs["serial"]


# ------------------------------------------------------------------------------------ refusals
@pytest.mark.parametrize(
    "value", ["", "local:", "local:0", "local:two", "host", "host:99999", "http://host:8786", "a b:1"]
)
def test_a_bad_cluster_value_is_refused_in_one_line(tmp_path: Path, value: str) -> None:
    report = tmp_path / "b.json"
    err = io.StringIO()
    argv = ["check", str(CORPUS / "tripod3d.model.json"), str(CORPUS / "incline.model.json"), "--cluster", value]
    assert cli.main([*argv, "--json", str(report)], out=io.StringIO(), err=err) == 2
    lines = err.getvalue().splitlines()
    assert len(lines) == 1
    assert repr(value) in lines[0]
    assert "local:N" in lines[0]
    assert not report.exists()


@pytest.mark.parametrize(
    ("value", "address"),
    [
        ("tcp://10.0.0.5:8786", "tcp://10.0.0.5:8786"),
        ("sched.example:8786", "tcp://sched.example:8786"),
        ("tls://[::1]:8786", "tls://[::1]:8786"),
    ],
)
def test_addresses_are_understood(value: str, address: str) -> None:
    assert cluster.parse(value) == cluster.ClusterSpec(address=address)
    assert cluster.parse("local:3") == cluster.ClusterSpec(local_workers=3)


def test_an_unreachable_scheduler_is_refused_within_the_timeout(tmp_path: Path) -> None:
    report = tmp_path / "b.json"
    err = io.StringIO()
    argv = ["check", str(CORPUS / "tripod3d.model.json"), str(CORPUS / "incline.model.json")]
    argv += ["--cluster", "tcp://127.0.0.1:9", "--cluster-timeout", "2", "--json", str(report)]
    assert cli.main(argv, out=io.StringIO(), err=err) == 2
    lines = err.getvalue().splitlines()
    assert len(lines) == 1
    assert "tcp://127.0.0.1:9" in lines[0]
    assert "2 s" in lines[0]
    assert not report.exists()


def test_missing_dask_is_a_one_line_error(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setitem(sys.modules, "distributed", None)  # import distributed raises ImportError
    report = tmp_path / "b.json"
    err = io.StringIO()
    argv = ["check", str(CORPUS / "tripod3d.model.json"), str(CORPUS / "incline.model.json")]
    assert cli.main([*argv, "--cluster", "local:2", "--json", str(report)], out=io.StringIO(), err=err) == 2
    lines = err.getvalue().splitlines()
    assert len(lines) == 1
    assert ".[cluster]" in lines[0]
    assert not report.exists()


def test_memory_estimate_grows_with_the_file(tmp_path: Path) -> None:
    small, big = tmp_path / "s.json", tmp_path / "b.json"
    small.write_text("x" * 1_000)
    big.write_text("x" * 1_000_000)
    assert (
        cluster.memory_estimate(str(big)) - cluster.memory_estimate(str(small))
        == ((1_000_000 // cluster.FILE_BYTES_PER_MEMBER) - (1_000 // cluster.FILE_BYTES_PER_MEMBER))
        * cluster.PEAK_BYTES_PER_MEMBER
    )
