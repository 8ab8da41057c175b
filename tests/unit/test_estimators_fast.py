"""The one-coordinate estimator of ν (audit.estimators.fast): exact merging, state, block size, references.

References: an additive function has ν = 1; a product of k centred factors Π (x_j − 1/2) under
U[0, 1]^k has ν = k (common practice, no source). Tolerances: the estimator's own 95 % interval.
"""

import estimator_checks as checks
import numpy as np
import pytest

from audit import audit_function
from audit.design import Design
from audit.engine import Group, Task, run, run_task
from audit.errors import UserError
from audit.estimators import Fast, fast_assignment, fast_counts, make_estimator, t_interval
from audit.estimators.fast import FastSums
from audit.inputs import Law
from model_zoo import functions as fz

LAWS = checks.LAWS
pytestmark = pytest.mark.filterwarnings(checks.ANY_BLOCK)


@pytest.mark.parametrize("estimator", ["hashed"])
@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_halves_equals_whole(estimator, detail):
    design = Design(LAWS, 1024, 1, seed=3)
    groups = [Group("out", 3, detail)]
    job = checks.job(estimator, design, groups)
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


@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_blocks_of_another_size_equals_whole(detail):
    job = checks.job("hashed", Design(LAWS, 1024, 1, seed=3), [Group("out", 3, detail)])
    checks.assert_merge_of_halves_equals_whole(job, block=100)


@pytest.mark.parametrize("detail", [True, False])
def test_merging_in_any_order_gives_the_same_sums(detail):
    job = checks.job("hashed", Design(LAWS, 512, 1, seed=5), [Group("out", 3, detail)])
    checks.assert_merging_is_order_free(job, block=48, seed=2)


@pytest.mark.parametrize("detail", [True, False])
def test_state_round_trip(detail):
    job = checks.job("hashed", Design(LAWS, 256, 1, seed=6), [Group("out", 3, detail)])
    checks.assert_state_round_trip(job, block=64)


@pytest.mark.parametrize("detail", [True, False])
def test_block_size_invariance_through_engine_run(detail):
    # the coordinate of a row depends on its global index only, so any split gives the same sums
    job = checks.job("hashed", Design(LAWS, 512, 3, seed=7), [Group("out", 3, detail)])
    checks.assert_block_size_invariance(job, [1, 5, 64, 512])


def test_fast_estimator_agrees_with_jansen():
    # the two estimators measure the same ν: their difference lies within 3 combined standard errors
    # (a single comparison; about 1 % two-sided under normality — common practice, no source)
    laws = [Law("uniform")] * 8
    nus = {}
    for name in ("jansen", "hashed"):
        design = Design(laws, 2048, 10, seed=8)
        job = checks.job(name, design, [Group("y", 1)], lambda x: {"y": fz.g_function(x)[:, None]})
        nus[name] = t_interval(_nu(run(job)["y"], design.ddof))
    full, fast = nus["jansen"], nus["hashed"]
    se = np.hypot(full.std_error, fast.std_error)
    assert abs(full.estimate - fast.estimate) <= 3 * se


def test_hashed_estimator_is_for_comparison_only():
    # dominated by the split estimator (reports/bench/estimators.md): not a user's choice
    with pytest.raises(UserError, match="valid choices: jansen, fast"):
        audit_function(fz.g_function, "uniform", dim=8, estimator="hashed", points=256, replicates=2, seed=1)


def test_fast_estimator_costs_2n_whatever_d():
    for d in (4, 64):
        calls = []

        def f(x, calls=calls):
            calls.append(len(x))
            return {"y": x.sum(axis=1, keepdims=True)}

        design = Design([Law("normal")] * d, 256, 8, seed=1)
        accs = run(checks.job("hashed", design, [Group("y", 1)], f), block=64)
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


def test_layout_resamples_one_coordinate_per_row():
    block = Design([Law("normal")] * 5, 64, 2, seed=3).block(1, 16, 32)
    X, js = Fast(5, 64).layout(block, np.float64)
    np.testing.assert_array_equal(js, fast_assignment(16, 32, 5, int(block.rep_seed)))
    np.testing.assert_array_equal(X[:32], block.A)
    changed = X[32:] != block.A
    assert np.array_equal(np.flatnonzero(changed.any(axis=1)), np.arange(32))  # one column per row...
    assert np.all(changed.sum(axis=1) == 1)
    np.testing.assert_array_equal(X[32:][np.arange(32), js], block.B[np.arange(32), js])  # ...taken from B


def test_sums_without_detail_give_the_same_mean_dimension():
    design = Design(LAWS, 256, 1, seed=8)
    job = checks.job("hashed", design, [Group("out", 3, True)])
    full = run_task(job, Task(0, 0, 256))["out"].finish(0)
    job.groups = [Group("out", 3, False)]
    short = run_task(job, Task(0, 0, 256))["out"].finish(0)
    assert short.total is None and full.first is None
    np.testing.assert_allclose(short.total_sum, full.total_sum, rtol=1e-12, atol=1e-14)


def test_counts_cover_every_row_when_n_is_not_a_multiple_of_d():
    for n, d in ((1024, 7), (100, 3), (5, 5), (9, 4)):
        counts = fast_counts(n, d, seed=4)
        assert counts.sum() == n and counts.max() - counts.min() <= 1
        np.testing.assert_array_equal(np.bincount(fast_assignment(0, n, d, seed=4), minlength=d), counts)


def test_the_fast_estimator_refuses_what_it_cannot_do():
    with pytest.raises(UserError, match="at least as many points as inputs"):
        Fast(8, 4).check(4)
    with pytest.raises(UserError, match="single inputs only"):
        make_estimator("hashed", d=3, points=8, groups=[[0, 1], [2]])
    with pytest.raises(ValueError, match="needs weights"):
        FastSums(1, 3, detail=False)
    with pytest.raises(ValueError, match="different shapes"):
        FastSums(1, 3).merge(FastSums(1, 4))
    with pytest.raises(ValueError, match="no rows"):
        FastSums(1, 3).finish(0)
    assert Fast(100, 1024).rows_per_point() == 2


def _nu(sums: list, ddof: int) -> np.ndarray:
    reps = [s.finish(ddof) for s in sums]
    return np.array([r.total_sum[0] / r.variance[0] for r in reps])


@pytest.mark.parametrize("detail", [True, False])
def test_additive_function_has_mean_dimension_one(detail):
    a = np.array([1.0, -2.0, 0.5, 3.0])
    design = Design([Law("normal")] * 4, 512, 10, seed=23)
    job = checks.job("hashed", design, [Group("y", 1, detail)], lambda x: {"y": (x @ a)[:, None]})
    est = t_interval(_nu(run(job)["y"], design.ddof))
    assert est.low <= 1.0 <= est.high, est


def test_product_of_centred_factors_has_mean_dimension_k():
    design = Design([Law("uniform")] * 3, 1024, 10, seed=24)
    job = checks.job("hashed", design, [Group("y", 1)], lambda x: {"y": np.prod(x - 0.5, axis=1)[:, None]})
    est = t_interval(_nu(run(job)["y"], design.ddof))
    assert est.low <= 3.0 <= est.high, est
