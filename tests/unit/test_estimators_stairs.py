"""The winding stairs estimator: its rows, cost, exact merging, block-size invariance, state, exact references.

References: Ishigami's analytic variance terms (tests/exact.py, Proc. ISUMA '90,
1990); the g-function's product formula (tests/exact.py); Student-t intervals
over independent randomizations (common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest
from exact import g_function, ishigami

from audit.design import Design
from audit.engine import Group, Job, Task, run, run_task
from audit.estimators import WindingStairs, make_estimator, t_interval
from audit.inputs import Law
from model_zoo import functions as fz

LAWS = [Law("uniform", {"low": -np.pi, "high": np.pi})] * 3


def _evaluator(x):
    y = fz.ishigami(x)
    return {"out": np.stack([y, y**2, np.sin(x[:, 1])], axis=1)}


def _job(design, detail=True, evaluator=_evaluator, groups=None):
    est = make_estimator("stairs", d=design.d, points=design.points, groups=groups)
    return Job("test", evaluator, design, est, [Group("out", 3, detail)])


def _same(a, b):
    for name in ("mean", "variance", "total_sum", "total", "first"):
        x, y = getattr(a, name), getattr(b, name)
        if x is None:
            assert y is None
            continue
        np.testing.assert_allclose(y, x, rtol=1e-12, atol=1e-12 * np.abs(x).max())


def test_rows_walk_from_a_to_b_one_input_at_a_time():
    design = Design([Law("normal")] * 5, 16, 1, seed=1)
    block = design.block(0, 0, 16)
    X, _ = WindingStairs(5).layout(block, np.float64)
    X = X.reshape(6, 16, 5)
    np.testing.assert_array_equal(X[0], block.A)
    np.testing.assert_array_equal(X[-1], block.B)
    for i in range(1, 6):
        changed = np.flatnonzero((X[i] != X[i - 1]).any(axis=0))
        assert changed.tolist() == [i - 1]
        np.testing.assert_array_equal(X[i][:, i - 1], block.B[:, i - 1])


def test_groups_are_steps_of_the_path_in_the_given_order():
    design = Design([Law("normal")] * 4, 8, 1, seed=2)
    block = design.block(0, 0, 8)
    est = make_estimator("stairs", d=4, groups=[[3], [0, 2]])
    assert est.rows_per_point() == 3
    X = est.layout(block, np.float64)[0].reshape(3, 8, 4)
    np.testing.assert_array_equal(X[1][:, 3], block.B[:, 3])
    np.testing.assert_array_equal(X[1][:, :3], block.A[:, :3])
    np.testing.assert_array_equal(X[2][:, [0, 2, 3]], block.B[:, [0, 2, 3]])
    np.testing.assert_array_equal(X[2][:, 1], block.A[:, 1])  # column 1 is in no group: never changed
    with pytest.raises(ValueError, match="disjoint"):
        WindingStairs(4, [[0, 1], [1, 2]])


def test_costs_n_times_d_plus_one():
    calls = []

    def f(x):
        calls.append(len(x))
        return {"out": np.stack([x.sum(axis=1)] * 3, axis=1)}

    design = Design([Law("normal")] * 7, 128, 2, seed=3)
    run(_job(design, evaluator=f), block=32)
    assert sum(calls) == 128 * 2 * (7 + 1)


@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_halves_equals_whole(detail):
    design = Design(LAWS, 1024, 1, seed=4)
    job = _job(design, detail)
    whole = run_task(job, Task(0, 0, 1024))["out"]
    merged = run_task(job, Task(0, 0, 512))["out"]
    merged.merge(run_task(job, Task(0, 512, 512))["out"])
    _same(whole.finish(0), merged.finish(0))
    assert whole.finish(0).first is None  # no first-order indices (module docstring)


@pytest.mark.parametrize("detail", [True, False])
def test_block_size_does_not_change_the_answer(detail):
    design = Design(LAWS, 512, 3, seed=5)
    small = run(_job(design, detail), block=32)["out"]
    large = run(_job(design, detail), block=512)["out"]
    for a, b in zip(small, large, strict=True):
        _same(b.finish(0), a.finish(0))


@pytest.mark.parametrize("detail", [True, False])
def test_state_round_trip(detail):
    design = Design(LAWS, 256, 1, seed=6)
    job = _job(design, detail)
    parts = [run_task(job, Task(0, s, 64))["out"] for s in range(0, 256, 64)]
    restored = job.estimator.restore(parts[0].state())
    for p in parts[1:]:
        restored.merge(job.estimator.restore(p.state()))
    whole = run_task(job, Task(0, 0, 256))["out"]
    _same(whole.finish(0), restored.finish(0))
    held = sum(np.size(v) for k, v in whole.state().items() if k != "meta")
    assert job.estimator.state_size(3, detail) >= held  # the memory estimate covers the state


def test_ishigami_nu_and_total_indices_within_the_interval():
    # exact: tests/exact.ishigami; 4 comparisons (nu and three total indices), Bonferroni: each at 1 - 0.05/4
    ref = ishigami()
    design = Design(LAWS, 4096, 10, seed=7)
    reps = [s.finish(design.ddof) for s in run(_job(design))["out"]]
    var = np.array([r.variance[0] for r in reps])
    nu = np.array([r.total_sum[0] for r in reps]) / var
    tot = np.array([r.total[:, 0] for r in reps]) / var[:, None]
    level = 1 - 0.05 / 4
    iv = t_interval(nu, level)
    assert iv.low <= ref["nu"] <= iv.high
    it = t_interval(tot, level)
    assert np.all((it.low <= ref["total"]) & (ref["total"] <= it.high))


def test_g_function_nu_within_the_interval_with_plain_monte_carlo():
    a = np.arange(12) / 2
    ref = g_function(a)["nu"]
    design = Design([Law("uniform")] * 12, 2000, 10, seed=8, sampler="mc")
    job = Job(
        "g",
        lambda x: {"y": fz.g_function(x, a)[:, None]},
        design,
        make_estimator("stairs", d=12),
        [Group("y", 1, False)],
    )
    reps = [s.finish(design.ddof) for s in run(job)["y"]]
    iv = t_interval(np.array([r.total_sum[0] / r.variance[0] for r in reps]))
    assert iv.low <= ref <= iv.high
