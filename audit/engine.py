"""Drive design blocks through an evaluator into accumulators.

The work of a run is a list of :class:`Task` -- rows ``[start, start + n)`` of
randomization ``rep`` -- each turned by :func:`run_task` into one
:class:`~audit.estimators.Accumulator` per group of units. Tasks are
independent: they can run in this process (:func:`run`), in a
``dask.distributed`` cluster (``audit.cluster``) or across a kill and a resume
(checkpoints), and merging their accumulators gives the same answer up to
rounding.

An *evaluator* is any callable taking an (m, d) float64 array and returning a
dict of named (m, units) arrays; a :class:`Group` names the arrays to measure.
"""

from __future__ import annotations

import json
import os
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np

from .design import Design
from .errors import UserError
from .estimators import ESTIMATORS, Accumulator, fast_assignment, fast_counts

__all__ = [
    "Evaluator",
    "Group",
    "NonFiniteError",
    "Task",
    "available_memory",
    "estimate_memory",
    "make_tasks",
    "plan_block",
    "run",
    "run_task",
]

Evaluator = Callable[[np.ndarray], Mapping[str, np.ndarray]]
Progress = Callable[[int, str], None]

#: Default share of available memory a run may use for its blocks.
MEMORY_SHARE = 0.25
#: Most model rows (points × rows per point) one task evaluates: bounds peak memory
#: independently of N, and keeps progress and checkpoints fine-grained.
MAX_ROWS = 1 << 16


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


class NonFiniteError(UserError):
    """The model returned NaN or infinite values for some sampled inputs."""


def available_memory() -> int:
    """Bytes of memory available to this process now (Linux ``MemAvailable``)."""
    try:
        with open("/proc/meminfo") as f:
            for line in f:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    try:
        return os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_AVPHYS_PAGES")
    except (ValueError, OSError, AttributeError):
        return 4 << 30


def _rows_per_point(d: int, estimator: str) -> int:
    return d + 2 if estimator == "jansen" else 2


def _bytes_per_point(d: int, units: int, estimator: str) -> int:
    # inputs (float64 + a float32 copy), outputs (float64), and the per-j differences
    return _rows_per_point(d, estimator) * (12 * d + 24 * units)


def plan_block(points: int, d: int, units: int, estimator: str, budget: int | None = None) -> int:
    """Points per task: the largest power of two whose block fits the memory budget.

    Parameters
    ----------
    points : int
        N per randomization.
    d, units : int
        Inputs, and units captured in all groups together.
    estimator : {"jansen", "fast"}
    budget : int, optional
        Bytes a block may use; default ``MEMORY_SHARE`` of available memory.
    """
    budget = int(budget if budget is not None else MEMORY_SHARE * available_memory())
    per = _bytes_per_point(d, units, estimator)
    n = max(1, min(budget // per, MAX_ROWS // _rows_per_point(d, estimator)))
    n = 1 << (int(n).bit_length() - 1)
    return int(min(n, points))


def estimate_memory(design: Design, groups: Sequence[Group], estimator: str, block: int) -> int:
    """Peak bytes of a run: accumulator state for every randomization, plus one block."""
    d = design.d
    state = 0
    for g in groups:
        per_unit = (3 * d if estimator == "jansen" else d) if g.detail else 1
        state += 8 * g.units * (per_unit + 3)
    units = sum(g.units for g in groups)
    return state * (design.replicates + 2) + block * _bytes_per_point(d, units, estimator)


def make_tasks(points: int, replicates: int, block: int) -> list[Task]:
    """All tasks of a run, randomization by randomization."""
    return [Task(r, s, min(block, points - s)) for r in range(replicates) for s in range(0, points, block)]


def _stack_jansen(A: np.ndarray, B: np.ndarray) -> np.ndarray:
    """Rows A, B, then A_B^{(j)} for j = 0..d-1, as one (n (d + 2), d) array."""
    n, d = A.shape
    X = np.empty((d + 2, n, d), dtype=A.dtype)
    X[0], X[1] = A, B
    X[2:] = A
    j = np.arange(d)
    X[2 + j, :, j] = B.T
    return X.reshape((d + 2) * n, d)


def _check_finite(name: str, y: np.ndarray, X: np.ndarray, names: Sequence[str] | None) -> None:
    bad = ~np.isfinite(y)
    if not bad.any():
        return
    rows = np.flatnonzero(bad.any(axis=1))
    i = rows[0]
    labels = names or [f"x{j}" for j in range(X.shape[1])]
    example = ", ".join(f"{labels[j]}={X[i, j]:.6g}" for j in range(min(X.shape[1], 12)))
    more = " ..." if X.shape[1] > 12 else ""
    what = "outputs" if name == "outputs" else f"layer '{name}'"
    raise NonFiniteError(
        f"The model returned NaN or infinite values in its {what} for {len(rows)} of {len(y)} "
        f"sampled input rows (e.g. {example}{more}). Sobol' indices need finite values everywhere "
        "the input laws put mass: use bounded laws (uniform, triangular) or narrower ones in the "
        "input spec, or make the model finite on the whole input range."
    )


def run_task(
    evaluator: Evaluator,
    design: Design,
    groups: Sequence[Group],
    estimator: str,
    task: Task,
    feature_names: Sequence[str] | None = None,
    dtype: type = np.float64,
) -> dict[str, Accumulator]:
    """Evaluate one task and return one accumulator per group.

    ``dtype`` is the type of the rows handed to the evaluator: float32 for a network
    stored in float32 saves building (and casting) a float64 copy of every row.
    """
    if estimator not in ESTIMATORS:
        raise ValueError(f"unknown estimator {estimator!r}; valid choices: {', '.join(ESTIMATORS)}.")
    block = design.block(task.rep, task.start, task.n)
    A, B, n, d = block.A.astype(dtype, copy=False), block.B.astype(dtype, copy=False), block.n, design.d
    if estimator == "jansen":
        X = _stack_jansen(A, B)
    else:
        js = fast_assignment(task.start, n, d, design.rep_seed(task.rep))
        AJ = A.copy()
        AJ[np.arange(n), js] = B[np.arange(n), js]
        X = np.concatenate([A, AJ])
    out = evaluator(X)
    accs: dict[str, Accumulator] = {}
    weights = 1.0 / fast_counts(design.points, d, design.rep_seed(task.rep)) if estimator == "fast" else None
    for g in groups:
        if g.name not in out:
            raise KeyError(f"the evaluator returned no array named {g.name!r}")
        y = np.asarray(out[g.name], dtype=np.float64).reshape(len(X), -1)
        if y.shape[1] != g.units:
            raise ValueError(f"group {g.name!r}: expected {g.units} units, the evaluator returned {y.shape[1]}.")
        _check_finite(g.name, y, X, feature_names)
        acc = Accumulator(g.units, d, estimator, g.detail, weights)
        if estimator == "jansen":
            acc.add_jansen(y[:n], y[n : 2 * n], y[2 * n :].reshape(d, n, g.units))
        else:
            acc.add_fast(y[:n], y[n:], js)
        accs[g.name] = acc
    return accs


class Checkpoint:
    """Finished tasks and merged sums, saved to an ``.npz`` file as the run goes.

    A checkpoint belongs to one run: its ``fingerprint`` (design, groups,
    estimator) must match for a resume.
    """

    def __init__(self, path: str | Path, fingerprint: dict, groups: Sequence[str]) -> None:
        self.path = Path(path)
        self.fingerprint = json.dumps(fingerprint, sort_keys=True)
        self.groups = list(groups)

    def load(self) -> tuple[set[tuple[int, int]], dict[str, list[Accumulator | None]]] | None:
        if not self.path.exists():
            return None
        try:
            with np.load(self.path, allow_pickle=False) as z:
                data = {k: z[k] for k in z.files}
        except Exception as exc:
            raise UserError(
                f"The checkpoint '{self.path}' could not be read ({type(exc).__name__}: {exc}). "
                "Delete it to start the run afresh."
            ) from exc
        if str(data.get("fingerprint")) != self.fingerprint:
            raise UserError(
                f"The checkpoint '{self.path}' belongs to a different run (other model, inputs, points, "
                "replicates, seed or layers). Use the same options to resume, or another checkpoint path."
            )
        done = {(int(r), int(s)) for r, s in data["done"].reshape(-1, 2)}
        states: dict[str, list[Accumulator | None]] = {}
        for key in data:
            if key.startswith("acc/"):
                _, gi, rep, field = key.split("/", 3)
                states.setdefault(self.groups[int(gi)], {}).setdefault(int(rep), {})[field] = data[key]
        accs = {
            g: [Accumulator.from_state(reps[r]) if r in reps else None for r in range(max(reps) + 1)]
            for g, reps in states.items()
        }
        return done, accs

    def save(self, done: set[tuple[int, int]], accs: dict[str, list[Accumulator | None]]) -> None:
        arrays: dict[str, np.ndarray] = {
            "fingerprint": np.array(self.fingerprint),
            "done": np.array(sorted(done), dtype=np.int64).reshape(-1, 2),
        }
        for gi, g in enumerate(self.groups):
            for r, acc in enumerate(accs[g]):
                if acc is not None:
                    for field, v in acc.state().items():
                        arrays[f"acc/{gi}/{r}/{field}"] = v
        tmp = self.path.with_name(self.path.name + ".tmp.npz")
        np.savez(tmp, **arrays)
        os.replace(tmp, self.path)


def run(
    evaluator: Evaluator,
    design: Design,
    groups: Sequence[Group],
    estimator: str = "jansen",
    *,
    block: int | None = None,
    progress: Progress | None = None,
    checkpoint: str | Path | None = None,
    checkpoint_seconds: float = 2.0,
    feature_names: Sequence[str] | None = None,
    executor: Callable[[Sequence[Task]], object] | None = None,
    dtype: type = np.float64,
) -> dict[str, list[Accumulator]]:
    """Run every task and merge accumulators per group and randomization.

    Parameters
    ----------
    evaluator : callable
        (m, d) float64 -> dict of (m, units) arrays.
    design : Design
    groups : sequence of Group
    estimator : {"jansen", "fast"}
    block : int, optional
        Points per task (default from the memory budget, :func:`plan_block`).
    progress : callable, optional
        Called as ``progress(evaluations_done_in_this_task, phase)`` after each task.
    checkpoint : path, optional
        Save finished work there (at most every ``checkpoint_seconds`` and when a
        task fails) and resume from it when it exists.
    feature_names : sequence of str, optional
        For messages about non-finite values.
    dtype : numpy float type
        Type of the rows handed to the evaluator (see :func:`run_task`).
    executor : callable, optional
        Maps the pending tasks to an iterable of ``(task, accumulators)`` as they
        finish (e.g. a dask cluster); default runs them here, in order.

    Returns
    -------
    dict of str to list of Accumulator
        One accumulator per randomization for every group.
    """
    if estimator not in ESTIMATORS:
        raise ValueError(f"unknown estimator {estimator!r}; valid choices: {', '.join(ESTIMATORS)}.")
    if estimator == "fast" and design.points < design.d:
        raise UserError(
            f"The fast estimator needs at least as many points as inputs ({design.d}); "
            f"got {design.points}. Raise --points."
        )
    units = sum(g.units for g in groups)
    if block is None:
        block = plan_block(design.points, design.d, units, estimator)
    tasks = make_tasks(design.points, design.replicates, block)
    accs: dict[str, list[Accumulator | None]] = {g.name: [None] * design.replicates for g in groups}
    done: set[tuple[int, int]] = set()
    ckpt = None
    if checkpoint is not None:
        fp = {
            "points": design.points,
            "replicates": design.replicates,
            "seed": design.seed,
            "sampler": design.sampler,
            "d": design.d,
            "estimator": estimator,
            "block": block,
            "laws": [law.to_dict() for law in design.laws],
            "groups": [asdict(g) for g in groups],
        }
        ckpt = Checkpoint(checkpoint, fp, [g.name for g in groups])
        loaded = ckpt.load()
        if loaded is not None:
            done, saved = loaded
            for g, reps in saved.items():
                if g in accs:
                    for r, a in enumerate(reps):
                        accs[g][r] = a
    pending = [t for t in tasks if (t.rep, t.start) not in done]
    per_point = _rows_per_point(design.d, estimator)
    if progress is not None and done:
        progress(sum(t.n for t in tasks if (t.rep, t.start) in done) * per_point, "resumed")

    def local(ts: Sequence[Task]):
        for t in ts:
            yield t, run_task(evaluator, design, groups, estimator, t, feature_names, dtype)

    results = (executor or local)(pending)
    last_save = -float("inf")  # the first finished task is saved at once
    try:
        for t, part in results:
            for g in groups:
                cur = accs[g.name][t.rep]
                if cur is None:
                    accs[g.name][t.rep] = part[g.name]
                else:
                    cur.merge(part[g.name])
            done.add((t.rep, t.start))
            if progress is not None:
                progress(t.n * per_point, f"randomization {t.rep + 1}/{design.replicates}")
            if ckpt is not None and time.monotonic() - last_save > checkpoint_seconds:
                ckpt.save(done, accs)
                last_save = -float("inf")  # the first finished task is saved at once
    except BaseException:
        if ckpt is not None and done:
            ckpt.save(done, accs)
        raise
    if ckpt is not None:
        ckpt.save(done, accs)
    return {g: [a for a in reps if a is not None] for g, reps in accs.items()}
