"""Shared pieces of the estimators (audit.estimators.base): mergeable moments.

Reference: the pairwise update of count, mean and squared deviations ("Updating formulae and a
pairwise algorithm for computing sample variances", COMPSTAT, 1982) must equal numpy's mean and
variance of all the values together.
"""

import numpy as np
import pytest

from audit.estimators import Moments


@pytest.mark.parametrize("sizes", [[10], [1, 1], [3, 50, 1, 7], [100, 1000]])
def test_merged_moments_equal_those_of_all_values(sizes):
    rng = np.random.default_rng(len(sizes))
    parts = [rng.normal(5.0, 2.0, size=(n, 3)) for n in sizes]
    m = Moments(3)
    for p in parts:
        other = Moments(3)
        other.add(p)
        m.merge(other)
    everything = np.concatenate(parts)
    assert m.count == len(everything)
    np.testing.assert_allclose(m.mean, everything.mean(axis=0), rtol=1e-13)
    for ddof in (0, 1):
        np.testing.assert_allclose(m.variance(ddof), everything.var(axis=0, ddof=ddof), rtol=1e-12)


def test_empty_moments_merge_as_nothing():
    m = Moments(2)
    m.add(np.array([[1.0, 2.0], [3.0, 6.0]]))
    before = (m.count, m.mean.copy(), m.m2.copy())
    m.merge(Moments(2))
    assert m.count == before[0]
    np.testing.assert_array_equal(m.mean, before[1])
    np.testing.assert_array_equal(m.m2, before[2])
    empty = Moments(2)
    empty.merge(m)
    np.testing.assert_array_equal(empty.mean, m.mean)
    assert empty.mean is not m.mean  # a copy, so later merges do not alias



@pytest.mark.parametrize("dtype", [np.float32, np.float64])
@pytest.mark.parametrize("sizes", [(1, 1), (7, 3), (256, 256)])
def test_a_pair_of_blocks_adds_as_their_float64_concatenation(dtype, sizes):
    rng = np.random.default_rng(sizes[0])
    first = rng.normal(size=(4, 5))
    a, b = (rng.normal(3.0, 2.0, size=(n, 5)).astype(dtype) for n in sizes)
    pair, whole = Moments(5), Moments(5)
    for m in (pair, whole):  # a block before the pair: the merge is exercised too
        m.add(first)
    pair.add_pair(a, b)
    whole.add(np.concatenate([a.astype(np.float64), b.astype(np.float64)]))
    assert pair.count == whole.count == 4 + sum(sizes)
    np.testing.assert_array_equal(pair.mean, whole.mean)  # bit for bit
    np.testing.assert_array_equal(pair.m2, whole.m2)
    fresh = Moments(5)
    fresh.add_pair(a, b)
    everything = np.concatenate([a, b]).astype(np.float64)
    np.testing.assert_allclose(fresh.variance(0), everything.var(axis=0), rtol=1e-12)
