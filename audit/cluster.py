"""Run an audit's tasks on a ``dask.distributed`` cluster.

The engine's tasks (rows of one randomization) are independent and their
accumulators merge exactly, so the same tasks can run on the processes of a
local cluster or on the workers of a remote scheduler; the answer equals a
single-process run up to rounding. Models travel as "open this file again"
(each worker opens its own session once); Python models travel by reference
and must be importable on the workers.

Needs the ``cluster`` extra: ``pip install "netdim[cluster]"``.
"""

from __future__ import annotations

import hashlib
import io
import pickle
from collections.abc import Callable, Iterator, Sequence
from typing import Any

from .design import Design
from .engine import Evaluator, Group, Task, run_task
from .errors import UserError
from .models.open import reopen

__all__ = ["connect", "dask_executor", "portable_dumps", "portable_loads"]


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


def _run_portable(blob: bytes, *args: Any) -> Any:
    return run_task(portable_loads(blob), *args)


def connect(address: str) -> Any:
    """A ``dask.distributed.Client``: ``"local"`` or ``"local:N"`` starts N local worker processes.

    Parameters
    ----------
    address : str
        ``local``, ``local:N``, or a scheduler address such as ``tcp://10.0.0.5:8786``.
    """
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError as exc:
        raise UserError(
            'Running on a cluster needs dask.distributed: pip install "netdim[cluster]".'
        ) from exc
    if address == "local" or address.startswith("local:"):
        tail = address.partition(":")[2]
        if tail and not tail.isdigit():
            raise UserError(f"--cluster local:N needs a whole number of workers, got '{address}'.")
        workers = int(tail) if tail else None
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None)
        return Client(cluster)
    try:
        return Client(address, timeout=30)
    except (OSError, TimeoutError) as exc:
        raise UserError(
            f"Could not reach the dask scheduler at '{address}' ({exc}). Check the address and that the "
            "scheduler is running, or use --cluster local to start workers on this machine."
        ) from exc


def dask_executor(
    client: Any,
    evaluator: Evaluator,
    design: Design,
    groups: Sequence[Group],
    estimator: str,
    feature_names: Sequence[str] | None = None,
    dtype: type | None = None,
) -> Callable[[Sequence[Task]], Iterator[tuple[Task, dict]]]:
    """An ``executor`` for :func:`audit.engine.run` that runs tasks on ``client``'s workers.

    The evaluator and the design are sent to every worker once; tasks come back as
    they finish (merging is order-free).
    """
    import numpy as np
    from dask.distributed import as_completed

    try:
        blob = portable_dumps(evaluator)
        ev, des = client.scatter([blob, design], broadcast=True, hash=False)
    except Exception as exc:
        raise UserError(
            f"The model could not be sent to the cluster's workers ({type(exc).__name__}: {exc}). Python "
            "models must be module-level functions importable on the workers (not lambdas or closures)."
        ) from exc
    dt = dtype or np.float64

    def execute(tasks: Sequence[Task]) -> Iterator[tuple[Task, dict]]:
        futures = {
            client.submit(_run_portable, ev, des, list(groups), estimator, t, feature_names, dt, pure=False): t
            for t in tasks
        }
        for fut in as_completed(futures):
            yield futures[fut], fut.result()

    return execute
