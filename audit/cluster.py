"""Batches on a Dask cluster: the same unit of work as a local batch, sent to ``dask.distributed``.

``check FOLDER --cluster ADDRESS`` sends each model to a running scheduler; ``--cluster local:N``
starts a :class:`distributed.LocalCluster` of N worker processes for the run and stops it after.
The unit of work is :func:`audit.batch.audit_file` (paths in, a small :class:`~audit.batch.BatchEntry`
out; the model is read on the worker and never leaves it), so the model files must be readable at
the same paths on every worker (a shared file system).

Scheduling:

* largest files first (Dask ``priority`` = file size), so that one big model does not start last;
* each task asks for a ``MEMORY`` resource (bytes) estimated from its file size and the measured peak
  memory per member (:func:`memory_estimate`); the resource is used only when every worker declares
  one (``dask worker --resources MEMORY=8e9``; the local cluster declares each worker's memory
  limit), since Dask would never run a task that needs a resource no worker has;
* one MKL/OpenMP/BLAS thread per task (the nanny's pre-spawn environment, and again in the task);
* lost workers: an exception inside the task is retried once (``retries=1``); a worker that dies
  while running the task has it rescheduled by the scheduler, which gives up after its
  ``allowed-failures`` (set to 1 for the local cluster: a model whose worker dies twice; with
  ``worker-saturation`` 1.0 a worker holds only the task it runs, so no other model is blamed).  A model
  that cannot be audited either way is reported as ``crashed`` with the worker's message, never lost.

:func:`run` returns the entries in the order of the pairs given (sorted by path by the caller), so
the batch documents are the same bytes as with ``--jobs``.
"""

from __future__ import annotations

import os
import re
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from audit.batch import BatchEntry, audit_file

#: seconds allowed to reach a scheduler (or to start the local cluster) before giving up
CONNECT_TIMEOUT = 20.0

#: peak memory of one audit per member, bytes: the largest per-member ratio of the measured audits in
#: the README's performance table (2D grid 9,861 members: 66 MiB, 7.0 KiB per member; 3D lattice
#: 311,255 members: 1,677 MiB, 5.5 KiB), rounded up
PEAK_BYTES_PER_MEMBER = 8 * 1024
#: bytes of a model file per member: 2D grid of 999,941 members in a 105 MB file (the same table),
#: rounded down so that the member count is over-estimated
FILE_BYTES_PER_MEMBER = 90
#: the interpreter, numpy, scipy and the engine's own imports in a worker, bytes (measured ~150 MiB)
BASE_BYTES = 192 * 1024 * 1024

_ADDRESS = re.compile(r"^(?:(tcp|tls|ws|wss)://)?([A-Za-z0-9][A-Za-z0-9.\-]*|\[[0-9A-Fa-f:.]+\]):(\d{1,5})$")
_LOCAL = re.compile(r"^local:(\d{1,4})$")


class ClusterError(Exception):
    """The cluster cannot be used: a bad --cluster value, dask missing, or the scheduler unreachable."""


@dataclass(frozen=True)
class ClusterSpec:
    """Where to run: a scheduler address, or a local cluster of ``local_workers`` processes."""

    address: str | None = None
    local_workers: int = 0

    @property
    def label(self) -> str:
        return self.address or f"local:{self.local_workers}"


def parse(text: str) -> ClusterSpec:
    """``local:N`` or a scheduler address (``tcp://host:8786``, ``host:8786``, ``tls://...``)."""
    value = text.strip()
    m = _LOCAL.match(value)
    if m:
        n = int(m.group(1))
        if not 1 <= n <= 256:
            raise ClusterError(f"--cluster {text!r}: local:N takes between 1 and 256 worker processes")
        return ClusterSpec(local_workers=n)
    m = _ADDRESS.match(value)
    if m and 1 <= int(m.group(3)) <= 65535:
        return ClusterSpec(address=value if m.group(1) else f"tcp://{value}")
    raise ClusterError(
        f"--cluster {text!r}: expected a scheduler address such as tcp://host:8786 (or host:8786), "
        "or local:N to start N local worker processes"
    )


def memory_estimate(path: str) -> int:
    """Bytes one audit of the model file at ``path`` may need at its peak (see the constants above)."""
    try:
        size = os.path.getsize(path)
    except OSError:
        size = 0
    return BASE_BYTES + (size // FILE_BYTES_PER_MEMBER + 1) * PEAK_BYTES_PER_MEMBER


def _one_thread() -> None:
    for name in ("OMP_NUM_THREADS", "MKL_NUM_THREADS", "OPENBLAS_NUM_THREADS"):
        os.environ[name] = "1"


def _task(
    work: Callable[[str, str | None, Mapping[str, Any]], BatchEntry],
    model_path: str,
    results_path: str | None,
    kwargs: Mapping[str, Any],
) -> BatchEntry:
    """What runs on a worker: one thread, then the unit of work."""
    from audit.batch import single_thread

    _one_thread()
    with single_thread():
        return work(model_path, results_path, kwargs)


def _import_distributed() -> Any:
    try:
        import distributed
    except ImportError:
        raise ClusterError(
            '--cluster needs dask.distributed, which is not installed: pip install ".[cluster]"'
        ) from None
    return distributed


def _connect(spec: ClusterSpec, timeout: float) -> tuple[Any, Any]:
    """A client (and the local cluster it owns, or None); raises ClusterError within ``timeout`` seconds."""
    distributed = _import_distributed()
    import dask

    if spec.address is not None:
        try:
            client = distributed.Client(spec.address, timeout=timeout, set_as_default=False)
        except Exception as exc:  # OSError / TimeoutError from the comm layer, whatever the wording
            raise ClusterError(
                f"--cluster {spec.address}: no scheduler answered within {timeout:g} s ({type(exc).__name__})"
            ) from None
        return client, None
    with dask.config.set(
        {
            "distributed.scheduler.allowed-failures": 1,
            # a worker holds only the task it runs, so a dying worker casts no suspicion on queued ones
            "distributed.scheduler.worker-saturation": 1.0,
            "distributed.nanny.pre-spawn-environ": {
                "OMP_NUM_THREADS": 1,
                "MKL_NUM_THREADS": 1,
                "OPENBLAS_NUM_THREADS": 1,
            },
        }
    ):
        try:
            memory = _local_memory(spec.local_workers)
            cluster = distributed.LocalCluster(
                n_workers=spec.local_workers,
                threads_per_worker=1,
                processes=True,
                dashboard_address=None,
                memory_limit=memory,
                resources={"MEMORY": memory},
                silence_logs=50,
            )
            client = distributed.Client(cluster, timeout=timeout, set_as_default=False)
        except Exception as exc:
            raise ClusterError(f"--cluster {spec.label}: the local cluster did not start ({exc})") from None
    return client, cluster


def _local_memory(workers: int) -> int:
    """Each local worker's share of the machine's memory (bytes)."""
    try:
        total = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (ValueError, OSError, AttributeError):
        total = 8 * 1024**3
    return max(BASE_BYTES, int(total * 0.8) // max(1, workers))


def _memory_resource(client: Any) -> bool:
    """True when every worker declares a MEMORY resource (else asking for one would stall the batch)."""
    workers = client.scheduler_info().get("workers", {})
    return bool(workers) and all("MEMORY" in (w.get("resources") or {}) for w in workers.values())


def run(
    pairs: list[tuple[str, str | None]],
    spec: ClusterSpec,
    kwargs: Mapping[str, Any],
    *,
    work: Callable[[str, str | None, Mapping[str, Any]], BatchEntry] = audit_file,
    timeout: float = CONNECT_TIMEOUT,
    wait: float | None = None,
) -> list[BatchEntry]:
    """Audit ``pairs`` on the cluster; the entries come back in the order of ``pairs``.

    ``work`` is the unit of work (:func:`audit.batch.audit_file`; tests pass a wrapper of it);
    ``timeout`` the seconds allowed to reach the scheduler; ``wait`` (None: no limit) the seconds
    allowed for the whole batch, after which the models without a result are reported as crashed.
    Raises :class:`ClusterError` before any model is sent when the cluster cannot be used.
    """
    distributed = _import_distributed()
    client, cluster = _connect(spec, timeout)
    try:
        use_memory = _memory_resource(client)
        order = sorted(range(len(pairs)), key=lambda i: (-_size(pairs[i][0]), pairs[i][0]))
        futures: dict[int, Any] = {}
        for i in order:
            model, res = pairs[i]
            futures[i] = client.submit(
                _task,
                work,
                model,
                res,
                dict(kwargs),
                key=f"truss-audit-{i}-{os.path.basename(model)}",
                priority=_size(model),
                retries=1,
                pure=False,
                resources={"MEMORY": memory_estimate(model)} if use_memory else None,
            )
        out: list[BatchEntry] = []
        deadline = None if wait is None else time.monotonic() + wait
        for i, (model, res) in enumerate(pairs):
            try:
                left = None if deadline is None else max(0.0, deadline - time.monotonic())
                out.append(futures[i].result(timeout=left))
            except TimeoutError:
                out.append(BatchEntry(model, res, "crashed", 0.0, error=f"no result within {wait:g} s"))
            except distributed.KilledWorker as exc:
                out.append(BatchEntry(model, res, "crashed", 0.0, error=f"the worker process died twice: {exc}"))
            except Exception as exc:  # the task raised on both tries, or its result could not come back
                out.append(BatchEntry(model, res, "crashed", 0.0, error=f"{type(exc).__name__}: {exc}"))
        return out
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _size(path: str) -> int:
    try:
        return os.path.getsize(path)
    except OSError:
        return 0


__all__ = ["CONNECT_TIMEOUT", "ClusterError", "ClusterSpec", "memory_estimate", "parse", "run"]
