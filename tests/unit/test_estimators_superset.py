"""Superset importance of pairs: rows, exact merging, block-size invariance, state, and the exact ANOVA answer.

The reference case is f = x1 x2 + x3 x4 x5 + x6 with independent standard normal
inputs (here x0..x5, plus two inputs the function ignores). Its ANOVA terms
are the three summands themselves -- each is centred and every sub-product of
a term has mean zero given fewer of its inputs -- of variance 1 each: a pair
{x0, x1}, a triple {x2, x3, x4}, and a main effect {x5} (computed here from the
definition; common practice, no source). So sigma^2 = 3; Upsilon^2 = 1 for the
pair (0, 1) and the three pairs inside {2, 3, 4}, 0 for the other pairs;
nu = (1 + 2 + 3) / 3 = 2, E|u|^2 = (1 + 4 + 9) / 3 = 14/3 and the variance of |u|
is 2/3. Superset importance and the second moment of the dimension
distribution: "Estimating mean dimensionality of analysis of variance
decompositions", J. Amer. Statist. Assoc., 2006.
"""

from __future__ import annotations

from itertools import combinations

import numpy as np
import pytest

from audit.design import Design
from audit.engine import Group, Job, Task, run, run_task
from audit.estimators import Superset, dimension_moments, make_estimator, t_interval
from audit.inputs import Law

D = 8
TOP = [0, 1, 2, 3, 4, 5]
LAWS = [Law("normal")] * D
#: ANOVA terms of f: (inputs, variance)
TERMS = [((0, 1), 1.0), ((2, 3, 4), 1.0), ((5,), 1.0)]
#: Rounding: a pair's second differences that vanish in exact arithmetic leave ~1e-16 in float64.
ROUNDING = 1e-12


def f(x):
    return x[:, 0] * x[:, 1] + x[:, 2] * x[:, 3] * x[:, 4] + x[:, 5]


def _evaluator(x):
    y = f(x)
    return {"out": np.stack([y, 2 * y + 1, x[:, 0] * x[:, 1]], axis=1)}


def _job(points, replicates, seed, detail=True, sampler="sobol"):
    est = make_estimator("superset", d=D, points=points, groups=[[j] for j in TOP])
    design = Design(LAWS, points, replicates, seed, sampler, copies=est.copies)
    return Job("test", _evaluator, design, est, [Group("out", 3, detail)])


def _exact():
    var = sum(v for _, v in TERMS)
    pairs = np.array([sum(v for u, v in TERMS if j in u and k in u) for j, k in combinations(TOP, 2)]) / var
    total = np.array([sum(v for u, v in TERMS if j in u) for j in TOP]) / var
    nu = sum(len(u) * v for u, v in TERMS) / var
    m2 = sum(len(u) ** 2 * v for u, v in TERMS) / var
    return pairs, total, nu, m2


def _same(a, b):
    for name in ("mean", "variance", "total_sum", "total", "pairs", "second_moment"):
        x, y = getattr(a, name), getattr(b, name)
        if x is None:
            assert y is None
            continue
        np.testing.assert_allclose(y, x, rtol=1e-12, atol=1e-12 * np.abs(x).max())


def test_rows_share_x_and_the_single_swaps():
    est = Superset(4, [0, 2, 3])
    assert est.rows_per_point() == 1 + 3 + 3
    assert est.pairs == [(0, 2), (0, 3), (2, 3)]
    block = Design([Law("normal")] * 4, 8, 1, seed=1).block(0, 0, 8)
    X = est.layout(block, np.float64)[0].reshape(7, 8, 4)
    np.testing.assert_array_equal(X[0], block.A)
    for row, cols in zip(X[1:], [[0], [2], [3], [0, 2], [0, 3], [2, 3]], strict=True):
        np.testing.assert_array_equal(row[:, cols], block.B[:, cols])
        rest = [c for c in range(4) if c not in cols]
        np.testing.assert_array_equal(row[:, rest], block.A[:, rest])
    with pytest.raises(ValueError, match="single inputs"):
        make_estimator("superset", d=4, groups=[[0, 1]])


@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_halves_equals_whole(detail):
    job = _job(512, 1, 2, detail)
    whole = run_task(job, Task(0, 0, 512))["out"]
    merged = run_task(job, Task(0, 0, 256))["out"]
    merged.merge(run_task(job, Task(0, 256, 256))["out"])
    _same(whole.finish(0), merged.finish(0))


@pytest.mark.parametrize("detail", [True, False])
def test_block_size_does_not_change_the_answer(detail):
    small = run(_job(256, 2, 3, detail), block=16)["out"]
    large = run(_job(256, 2, 3, detail), block=256)["out"]
    for a, b in zip(small, large, strict=True):
        _same(b.finish(0), a.finish(0))


@pytest.mark.parametrize("detail", [True, False])
def test_state_round_trip(detail):
    job = _job(256, 1, 4, detail)
    parts = [run_task(job, Task(0, s, 64))["out"] for s in range(0, 256, 64)]
    restored = job.estimator.restore(parts[0].state())
    for p in parts[1:]:
        restored.merge(job.estimator.restore(p.state()))
    _same(run_task(job, Task(0, 0, 256))["out"].finish(0), restored.finish(0))


@pytest.mark.parametrize("sampler", ["sobol", "mc"])
def test_pairs_and_dimension_moments_match_the_anova_terms(sampler):
    pairs, total, nu, m2 = _exact()
    assert nu == 2.0 and m2 == pytest.approx(14 / 3)
    job = _job(4096, 10, 5, sampler=sampler)
    reps = [s.finish(job.design.ddof) for s in run(job)["out"]]
    # 15 pairs, 6 total indices, nu, E|u|^2 and the spread: 24 comparisons, Bonferroni: each at 1 - 0.05/24
    m = dimension_moments(reps, level=1 - 0.05 / 24)
    lo, hi = m["pairs"].low[:, 0] - ROUNDING, m["pairs"].high[:, 0] + ROUNDING
    assert np.all((lo <= pairs) & (pairs <= hi)), (m["pairs"].estimate[:, 0], pairs)
    var = np.array([r.variance[0] for r in reps])
    it = t_interval(np.array([r.total[:, 0] for r in reps]) / var[:, None], 1 - 0.05 / 24)
    assert np.all((it.low <= total) & (total <= it.high))
    for key, exact in (("nu", nu), ("second_moment", m2), ("spread", m2 - nu**2)):
        iv = m[key]
        assert iv.low[0] <= exact <= iv.high[0], (key, iv.estimate[0], exact)
    # an affine change of the output changes none of the normalised figures
    for key in ("nu", "second_moment", "spread"):
        np.testing.assert_allclose(m[key].estimate[1], m[key].estimate[0], rtol=1e-9)


def test_inputs_outside_a_pure_pair_term_get_nothing():
    job = _job(1024, 4, 6)
    reps = [s.finish(job.design.ddof) for s in run(job)["out"]]
    # unit 2 is x0 x1 alone: every pair but (0, 1) and every input but 0 and 1 has no variance,
    # exactly (the differences vanish identically; float64 leaves rounding only)
    for r in reps:
        scale = r.variance[2]
        assert np.all(np.abs(r.pairs[1:, 2]) <= ROUNDING * scale)
        assert np.all(np.abs(r.total[2:, 2]) <= ROUNDING * scale)
        assert r.pairs[0, 2] > 0


def test_sampled_pairs_estimate_the_second_moment():
    # 5 of the 15 pairs, drawn anew per randomization: sum over pairs x 15/5 is unbiased for the sum over all
    # pairs, and the interval over randomizations holds the draw too. 2 comparisons: each at 1 - 0.05/2.
    _, _, nu, m2 = _exact()
    est = Superset(D, TOP, sample=5)
    assert est.rows_per_point() == 1 + 6 + 5
    design = Design(LAWS, 1024, 20, seed=7)
    job = Job("test", _evaluator, design, est, [Group("out", 3, True)])
    sums = run(job, block=256)["out"]
    reps = [s.finish(design.ddof) for s in sums]
    assert len({r.pair_index.tobytes() for r in reps}) > 1  # different randomizations, different pairs
    np.testing.assert_array_equal(reps[3].pair_index, est.measured(design.rep_seed(3)))
    m = dimension_moments(reps, level=1 - 0.05 / 2)
    assert "pairs" not in m
    for key, exact in (("second_moment", m2), ("spread", m2 - nu**2)):
        assert m[key].low[0] <= exact <= m[key].high[0], (key, m[key].estimate[0], exact)
    # state round trip and block invariance with sampled pairs
    restored = est.restore(sums[0].state())
    _same(sums[0].finish(0), restored.finish(0))
    whole = run_task(job, Task(0, 0, 1024))["out"]
    _same(whole.finish(0), sums[0].finish(0))
    other = next(s for s, r in zip(sums, reps, strict=True) if not np.array_equal(r.pair_index, reps[0].pair_index))
    with pytest.raises(ValueError, match="different pairs"):
        sums[0].merge(other)
