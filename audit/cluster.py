"""Run the engine's tasks on a ``dask.distributed`` cluster.

A job's tasks (rows of one randomization) are independent and their sums
merge exactly, so the same tasks can run on the processes of a local cluster
or on the workers of a remote scheduler; the answer equals a single-process
run up to rounding. Each job travels to the workers once: opened model files
as "open this file again" (:func:`audit.models.open.reopen`, so each worker
opens its own session), Python models by reference (they must be importable
on the workers). Tasks are submitted a few at a time per worker, so the task
list is never built in memory.

Needs the ``cluster`` extra: ``pip install "netdim[cluster]"``.
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import os
import pickle
from collections.abc import Iterable, Iterator
from typing import Any

from .engine import Job, Task, run_task
from .errors import UserError
from .models.open import reopen

__all__ = ["DaskExecutor", "connect", "portable_dumps", "portable_loads"]

#: Tasks kept in flight per worker.
IN_FLIGHT = 4
#: The environment variable dask sets for its workers to return memory to the system.
TRIM = "MALLOC_TRIM_THRESHOLD_"


class _Portable(pickle.Pickler):
    """Pickles model files as "open this file again" (``open_args``), everything else as usual."""

    def reducer_override(self, obj: Any) -> Any:
        args = getattr(obj, "open_args", None) if not isinstance(obj, type) else None
        if isinstance(args, dict):
            return reopen, (args,)
        return NotImplemented


def portable_dumps(obj: Any) -> bytes:
    """Pickle ``obj`` for another process: opened model files travel as their open arguments."""
    buffer = io.BytesIO()
    _Portable(buffer, protocol=pickle.HIGHEST_PROTOCOL).dump(obj)
    return buffer.getvalue()


_LOADED: dict[str, Any] = {}


def portable_loads(blob: bytes) -> Any:
    """Unpickle what :func:`portable_dumps` made, once per process (models are opened once)."""
    key = hashlib.sha256(blob).hexdigest()
    if key not in _LOADED:
        if len(_LOADED) >= 8:
            _LOADED.clear()
        _LOADED[key] = pickle.loads(blob)
    return _LOADED[key]


def _run_portable(blob: bytes, task: Task) -> Any:
    return run_task(portable_loads(blob), task)


def connect(address: str) -> Any:
    """A ``dask.distributed.Client``: ``"local"`` or ``"local:N"`` starts N local worker processes.

    Parameters
    ----------
    address : str
        ``local``, ``local:N`` (N from 1 to the machine's cores), or a scheduler
        address such as ``tcp://10.0.0.5:8786``.

    Raises
    ------
    UserError
        When dask is missing, N is not a whole number in range, or no scheduler answers.
    """
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError as exc:
        raise UserError('Running on a cluster needs dask.distributed: pip install "netdim[cluster]".') from exc
    if address == "local" or address.startswith("local:"):
        tail = address.partition(":")[2]
        cores = os.cpu_count() or 1
        if tail and (not tail.isdigit() or not 1 <= int(tail) <= cores):
            raise UserError(
                f"`cluster` 'local:N' needs a whole number of worker processes from 1 to this machine's "
                f"{cores} cores, got '{address}'."
            )
        workers = int(tail) if tail else cores
        import dask

        # dask starts workers with MALLOC_TRIM_THRESHOLD_ set, which also fixes glibc's mmap threshold: every
        # array of 128 KiB or more is then mapped and unmapped afresh, and a numpy-bound model ran 3.4x slower
        # in a worker than here (measured: 3.2 s against 0.94 s a call). Local workers keep the usual malloc.
        with dask.config.set({f"distributed.nanny.pre-spawn-environ.{TRIM}": None}):
            cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None)
        return Client(cluster)
    try:
        return Client(address, timeout=10)
    except Exception as exc:  # dask raises OSError, TimeoutError or its own errors for a bad address
        raise UserError(
            f"Could not reach a dask scheduler at '{address}' ({type(exc).__name__}: {exc}). Check the "
            "address and that the scheduler is running, or use `cluster` 'local' to start workers on "
            "this machine."
        ) from exc


def close(client: Any) -> str | None:
    """Close a client (and a local cluster it started); a failure is returned as text, never raised."""
    try:
        cluster = getattr(client, "cluster", None)
        client.close()
        if cluster is not None:
            cluster.close()
    except Exception as exc:  # closing must never lose finished work
        return f"{type(exc).__name__}: {exc}"
    return None


class DaskExecutor:
    """An engine executor that runs tasks on a ``dask.distributed`` client's workers.

    Parameters
    ----------
    client : dask.distributed.Client
    """

    def __init__(self, client: Any) -> None:
        self.client = client

    def map(self, job: Job, tasks: Iterable[Task]) -> Iterator[tuple[Task, dict]]:
        from dask.distributed import as_completed

        try:
            blob = portable_dumps(job)
        except Exception as exc:
            raise UserError(
                f"The model could not be sent to the cluster's workers ({type(exc).__name__}: {exc}). Python "
                "models must be module-level functions importable on the workers (not lambdas or closures)."
            ) from exc
        remote = self.client.scatter(blob, broadcast=True, hash=False)
        workers = max(1, len(self.client.scheduler_info().get("workers", {})))
        pending = iter(tasks)
        futures: dict[Any, Task] = {}
        queue = as_completed()

        def submit(count: int) -> None:
            for t in pending:
                fut = self.client.submit(_run_portable, remote, t, pure=False)
                futures[fut] = t
                queue.add(fut)
                count -= 1
                if count <= 0:
                    return

        submit(IN_FLIGHT * workers)
        try:
            for fut in queue:
                task = futures.pop(fut)
                result = fut.result()
                submit(1)
                yield task, result
        finally:
            for fut in futures:
                with contextlib.suppress(Exception):
                    fut.cancel()
