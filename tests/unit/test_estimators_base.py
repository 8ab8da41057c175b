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
