"""Accumulators: exact merging, block-size invariance, inert units, fast estimator, checkpoints."""

import numpy as np
import pytest

from audit import Law, audit_function
from audit.checkpoint import Checkpoint
from audit.design import Design
from audit.engine import Group, Job, Task, iter_tasks, run, run_task
from audit.estimators import fast_assignment, fast_counts, make_estimator, t_interval
from model_zoo import functions as fz


def _evaluator(x):
    y = fz.ishigami(x)
    return {"out": np.stack([y, y**2, np.zeros_like(y) + 3.0], axis=1)}


LAWS = [Law("uniform", {"low": -np.pi, "high": np.pi})] * 3


def _job(evaluator, design, groups, estimator="jansen"):
    est = make_estimator(estimator, d=design.d, points=design.points)
    return Job("test", evaluator, design, est, groups)


@pytest.mark.parametrize("estimator", ["jansen", "fast"])
@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_halves_equals_whole(estimator, detail):
    design = Design(LAWS, 1024, 1, seed=3)
    groups = [Group("out", 3, detail)]
    job = _job(_evaluator, design, groups, estimator)
    whole = run_task(job, Task(0, 0, 1024))["out"]
    parts = [run_task(job, Task(0, s, 128))["out"] for s in range(0, 1024, 128)]
    merged = parts[0]
    for p in parts[1:]:
        merged.merge(p)
    a, b = whole.finish(1), merged.finish(1)
    for name in ("mean", "variance", "total_sum", "total", "first"):
        x, y = getattr(a, name), getattr(b, name)
        if x is None:
            assert y is None
            continue
        np.testing.assert_allclose(y, x, rtol=1e-12, atol=1e-12 * np.abs(x).max())


def test_merge_in_any_order_and_state_round_trip():
    design = Design(LAWS, 256, 1, seed=4)
    groups = [Group("out", 3, True)]
    job = _job(_evaluator, design, groups)
    parts = [run_task(job, Task(0, s, 64))["out"] for s in range(0, 256, 64)]
    fwd = job.estimator.restore(parts[0].state())
    for p in parts[1:]:
        fwd.merge(job.estimator.restore(p.state()))
    rev = parts[3]
    for p in reversed(parts[:3]):
        rev.merge(p)
    np.testing.assert_allclose(fwd.finish(1).first, rev.finish(1).first, rtol=1e-12, atol=1e-14)
    np.testing.assert_allclose(fwd.finish(1).total, rev.finish(1).total, rtol=1e-12)


def test_block_size_does_not_change_the_answer():
    r1 = audit_function(fz.ishigami, LAWS, points=1024, replicates=4, seed=5, block=32)
    r2 = audit_function(fz.ishigami, LAWS, points=1024, replicates=4, seed=5, block=1024)
    a, b = r1.outputs[0], r2.outputs[0]
    assert a.mean_dimension.estimate == pytest.approx(b.mean_dimension.estimate, rel=1e-12)
    for x, y in zip(a.first_order + a.total_index, b.first_order + b.total_index, strict=True):
        assert x.value.estimate == pytest.approx(y.value.estimate, rel=1e-10, abs=1e-13)


def test_constant_output_is_inert_not_nan():
    r = audit_function(
        lambda x: np.stack([fz.ishigami(x), np.full(len(x), 2.5)], axis=1), LAWS, points=256, replicates=4, seed=6
    )
    live, dead = r.outputs
    assert not live.inert and live.mean_dimension is not None
    assert dead.inert and dead.mean_dimension is None and dead.total_index == []
    assert dead.mean.estimate == 2.5
    d = r.to_dict()["outputs"][1]
    assert d["inert"] is True and d["mean_dimension"] is None


def test_fast_estimator_agrees_with_jansen():
    # the two estimators measure the same ν: their difference lies within 3 combined standard errors
    # (a single comparison; about 1 % two-sided under normality — common practice, no source)
    kw = dict(points=2048, replicates=10, seed=8)
    full = audit_function(fz.g_function, "uniform", dim=8, **kw).outputs[0].mean_dimension
    fast = audit_function(fz.g_function, "uniform", dim=8, estimator="fast", **kw).outputs[0].mean_dimension
    se = np.hypot(full.std_error, fast.std_error)
    assert abs(full.estimate - fast.estimate) <= 3 * se


def test_fast_estimator_costs_2n_whatever_d():
    for d in (4, 64):
        calls = []

        def f(x, calls=calls):
            calls.append(len(x))
            return {"y": x.sum(axis=1, keepdims=True)}

        design = Design([Law("normal")] * d, 256, 8, seed=1)
        accs = run(_job(f, design, [Group("y", 1)], "fast"), block=64)
        assert sum(calls) == 2 * 256 * 8
        nu = [a.finish(0).total_sum[0] / a.finish(0).variance[0] for a in accs["y"]]
        _, lo, hi, _ = t_interval(np.array(nu))
        assert lo <= 1.0 <= hi  # a sum of inputs is additive: ν = 1


def test_fast_assignment_is_balanced():
    d, n = 7, 1024
    js = np.concatenate([fast_assignment(s, 128, d, seed=1) for s in range(0, n, 128)])
    np.testing.assert_array_equal(np.bincount(js, minlength=d), fast_counts(n, d, seed=1))
    # independent of the block split
    np.testing.assert_array_equal(js, fast_assignment(0, n, d, seed=1))
    # every run of d consecutive rows (aligned) visits every coordinate once
    assert all(sorted(js[i : i + d]) == list(range(d)) for i in range(0, n - d, d))


def test_t_interval_matches_scipy():
    from scipy import stats

    v = np.array([1.0, 1.2, 0.9, 1.1, 1.05])
    est, lo, hi, _ = t_interval(v)
    ref = stats.t.interval(0.95, len(v) - 1, loc=v.mean(), scale=stats.sem(v))  # scipy reference
    assert est == pytest.approx(v.mean())
    assert (lo, hi) == pytest.approx(ref)


def test_checkpoint_resume_after_failure_loses_nothing(tmp_path):
    design = Design(LAWS, 512, 3, seed=9)
    groups = [Group("out", 3, True)]
    ckpt = tmp_path / "run.npz"
    calls = {"n": 0}

    def flaky(x):
        calls["n"] += 1
        if calls["n"] == 5:
            raise KeyboardInterrupt  # a kill in the middle of the run
        return _evaluator(x)

    with pytest.raises(KeyboardInterrupt), Checkpoint(ckpt, interval=0) as store:
        run(_job(flaky, design, groups), block=128, checkpoint=store)
    assert ckpt.exists()
    seen = []
    with Checkpoint(ckpt) as store:
        resumed = run(_job(lambda x: seen.append(1) or _evaluator(x), design, groups), block=128, checkpoint=store)
    total = len(list(iter_tasks(512, 3, 128)))
    assert len(seen) == total - 4  # only the unfinished tasks run again
    fresh = run(_job(_evaluator, design, groups), block=128)
    for a, b in zip(resumed["out"], fresh["out"], strict=True):
        np.testing.assert_allclose(a.finish(1).total, b.finish(1).total, rtol=1e-12)
        np.testing.assert_allclose(a.finish(1).first, b.finish(1).first, rtol=1e-12, atol=1e-14)
