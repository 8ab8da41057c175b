"""The one engine every workflow runs on: tasks of design rows through an evaluator into sums.

A :class:`Job` is everything one estimation needs: an *evaluator* (a callable
taking (m, d) rows and returning a dict of named (m, units) arrays), a
:class:`~audit.design.Design`, an estimator (:mod:`audit.estimators`) and the
:class:`Group`\\ s of units to measure. Its work is a lazily generated stream of
:class:`Task` -- rows ``[start, start + n)`` of randomization ``rep`` -- each
turned by :func:`run_task` into one set of mergeable sums per group. Tasks are
independent: they run in this process, on a ``dask.distributed`` cluster
(:mod:`audit.cluster`) or across a kill and a resume (:mod:`audit.checkpoint`),
and merging their sums gives the same answer up to rounding.

Audit, compare and every phase of advise are jobs run by :func:`run`, so each
honours the executor, the checkpoint (with its interval), the memory plan and
the check for non-finite model outputs.
"""

from __future__ import annotations

import itertools
import os
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field, replace
from typing import Any, Protocol

import numpy as np

from . import buffers
from .design import Design
from .estimators.base import Estimator, Sums
from .finite import NonFiniteError, check_inputs, check_outputs, fits
from .memory import IN_FLIGHT, native_outputs, plan_block
from .streaming import call_size, stream

__all__ = [
    "OVERLAP_VALUES",
    "Evaluator",
    "Executor",
    "Group",
    "Job",
    "JobRecord",
    "LocalExecutor",
    "NonFiniteError",
    "Task",
    "evaluate_task",
    "iter_tasks",
    "run",
    "run_task",
    "sum_task",
]

Evaluator = Callable[[np.ndarray], Mapping[str, np.ndarray]]
Progress = Callable[[int, str], None]

#: Model values (rows x units) a task must return before the local executor uses a second thread for it.
OVERLAP_VALUES = 1 << 18


@dataclass(frozen=True)
class Group:
    """Units to measure: the evaluator's array ``name`` with ``units`` columns.

    ``detail`` keeps per-input sums (indices of every input) -- d times the
    state; without it only variance and mean dimension are measured.
    """

    name: str
    units: int
    detail: bool = True


@dataclass(frozen=True)
class Task:
    """Rows ``[start, start + n)`` of randomization ``rep``."""

    rep: int
    start: int
    n: int


@dataclass
class Job:
    """One estimation: what to evaluate, on which points, with which estimator, measuring what.

    Attributes
    ----------
    name : str
        Key of the job in a checkpoint and in progress messages ("audit", "freeze check"...).
    evaluator : callable
        (m, d) rows -> dict of (m, units) arrays, one per group name.
    design : Design
    estimator : Estimator
    groups : list of Group
    feature_names : list of str
        For messages about non-finite values.
    dtype : numpy float type
        Type of the rows handed to the evaluator (float32 for float32 networks).
    cost : int
        Model evaluations per evaluator row (a pre-integrated model: its Gauss nodes).
    identity : dict
        What else identifies the job's numbers for a checkpoint (the model's hash...).
    """

    name: str
    evaluator: Evaluator
    design: Design
    estimator: Estimator
    groups: list[Group]
    feature_names: list[str] = field(default_factory=list)
    dtype: Any = np.float64
    cost: int = 1
    identity: dict[str, Any] = field(default_factory=dict)

    @property
    def units(self) -> int:
        return sum(g.units for g in self.groups)

    @property
    def evaluations(self) -> int:
        """Model evaluations of the whole job."""
        d = self.design
        return d.points * d.replicates * self.estimator.rows_per_point() * self.cost

    def fingerprint(self) -> dict[str, Any]:
        """Everything the job's numbers depend on (not how the rows are split into tasks)."""
        d = self.design
        est = self.estimator
        return {
            "points": d.points,
            "replicates": d.replicates,
            "seed": d.seed,
            "sampler": d.sampler,
            "copies": d.copies,
            "d": d.d,
            "laws": [law.to_dict() for law in d.laws],
            **({"columns": [list(span) for span in d.spans]} if d.spans is not None else {}),
            "estimator": est.name,
            "estimator_settings": est.settings() if hasattr(est, "settings") else {},
            "rows_per_point": est.rows_per_point(),
            "groups": [[g.name, g.units, g.detail] for g in self.groups],
            "cost": self.cost,
            **self.identity,
        }


class Executor(Protocol):
    """Runs a job's tasks somewhere and yields ``(task, sums per group)`` as they finish."""

    def map(self, job: Job, tasks: Iterable[Task]) -> Iterator[tuple[Task, dict[str, Sums]]]: ...


class LocalExecutor:
    """Runs tasks here, yielded in their order, with two blocks in flight when they are large.

    Large blocks (``OVERLAP_VALUES``) of a model that takes concurrent calls (its
    evaluator's ``concurrent``: ONNX models) run side by side, each task whole --
    evaluation and sums -- in its own thread on a session with its share of the cores,
    lent the arrays of that thread's last task (:mod:`audit.buffers`);
    on 2 cores this took audits with the activation layers from 1.52x to 1.25x (a
    64-256-256-10 MLP) and from 1.80x to 1.44x (the digits CNN) the model's own
    inference on one two-thread session (tests/bench). Other models overlap instead:
    one task's sums are formed in a helper thread while the model evaluates the next
    (numpy and the model runtimes release the GIL). Either way the merged sums are those
    of :func:`run_task` one task after the other.

    Parameters
    ----------
    overlap : bool
        Use a second thread for large blocks (two blocks in flight, see ``IN_FLIGHT``).
    calls : int, optional
        Blocks run side by side (default: ``IN_FLIGHT``, at most one per core); 1 always overlaps.
    """

    def __init__(self, overlap: bool = True, calls: int | None = None) -> None:
        self.overlap = overlap
        self.calls = min(IN_FLIGHT, os.cpu_count() or 1) if calls is None else max(1, int(calls))

    def map(self, job: Job, tasks: Iterable[Task]) -> Iterator[tuple[Task, dict[str, Sums]]]:
        tasks = iter(tasks)
        first = next(tasks, None)
        if first is None:
            return
        values = first.n * job.estimator.rows_per_point() * job.units
        if not self.overlap or values < OVERLAP_VALUES:  # small blocks: handing over costs more than it saves
            for t in itertools.chain([first], tasks):
                yield t, run_task(job, t)
            return
        make = getattr(job.evaluator, "concurrent", None)
        twin = make(self.calls) if self.calls > 1 and callable(make) else None
        if twin is not None:
            yield from _side_by_side(replace(job, evaluator=twin), itertools.chain([first], tasks), self.calls)
            return
        with ThreadPoolExecutor(1, thread_name_prefix="netdim-sums") as pool:
            pending: tuple[Task, Future] | None = None
            try:
                for t in itertools.chain([first], tasks):
                    try:
                        work = evaluate_task(job, t)
                    except BaseException:
                        if pending is not None:  # an interrupt or a model failure never costs finished work
                            done, pending = pending, None
                            yield done[0], done[1].result()
                        raise
                    future = pool.submit(sum_task, job, *work)
                    if pending is not None:
                        yield pending[0], pending[1].result()
                    pending = (t, future)
                if pending is not None:
                    yield pending[0], pending[1].result()
                    pending = None
            finally:
                if pending is not None:
                    pending[1].cancel()


def _side_by_side(job: Job, tasks: Iterable[Task], calls: int) -> Iterator[tuple[Task, dict[str, Sums]]]:
    """Run ``calls`` tasks at a time in as many threads; yield them in order (a failure after
    the tasks before it, so finished work is never lost)."""
    with ThreadPoolExecutor(calls, thread_name_prefix="netdim-blocks") as pool:
        pending: deque[tuple[Task, Future]] = deque()
        try:
            for t in tasks:
                if len(pending) == calls:
                    done, future = pending.popleft()
                    yield done, future.result()
                pending.append((t, pool.submit(_lent_task, job, t)))
            while pending:
                done, future = pending.popleft()
                yield done, future.result()
        finally:
            for _, future in pending:
                future.cancel()


def _lent_task(job: Job, task: Task) -> dict[str, Sums]:
    """:func:`run_task` with the arrays of this thread's last task lent to the model (each task
    evaluated and summed here, nothing but its sums kept: :mod:`audit.buffers`)."""
    with buffers.lending():
        return run_task(job, task)


def iter_tasks(points: int, replicates: int, block: int, done: Mapping[int, Sequence[tuple[int, int]]] | None = None):
    """The tasks of a run, randomization by randomization, generated lazily.

    ``done`` maps a randomization to the row ranges ``(start, n)`` already finished
    (from a checkpoint); only the rows outside them are generated, in blocks of at
    most ``block`` rows, whatever block size the finished work used.
    """
    for rep in range(replicates):
        covered = sorted((done or {}).get(rep, ()))
        pos = 0
        for start, n in [*covered, (points, 0)]:
            while pos < start:
                m = min(block, start - pos)
                yield Task(rep, pos, m)
                pos += m
            pos = max(pos, start + n)


def evaluate_task(job: Job, task: Task) -> tuple[Any, np.ndarray, Any, Mapping[str, np.ndarray]]:
    """The model's part of a task: its block of design points, the model rows, the layout context
    and the evaluator's arrays."""
    block = job.design.block(task.rep, task.start, task.n)
    check_inputs(job, block)
    X, context = job.estimator.layout(block, job.dtype)
    return block, X, context, job.evaluator(X)


def sum_task(job: Job, block: Any, X: np.ndarray, context: Any, out: Mapping[str, np.ndarray]) -> dict[str, Sums]:
    """The estimator's part of a task: one set of sums per group from the evaluator's arrays.

    An estimator whose sums take the model's float rows as they are (``native_outputs``)
    gets them without a float64 copy, and its sums -- which bound every value they saw --
    stand for the scan of the outputs for NaN, infinities and overflow (:mod:`audit.finite`).
    """
    native = native_outputs(job.estimator)
    sums: dict[str, Sums] = {}
    for g in job.groups:
        if g.name not in out:
            raise KeyError(f"the evaluator returned no array named {g.name!r}")
        y = np.asarray(out[g.name])
        if not native or y.dtype.kind != "f":
            y = y.astype(np.float64, copy=False)
        y = y.reshape(len(X), -1)
        if y.shape[1] != g.units:
            raise ValueError(f"group {g.name!r}: expected {g.units} units, the evaluator returned {y.shape[1]}.")
        if not native:
            check_outputs(job, g.name, y, X)
        s = job.estimator.sums(g.units, g.detail, block)
        with np.errstate(invalid="ignore", over="ignore"):
            s.add(y, context)
        if native and not fits(s):
            check_outputs(job, g.name, y, X)
        sums[g.name] = s
    return sums


def run_task(job: Job, task: Task) -> dict[str, Sums]:
    """Evaluate one task of ``job`` and return one set of sums per group.

    A model that is called a few rows at a time (its evaluator's ``call_rows``, fewer when
    a call's values would leave the cache: :func:`~audit.streaming.call_size`) has the
    sums of its hidden layers formed call by call (:mod:`audit.streaming`), when the
    estimator's sums take a block in parts; the numbers are the same up to the order of
    float64 additions. Anything wrong with the values runs the task whole, whose checks
    give the message.
    """
    rows = getattr(job.evaluator, "call_rows", None)
    if not rows or not native_outputs(job.estimator) or task.n * job.estimator.rows_per_point() <= rows:
        return sum_task(job, *evaluate_task(job, task))
    block = job.design.block(task.rep, task.start, task.n)
    check_inputs(job, block)
    X, context = job.estimator.layout(block, job.dtype)
    sums = {g.name: job.estimator.sums(g.units, g.detail, block) for g in job.groups}
    parts = {name: s for name, s in sums.items() if getattr(s, "streams", False)}
    rows = call_size(rows, job.units * np.dtype(job.dtype).itemsize)
    rest = stream(job.evaluator, X, rows, parts, {g.name: g.units for g in job.groups}, task.n) if parts else None
    if rest is None or not all(fits(s) for s in parts.values()):
        return sum_task(job, block, X, context, job.evaluator(X))
    others = sum_task(replace(job, groups=[g for g in job.groups if g.name not in parts]), block, X, context, rest)
    return {g.name: parts[g.name] if g.name in parts else others[g.name] for g in job.groups}


def run(
    job: Job,
    *,
    block: int | None = None,
    progress: Progress | None = None,
    checkpoint: Any = None,
    executor: Executor | None = None,
) -> dict[str, list[Sums]]:
    """Run every task of ``job`` and merge the sums per group and randomization.

    Parameters
    ----------
    job : Job
    block : int, optional
        Points per task (default from the memory budget, :func:`plan_block`).
    progress : callable, optional
        Called as ``progress(model_evaluations, phase)`` after each task.
    checkpoint : audit.checkpoint.Checkpoint, optional
        Finished work is kept there (saved at its interval, when the job ends and when
        it fails) and a job found in it resumes where it stopped.
    executor : Executor, optional
        Where the tasks run (default: here, in order).

    Returns
    -------
    dict of str to list of Sums
        One set of sums per randomization for every group.
    """
    design = job.design
    job.estimator.check(design.points)
    if block is None:
        block = plan_block(
            design.points, design.d, job.units, job.estimator.rows_per_point(), native=native_outputs(job.estimator)
        )
    record = checkpoint.job(job) if checkpoint is not None else JobRecord(job)
    per_point = job.estimator.rows_per_point() * job.cost
    if progress is not None and record.rows_done:
        progress(record.rows_done * per_point, f"{job.name}, resumed")
    tasks = iter_tasks(design.points, design.replicates, block, record.done_ranges())
    results = (executor or LocalExecutor()).map(job, tasks)
    try:
        for t, part in results:
            record.add(t, part)
            if progress is not None:
                progress(t.n * per_point, f"{job.name}, randomization {t.rep + 1}/{design.replicates}")
            if checkpoint is not None:
                checkpoint.save_if_due()
    except BaseException:
        if checkpoint is not None:
            checkpoint.save()
        raise
    if checkpoint is not None:
        checkpoint.save()
    return record.complete()


class JobRecord:
    """Finished work of a job: merged sums per group and randomization, and the tasks done.

    A checkpoint keeps one per job (and saves it); without a checkpoint the engine
    keeps one in memory.
    """

    def __init__(self, job: Job) -> None:
        self.job = job
        self.sums: dict[str, list[Sums | None]] = {g.name: [None] * job.design.replicates for g in job.groups}
        self.done: list[Task] = []
        self.rows_done = 0

    def done_ranges(self) -> dict[int, list[tuple[int, int]]]:
        out: dict[int, list[tuple[int, int]]] = {}
        for t in self.done:
            out.setdefault(t.rep, []).append((t.start, t.n))
        return out

    def add(self, task: Task, part: dict[str, Sums]) -> None:
        for name, s in part.items():
            cur = self.sums[name][task.rep]
            if cur is None:
                self.sums[name][task.rep] = s
            else:
                cur.merge(s)
        self.done.append(task)
        self.rows_done += task.n

    def complete(self) -> dict[str, list[Sums]]:
        missing = [(g, r) for g, reps in self.sums.items() for r, s in enumerate(reps) if s is None]
        if missing or any(s.rows != self.job.design.points for reps in self.sums.values() for s in reps):
            raise RuntimeError(f"job {self.job.name!r} ended with randomizations missing rows.")
        return {g: list(reps) for g, reps in self.sums.items()}  # type: ignore[misc]
