"""Checks every estimator must pass, shared by the per-estimator unit tests (test helpers, no test here).

The sums of disjoint blocks of one randomization merge into the sums of the whole (to 1e-12: only the
rounding of a few additions differs), in any order; they survive their state (what a checkpoint keeps,
written and read as an ``.npz`` without pickles); and ``engine.run`` gives the same numbers whatever
the block size. Exact references are checked per estimator with :func:`t_bound`.
"""

from __future__ import annotations

import dataclasses
import io
from collections.abc import Sequence

import numpy as np
from scipy import stats

from audit.design import Design
from audit.engine import Group, Job, Task, run, run_task
from audit.estimators import make_estimator
from audit.inputs import Law
from model_zoo import functions as fz

#: Ishigami's inputs (uniform on [-π, π]), for the merging checks.
LAWS = [Law("uniform", {"low": -np.pi, "high": np.pi})] * 3
#: Family-wise error of a test that compares several estimates with exact values.
FAMILY_ERROR = 0.01
#: Scipy warns that Sobol' blocks of other sizes than powers of two are unbalanced; blocks of any size are tested.
ANY_BLOCK = "ignore:The balance properties of Sobol:UserWarning"


def evaluator(x: np.ndarray) -> dict[str, np.ndarray]:
    """Three units: the Ishigami function, its square and a constant."""
    y = fz.ishigami(x)
    return {"out": np.stack([y, y**2, np.zeros_like(y) + 3.0], axis=1)}


def job(estimator, design: Design, groups: list[Group], func=evaluator) -> Job:
    """A job of ``estimator`` (a registry name or an estimator object)."""
    if isinstance(estimator, str):
        estimator = make_estimator(estimator, d=design.d, points=design.points)
    return Job("test", func, design, estimator, groups)


def finished(sums, ddof: int = 1) -> dict[str, np.ndarray | None]:
    """Every field of ``sums.finish(ddof)``."""
    r = sums.finish(ddof)
    return {f.name: getattr(r, f.name) for f in dataclasses.fields(r)}


def assert_same(a: dict, b: dict, rtol: float = 1e-12) -> None:
    """Every field agrees to ``rtol``, relative to the field's largest value where entries are 0."""
    assert a.keys() == b.keys()
    for name in a:
        x, y = a[name], b[name]
        if x is None:
            assert y is None, name
            continue
        np.testing.assert_allclose(y, x, rtol=rtol, atol=rtol * np.nanmax(np.abs(x)), err_msg=name)


def merged(parts: Sequence):
    """The first sums with every other merged into it."""
    out = parts[0]
    for p in parts[1:]:
        out.merge(p)
    return out


def block_parts(job: Job, rep: int, block: int, group: str = "out") -> list:
    """The sums of every block of ``block`` rows of randomization ``rep``, in order."""
    n = job.design.points
    return [run_task(job, Task(rep, s, min(block, n - s)))[group] for s in range(0, n, block)]


def assert_merge_of_halves_equals_whole(job: Job, block: int, group: str = "out") -> None:
    """Sums of the whole randomization 0 against the merged sums of its blocks, every field to 1e-12."""
    n = job.design.points
    whole = run_task(job, Task(0, 0, n))[group]
    parts = block_parts(job, 0, block, group)
    assert_same(finished(whole), finished(merged(parts)))


def assert_merging_is_order_free(job: Job, block: int, seed: int = 0, group: str = "out") -> None:
    """Sequential, shuffled and pairwise (tree) merging give the same sums to 1e-12."""
    forward = finished(merged(block_parts(job, 0, block, group)))
    parts = block_parts(job, 0, block, group)
    shuffled = [parts[i] for i in np.random.default_rng(seed).permutation(len(parts))]
    assert_same(forward, finished(merged(shuffled)))
    level = block_parts(job, 0, block, group)
    while len(level) > 1:
        level = [merged(level[i : i + 2]) for i in range(0, len(level), 2)]
    assert_same(forward, finished(level[0]))


def through_npz(state: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """A state written and read back as a checkpoint does (``.npz``, no pickles)."""
    buffer = io.BytesIO()
    np.savez(buffer, **state)
    buffer.seek(0)
    with np.load(buffer, allow_pickle=False) as z:
        return {k: z[k] for k in z.files}


def assert_state_round_trip(job: Job, block: int, group: str = "out") -> None:
    """Restored sums finish exactly like the originals, and merge like them."""
    parts = block_parts(job, 0, block, group)
    for p in parts:
        restored = job.estimator.restore(through_npz(p.state()))
        assert restored.rows == p.rows
        for name, value in finished(p).items():
            np.testing.assert_array_equal(finished(restored)[name], value, err_msg=name)
    again = merged([job.estimator.restore(through_npz(p.state())) for p in block_parts(job, 0, block, group)])
    assert_same(finished(merged(parts)), finished(again))


def assert_block_size_invariance(job: Job, blocks: Sequence[int], group: str = "out") -> None:
    """``engine.run`` with every block size gives the same sums for every randomization, to 1e-12."""
    runs = [run(job, block=b)[group] for b in blocks]
    for other in runs[1:]:
        for a, b in zip(runs[0], other, strict=True):
            assert a.rows == b.rows == job.design.points
            assert_same(finished(a), finished(b))


def t_bound(m: int, replicates: int) -> float:
    """Bonferroni-adjusted two-sided t quantile for m comparisons at FAMILY_ERROR (common practice, no source)."""
    return float(stats.t.ppf(1 - FAMILY_ERROR / (2 * m), replicates - 1))
