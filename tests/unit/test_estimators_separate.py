"""The separate pairs: own columns per input, cost, exact merging, block-size invariance, state, exact references.

References: Ishigami's analytic variance terms (tests/exact.py, Proc. ISUMA '90,
1990); a product of centred factors has one ANOVA term (common practice, no
source); Student-t intervals over independent randomizations (common practice,
no source).
"""

from __future__ import annotations

import numpy as np
import pytest
from exact import ishigami

from audit.design import Design
from audit.engine import Group, Job, Task, run, run_task
from audit.estimators import SeparatePairs, make_estimator, t_interval
from audit.inputs import Law
from model_zoo import functions as fz

LAWS = [Law("uniform", {"low": -np.pi, "high": np.pi})] * 3


def _evaluator(x):
    y = fz.ishigami(x)
    return {"out": np.stack([y, y**2, np.sin(x[:, 1])], axis=1)}


def _job(points, replicates, seed, detail=True, evaluator=_evaluator, laws=LAWS, sampler="sobol"):
    est = make_estimator("separate", d=len(laws), points=points)
    design = Design(laws, points, replicates, seed, sampler, copies=est.copies)
    return Job("test", evaluator, design, est, [Group("out", 3, detail)])


def _same(a, b):
    for name in ("mean", "variance", "total_sum", "total", "first"):
        x, y = getattr(a, name), getattr(b, name)
        if x is None:
            assert y is None
            continue
        np.testing.assert_allclose(y, x, rtol=1e-12, atol=1e-12 * np.abs(x).max())


def test_each_input_has_its_own_columns():
    d = 4
    est = SeparatePairs(d)
    assert est.copies == d + 1 and est.rows_per_point() == 2 * d
    design = Design([Law("normal")] * d, 16, 1, seed=1, copies=est.copies)
    block = design.block(0, 0, 16)
    X = est.layout(block, np.float64)[0].reshape(2, d, 16, d)
    for j in range(d):
        np.testing.assert_array_equal(X[0, j], block.X[:, j * d : (j + 1) * d])  # x of input j: block j
        changed = np.flatnonzero((X[1, j] != X[0, j]).any(axis=0))
        assert changed.tolist() == [j]
        np.testing.assert_array_equal(X[1, j][:, j], block.X[:, d * d + j])  # z_j: column j of the last block
    # no two inputs share a column of the design: the pairs of different inputs use different points
    used = [set(range(j * d, (j + 1) * d)) | {d * d + j} for j in range(d)]
    assert all(not (used[a] & used[b]) for a in range(d) for b in range(a + 1, d))


def test_refuses_a_design_with_too_few_copies_and_overlapping_groups():
    est = SeparatePairs(3)
    block = Design(LAWS, 8, 1, seed=1).block(0, 0, 8)  # copies = 2
    with pytest.raises(ValueError, match="copies"):
        est.layout(block, np.float64)
    with pytest.raises(ValueError, match="disjoint"):
        SeparatePairs(3, [[0, 1], [1]])


def test_costs_2_n_d():
    calls = []

    def f(x):
        calls.append(len(x))
        return {"out": np.stack([x.sum(axis=1)] * 3, axis=1)}

    job = _job(64, 2, 3, evaluator=f, laws=[Law("normal")] * 6)
    run(job, block=16)
    assert sum(calls) == 2 * 64 * 6 * 2


@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_halves_equals_whole(detail):
    job = _job(1024, 1, 4, detail)
    whole = run_task(job, Task(0, 0, 1024))["out"]
    merged = run_task(job, Task(0, 0, 512))["out"]
    merged.merge(run_task(job, Task(0, 512, 512))["out"])
    _same(whole.finish(0), merged.finish(0))


@pytest.mark.parametrize("detail", [True, False])
def test_block_size_does_not_change_the_answer(detail):
    small = run(_job(512, 3, 5, detail), block=32)["out"]
    large = run(_job(512, 3, 5, detail), block=512)["out"]
    for a, b in zip(small, large, strict=True):
        _same(b.finish(0), a.finish(0))


def test_state_round_trip():
    job = _job(256, 1, 6)
    parts = [run_task(job, Task(0, s, 64))["out"] for s in range(0, 256, 64)]
    restored = job.estimator.restore(parts[0].state())
    for p in parts[1:]:
        restored.merge(job.estimator.restore(p.state()))
    _same(run_task(job, Task(0, 0, 256))["out"].finish(0), restored.finish(0))


def test_ishigami_nu_and_total_indices_within_the_interval():
    # exact: tests/exact.ishigami; 4 comparisons (nu and three total indices), Bonferroni: each at 1 - 0.05/4
    ref = ishigami()
    job = _job(4096, 10, 7)
    reps = [s.finish(job.design.ddof) for s in run(job)["out"]]
    var = np.array([r.variance[0] for r in reps])
    level = 1 - 0.05 / 4
    iv = t_interval(np.array([r.total_sum[0] for r in reps]) / var, level)
    assert iv.low <= ref["nu"] <= iv.high
    it = t_interval(np.array([r.total[:, 0] for r in reps]) / var[:, None], level)
    assert np.all((it.low <= ref["total"]) & (ref["total"] <= it.high))


def test_product_nu_within_the_interval_with_plain_monte_carlo():
    # prod_j (x_j - 1/2) under U[0, 1]^5 is one ANOVA term of all five inputs: nu = 5
    def f(x):
        y = fz.product(x)
        return {"out": np.stack([y, y, y], axis=1)}

    job = _job(3000, 10, 8, detail=False, evaluator=f, laws=[Law("uniform")] * 5, sampler="mc")
    reps = [s.finish(job.design.ddof) for s in run(job)["out"]]
    iv = t_interval(np.array([r.total_sum[0] / r.variance[0] for r in reps]))
    assert iv.low <= 5.0 <= iv.high


def test_the_workflows_build_the_design_the_estimator_needs():
    # prepare builds its Design with copies=estimator.copies (d + 1 blocks here); exact: tests/exact.ishigami
    from audit import audit_function

    r = audit_function(fz.ishigami, LAWS, points=2048, replicates=8, seed=11, estimator="separate")
    out = r.outputs[0]
    assert r.design["estimator"] == "separate"
    assert out.mean_dimension.ci_low <= ishigami()["nu"] <= out.mean_dimension.ci_high
    assert len(out.total_index) == 3 and out.first_order == []
