"""One workflow's run of the engine: its executor, checkpoint and progress, opened and closed once.

Every workflow (audit, compare, every phase of advise) runs its jobs through
one :class:`Session`, so the cluster, the checkpoint (and its interval) and the
progress callback apply to all of them alike. Closing the session never loses
finished work: a cluster that fails to close, or a checkpoint that could not
be written, becomes a notice of the result instead of an error.
"""

from __future__ import annotations

from typing import Any

from .. import engine, memory
from ..estimators.base import Sums
from .options import RunOptions

__all__ = ["Session", "job_block"]


def job_block(job: engine.Job, run: RunOptions) -> int:
    """Points per task for ``job``: the run's ``block``, else planned within its memory limit."""
    if run.block:
        return run.block
    d, limit = job.design, run.memory_limit
    budget = None if limit is None else limit // (2 * memory.IN_FLIGHT)
    est = job.estimator
    return memory.plan_block(d.points, d.d, job.units, est.rows_per_point(), budget, memory.native_outputs(est))


class Session:
    """Runs a workflow's jobs; use as a context manager.

    Parameters
    ----------
    run : RunOptions
    """

    def __init__(self, run: RunOptions) -> None:
        self.options = run
        self.notices: list[str] = []
        self.checkpoint: Any = None
        self.executor: Any = None
        self._client: Any = None
        self._owns_client = False

    def __enter__(self) -> Session:
        cluster = self.options.cluster
        try:
            if isinstance(cluster, str):
                from ..cluster import DaskExecutor, connect

                self._client, self._owns_client = connect(cluster), True
                self.executor = DaskExecutor(self._client)
            elif cluster is not None and hasattr(cluster, "map") and not hasattr(cluster, "scheduler_info"):
                self.executor = cluster  # an engine executor
            elif cluster is not None:
                from ..cluster import DaskExecutor

                self._client = cluster
                self.executor = DaskExecutor(cluster)
            if self.options.checkpoint is not None:
                from ..checkpoint import Checkpoint

                self.checkpoint = Checkpoint(self.options.checkpoint, self.options.checkpoint_seconds)
        except BaseException:
            self.close()
            raise
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Release the checkpoint and close a cluster the session opened; failures become notices."""
        if self.checkpoint is not None:
            if self.checkpoint.failure:
                self.notices.append(
                    f"The checkpoint '{self.checkpoint.path}' could not be written ({self.checkpoint.failure}); "
                    "the run finished without it."
                )
            self.checkpoint.close()
            self.checkpoint = None
        if self._client is not None and self._owns_client:
            from ..cluster import close

            failure = close(self._client)
            if failure:
                self.notices.append(f"The cluster did not close cleanly ({failure}); the results are complete.")
        self._client = None

    def run(self, job: engine.Job, *, block: int | None = None, label: str | None = None) -> dict[str, list[Sums]]:
        """Run ``job`` on this session's executor, with its checkpoint and progress (``block`` default
        :func:`job_block`)."""
        progress = self.options.progress
        if progress is not None and label is not None:
            inner = progress
            progress = lambda n, phase: inner(n, f"{label}, {phase}")  # noqa: E731
        return engine.run(
            job,
            block=block or job_block(job, self.options),
            progress=progress,
            checkpoint=self.checkpoint,
            executor=self.executor,
        )
