"""The split estimator: runs of a power of two, cost 2N, exact merging, block-size invariance, state, exact references.

References: Ishigami's analytic variance terms (tests/exact.py, Proc. ISUMA '90,
1990); a sum of one-input terms has nu = 1 (common practice, no source);
Student-t intervals over independent randomizations (common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest
from exact import ishigami

from audit.design import Design
from audit.engine import Group, Job, Task, run, run_task
from audit.errors import UserError
from audit.estimators import make_estimator, split_counts, t_interval
from audit.estimators.split import split_inputs
from audit.inputs import Law
from model_zoo import functions as fz

LAWS = [Law("uniform", {"low": -np.pi, "high": np.pi})] * 3


def _evaluator(x):
    y = fz.ishigami(x)
    return {"out": np.stack([y, y**2, np.sin(x[:, 1])], axis=1)}


def _job(points, replicates, seed, detail=True, evaluator=_evaluator, laws=LAWS, sampler="sobol"):
    est = make_estimator("fast", d=len(laws), points=points)
    design = Design(laws, points, replicates, seed, sampler, copies=est.copies)
    return Job("test", evaluator, design, est, [Group("out", 3, detail)])


def _same(a, b):
    for name in ("mean", "variance", "total_sum", "total", "first"):
        x, y = getattr(a, name), getattr(b, name)
        if x is None:
            assert y is None
            continue
        np.testing.assert_allclose(y, x, rtol=1e-12, atol=1e-12 * np.abs(x).max())


@pytest.mark.parametrize("d", [1, 3, 5, 7, 8, 50, 64, 100])
@pytest.mark.parametrize("points", [128, 1024, 4096])
def test_runs_are_aligned_powers_of_two_adding_up_to_n(d, points):
    if points < d:
        with pytest.raises(ValueError):
            split_counts(points, d)
        return
    counts = split_counts(points, d)
    assert counts.sum() == points and len(counts) == d
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    assert all(c & (c - 1) == 0 and s % c == 0 for c, s in zip(counts, starts, strict=True))
    assert counts.max() <= 2 * counts.min()
    js = split_inputs(0, points, counts)
    np.testing.assert_array_equal(np.bincount(js, minlength=d), counts)
    assert np.all(np.diff(js) >= 0)  # consecutive runs


def test_other_point_counts_are_balanced_and_the_assignment_ignores_blocks():
    counts = split_counts(1000, 7)
    assert counts.sum() == 1000 and counts.max() - counts.min() <= 1
    whole = split_inputs(0, 1000, counts)
    parts = np.concatenate([split_inputs(s, 100, counts) for s in range(0, 1000, 100)])
    np.testing.assert_array_equal(whole, parts)


def test_rows_change_the_input_of_their_run():
    design = Design([Law("normal")] * 5, 64, 1, seed=1)
    block = design.block(0, 16, 32)
    est = make_estimator("fast", d=5, points=64)
    X, js = est.layout(block, np.float64)
    np.testing.assert_array_equal(js, split_inputs(16, 32, split_counts(64, 5)))
    np.testing.assert_array_equal(X[:32], block.A)
    for i, j in enumerate(js):
        assert np.flatnonzero(X[32 + i] != block.A[i]).tolist() == [j]
        assert X[32 + i, j] == block.B[i, j]


def test_costs_2n_whatever_d_and_refuses_too_few_points():
    for d in (4, 64):
        calls = []

        def f(x, calls=calls):
            calls.append(len(x))
            return {"out": np.stack([x.sum(axis=1)] * 3, axis=1)}

        job = _job(256, 4, 2, evaluator=f, laws=[Law("normal")] * d)
        run(job, block=64)
        assert sum(calls) == 2 * 256 * 4
    with pytest.raises(UserError, match="at least as many points"):
        make_estimator("fast", d=8, points=4).check(4)
    with pytest.raises(ValueError, match="built for"):
        make_estimator("fast", d=8, points=64).check(128)


@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_halves_equals_whole(detail):
    job = _job(1024, 1, 4, detail)
    whole = run_task(job, Task(0, 0, 1024))["out"]
    merged = run_task(job, Task(0, 0, 256))["out"]  # runs of 512, 256, 256: the first is cut in two
    merged.merge(run_task(job, Task(0, 256, 256))["out"])
    merged.merge(run_task(job, Task(0, 512, 512))["out"])
    _same(whole.finish(0), merged.finish(0))


@pytest.mark.parametrize("detail", [True, False])
def test_block_size_does_not_change_the_answer(detail):
    small = run(_job(512, 3, 5, detail), block=32)["out"]
    large = run(_job(512, 3, 5, detail), block=512)["out"]
    for a, b in zip(small, large, strict=True):
        _same(b.finish(0), a.finish(0))


@pytest.mark.parametrize("detail", [True, False])
def test_state_round_trip(detail):
    job = _job(256, 1, 6, detail)
    parts = [run_task(job, Task(0, s, 64))["out"] for s in range(0, 256, 64)]
    restored = job.estimator.restore(parts[0].state())
    for p in parts[1:]:
        restored.merge(job.estimator.restore(p.state()))
    _same(run_task(job, Task(0, 0, 256))["out"].finish(0), restored.finish(0))


def test_detail_and_no_detail_give_the_same_nu():
    a = run(_job(1024, 2, 9, True), block=256)["out"]
    b = run(_job(1024, 2, 9, False), block=256)["out"]
    for x, y in zip(a, b, strict=True):
        np.testing.assert_allclose(y.finish(0).total_sum, x.finish(0).total_sum, rtol=1e-12)


def test_ishigami_nu_and_total_indices_within_the_interval():
    # exact: tests/exact.ishigami; 4 comparisons (nu and three total indices), Bonferroni: each at 1 - 0.05/4
    ref = ishigami()
    job = _job(8192, 10, 7)
    reps = [s.finish(job.design.ddof) for s in run(job)["out"]]
    var = np.array([r.variance[0] for r in reps])
    level = 1 - 0.05 / 4
    iv = t_interval(np.array([r.total_sum[0] for r in reps]) / var, level)
    assert iv.low <= ref["nu"] <= iv.high
    it = t_interval(np.array([r.total[:, 0] for r in reps]) / var[:, None], level)
    assert np.all((it.low <= ref["total"]) & (ref["total"] <= it.high))


def test_additive_nu_within_the_interval_with_plain_monte_carlo():
    def f(x):
        y = fz.additive(x)
        return {"out": np.stack([y, y, y], axis=1)}

    job = _job(3000, 10, 8, detail=False, evaluator=f, laws=[Law("normal")] * 6, sampler="mc")
    reps = [s.finish(job.design.ddof) for s in run(job)["out"]]
    iv = t_interval(np.array([r.total_sum[0] / r.variance[0] for r in reps]))
    assert iv.low <= 1.0 <= iv.high
