"""The freezing error (audit.estimators.freeze): exact merging, state, block size, exact references.

References: freezing inputs u at a random draw changes f by f(x) − f(x_{−u}, x'_u), whose mean square
is 2 τ̄²_u (the ANOVA decomposition, common practice, no source). For f = Σ_j a_j x_j with independent
N(0, 1) inputs, τ̄²_u = Σ_{j∈u} a_j² and σ² = Σ_j a_j²; an input f does not use changes nothing, so its
freezing error is exactly 0. Tolerances: Bonferroni-adjusted t intervals (1 % family error).
"""

import estimator_checks as checks
import numpy as np
import pytest

from audit.design import Design
from audit.engine import Group, run
from audit.estimators import FreezeError, t_interval
from audit.estimators.freeze import FreezeSums
from audit.inputs import Law

LAWS = checks.LAWS
GROUPS = [[0], [1, 2], [2]]
pytestmark = pytest.mark.filterwarnings(checks.ANY_BLOCK)


def _job(design, groups=GROUPS, func=checks.evaluator, units=3):
    return checks.job(FreezeError(design.d, groups), design, [Group("out", units, False)], func)


def test_merge_of_halves_equals_whole():
    checks.assert_merge_of_halves_equals_whole(_job(Design(LAWS, 1024, 1, seed=3)), block=128)


def test_merging_in_any_order_gives_the_same_sums():
    checks.assert_merging_is_order_free(_job(Design(LAWS, 512, 1, seed=5)), block=48, seed=3)


def test_state_round_trip():
    checks.assert_state_round_trip(_job(Design(LAWS, 256, 1, seed=6)), block=64)


def test_block_size_invariance_through_engine_run():
    checks.assert_block_size_invariance(_job(Design(LAWS, 512, 3, seed=7)), [1, 48, 512])


def test_layout_is_a_then_a_with_each_group_from_b():
    block = Design([Law("normal")] * 3, 16, 1, seed=1).block(0, 0, 16)
    est = FreezeError(3, GROUPS)
    X, _ = est.layout(block, np.float64)
    assert est.rows_per_point() == 4 and X.shape == (4 * 16, 3)
    rows = X.reshape(4, 16, 3)
    np.testing.assert_array_equal(rows[0], block.A)
    for g, cols in enumerate(GROUPS):
        expect = block.A.copy()
        expect[:, cols] = block.B[:, cols]
        np.testing.assert_array_equal(rows[1 + g], expect)


def test_freezing_error_of_an_additive_function():
    a = np.array([1.0, 2.0, 0.0])  # x2 is not used
    groups = [[2], [0], [1, 2], [0, 1]]
    design = Design([Law("normal")] * 3, 512, 10, seed=25)
    sums = run(_job(design, groups, lambda x: {"out": (x @ a)[:, None]}, units=1))["out"]
    reps = [s.finish(design.ddof) for s in sums]
    mse = np.array([r.mse[:, 0] for r in reps])
    var = np.array([r.variance[:, 0] for r in reps])
    # an input the function does not use: every change is exactly 0, in every randomization
    assert np.all(mse[:, 0] == 0.0)
    exact = np.array([2 * np.sum(a[u] ** 2) for u in groups[1:]])
    bound = checks.t_bound(2 * len(exact), design.replicates)
    for values, truth in ((mse[:, 1:], exact), (mse[:, 1:] / var[:, 1:], exact / np.sum(a**2))):
        est = t_interval(values)
        assert np.all(np.abs(est.estimate - truth) <= bound * est.std_error), (est, truth)


def test_each_group_pools_its_own_pair_for_the_variance():
    design = Design(LAWS, 64, 1, seed=9)
    s = run(_job(design), block=16)["out"][0]
    assert s.rows == 64 and [m.count for m in s.moments] == [128] * len(GROUPS)


def test_bad_groups_and_shapes_are_refused():
    with pytest.raises(ValueError, match="at least one group"):
        FreezeError(3, [])
    with pytest.raises(ValueError, match="different shapes"):
        FreezeSums(1, 2).merge(FreezeSums(1, 3))
    with pytest.raises(ValueError, match="no rows"):
        FreezeSums(1, 2).finish(0)
