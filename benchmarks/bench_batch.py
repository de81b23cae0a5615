"""Batch throughput: the same generated models with ``--jobs 1``, ``--jobs 2`` and ``--cluster local:2``.

The models (invented data, ``generate.py``): ``--models`` small trusses of 50 to 500 members, four
in five plane grids and one in five space lattices, sizes drawn from a seeded generator, each with
its reported results (5 member forces changed by 3-6 %, so every audit fails and runs its
diagnosis, as a gate in a pipeline would).  They are written once into ``benchmarks/out/batch/``.

For each way of running, each repeat audits the whole batch with :func:`audit.batch.run_batch`
(the command line's batch path, without printing) and the figures are medians over the repeats:

* throughput, models per second, from the batch's wall time (for the cluster: including the start
  and stop of the local cluster, as ``--cluster local:2`` does it);
* for the cluster, the start-up and shut-down of the LocalCluster measured on their own, and the
  per-model overhead of the cluster path: (cluster batch time without start/stop - ``--jobs 2``
  batch time) / models, and Dask's own round trip for an empty task (1,000 no-op tasks);
* the median seconds of one model's audit (as the workers measured it).

Every run's summary, JSON, JUnit and SARIF documents are also compared byte for byte with the
``--jobs 1`` run.  The machine is shared: ``uptime`` is printed beside the figures.

Usage::

    python benchmarks/bench_batch.py --models 1000 --repeat 3
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

import generate  # noqa: E402

from audit import batch, cluster  # noqa: E402


def make_models(folder: Path, count: int, seed: int = 7) -> list[tuple[str, str | None]]:
    """``count`` model files of 50-500 members (re-used when already there)."""
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    pairs = []
    for i in range(count):
        kind = "lattice3d" if rng.random() < 0.2 else "grid2d"
        members = int(rng.integers(50, 501))
        path = folder / f"model-{i:04d}-{kind}-{members}.json"
        if not path.exists():
            generate.write(str(path), kind, members, perturb=5, seed=i + 1)
        pairs.append((str(path), None))
    return pairs


def documents(result: batch.BatchResult) -> tuple[str, ...]:
    return (
        batch.render_summary(result),
        batch.render_batch_json(result),
        batch.render_batch_junit(result),
        batch.render_batch_sarif(result),
    )


def uptime() -> str:
    try:
        return subprocess.run(["uptime"], capture_output=True, text=True, check=False).stdout.strip()
    except OSError:
        return "(uptime not available)"


def noop(x: int) -> int:
    return x


def dask_round_trip(tasks: int = 1000) -> tuple[float, float, float]:
    """(start s, seconds per empty task, stop s) of a LocalCluster of 2 worker processes."""
    t0 = time.perf_counter()
    client, local = cluster._connect(cluster.ClusterSpec(local_workers=2), cluster.CONNECT_TIMEOUT * 6)
    t1 = time.perf_counter()
    futures = [client.submit(noop, i, pure=False) for i in range(tasks)]
    client.gather(futures)
    t2 = time.perf_counter()
    client.close()
    local.close()
    t3 = time.perf_counter()
    return t1 - t0, (t2 - t1) / tasks, t3 - t2


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--models", type=int, default=1000)
    p.add_argument("--repeat", type=int, default=3)
    p.add_argument("--out", default=str(HERE / "out" / "batch"))
    a = p.parse_args(argv)
    os.environ.setdefault("OMP_NUM_THREADS", "1")
    t0 = time.perf_counter()
    pairs = make_models(Path(a.out), a.models)
    print(f"{len(pairs)} models ready in {time.perf_counter() - t0:.1f} s ({a.out})")
    members = [int(Path(m).stem.rsplit("-", 1)[1]) for m, _ in pairs]
    print(f"target members: min {min(members)}, median {statistics.median(members):.0f}, max {max(members)}")
    print(
        f"machine: {platform.processor() or platform.machine()}, {os.cpu_count()} cores, "
        f"Python {platform.python_version()}"
    )
    kwargs = {"sarif": True}
    runs = {"--jobs 1": {"jobs": 1}, "--jobs 2": {"jobs": 2}, "--cluster local:2": {"cluster": "local:2"}}
    times: dict[str, list[float]] = {k: [] for k in runs}
    per_model: dict[str, list[float]] = {k: [] for k in runs}
    reference: tuple[str, ...] | None = None
    same = True
    loads: list[str] = []
    for rep in range(a.repeat):
        for label, opts in runs.items():
            loads.append(f"{label} #{rep + 1} before: {uptime()}")
            t = time.perf_counter()
            result = batch.run_batch(pairs, audit_kwargs=kwargs, cluster_timeout=120.0, **opts)  # type: ignore[arg-type]
            times[label].append(time.perf_counter() - t)
            per_model[label].append(statistics.median(e.seconds for e in result.entries))
            docs = documents(result)
            if reference is None:
                reference = docs
            same = same and docs == reference
            tally = ", ".join(f"{n} {s}" for s, n in result.tally.items() if n)
            print(f"  {label:<18} repeat {rep + 1}: {times[label][-1]:7.1f} s ({tally})", flush=True)
    start, per_task, stop = dask_round_trip()
    loads.append(f"after: {uptime()}")
    n = len(pairs)
    print()
    print(f"{'run':<18} {'batch s':>9} {'models/s':>9} {'per model s':>12}   (medians of {a.repeat})")
    med = {k: statistics.median(v) for k, v in times.items()}
    for label in runs:
        print(f"{label:<18} {med[label]:9.1f} {n / med[label]:9.2f} {statistics.median(per_model[label]):12.3f}")
    cluster_only = med["--cluster local:2"] - start - stop
    print()
    print(f"LocalCluster of 2 workers: start {start:.1f} s, stop {stop:.1f} s (one measurement)")
    print(
        f"cluster path overhead per model: ({cluster_only:.1f} - {med['--jobs 2']:.1f}) / {n} = "
        f"{(cluster_only - med['--jobs 2']) / n * 1000:.1f} ms (batch without start/stop, against --jobs 2)"
    )
    print(f"Dask round trip of an empty task: {per_task * 1000:.2f} ms")
    print(
        f"speed-up --jobs 2 / --jobs 1: {med['--jobs 1'] / med['--jobs 2']:.2f}x; "
        f"cluster / --jobs 1: {med['--jobs 1'] / med['--cluster local:2']:.2f}x"
    )
    print(f"documents byte-identical across all runs: {same}")
    print("load while measuring:")
    for line in loads:
        print(f"  {line}")
    return 0 if same else 1


if __name__ == "__main__":
    sys.exit(main())
