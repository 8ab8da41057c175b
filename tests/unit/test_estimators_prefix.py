"""Prefix means for the RQMC gain (audit.estimators.prefix): exact merging, state, block size, exact means.

Reference: the mean of a linear function over the first n points is the same linear function of
the mean of those points (linearity of the mean, common practice, no source); the points are made
here from the design directly, so the check is exact to rounding.
"""

import estimator_checks as checks
import numpy as np
import pytest

from audit.design import Design
from audit.engine import Group, run
from audit.estimators import PrefixMeans
from audit.estimators.prefix import PrefixSums

LAWS = checks.LAWS
PREFIXES = [1, 16, 100, 256]
pytestmark = pytest.mark.filterwarnings(checks.ANY_BLOCK)


def _job(design, prefixes=PREFIXES, func=checks.evaluator, units=3):
    return checks.job(PrefixMeans(prefixes), design, [Group("out", units, False)], func)


def _design(replicates=1, seed=3, points=256):
    return Design(LAWS, points, replicates, seed, copies=1)


def test_merge_of_halves_equals_whole():
    checks.assert_merge_of_halves_equals_whole(_job(_design()), block=32)


def test_merging_in_any_order_gives_the_same_sums():
    checks.assert_merging_is_order_free(_job(_design(seed=5)), block=48, seed=4)


def test_state_round_trip():
    checks.assert_state_round_trip(_job(_design(seed=6)), block=64)


def test_block_size_invariance_through_engine_run():
    # blocks that straddle the prefix ends (48 rows against ends at 16, 100 and 256)
    checks.assert_block_size_invariance(_job(_design(replicates=3, seed=7)), [1, 7, 48, 256])


def test_prefix_means_of_a_linear_function_are_the_means_of_the_points():
    c, b = np.array([2.0, -1.0, 0.5]), 1.0
    design = _design(replicates=2, seed=8)
    sums = run(_job(design, func=lambda x: {"out": (x @ c + b)[:, None]}, units=1), block=48)["out"]
    for rep, s in enumerate(sums):
        x = design.block(rep, 0, 256).X
        exact = np.array([x[:n].mean(axis=0) @ c + b for n in PREFIXES])
        np.testing.assert_allclose(s.finish(1).means[:, 0], exact, rtol=1e-12, atol=1e-12)


def test_one_row_per_point_and_the_design_needs_the_largest_prefix():
    est = PrefixMeans(PREFIXES)
    assert est.rows_per_point() == 1 and est.copies == 1
    est.check(256)
    with pytest.raises(ValueError, match="fewer than the largest prefix 256"):
        est.check(128)


@pytest.mark.parametrize("bad", [[], [16, 8], [8, 8], [0, 8], [-1]])
def test_prefixes_must_be_increasing_positive_counts(bad):
    with pytest.raises(ValueError, match="increasing positive counts"):
        PrefixMeans(bad)


def test_sums_of_other_prefixes_are_not_merged():
    with pytest.raises(ValueError, match="different shapes"):
        PrefixSums(1, [4, 8]).merge(PrefixSums(1, [4, 16]))
