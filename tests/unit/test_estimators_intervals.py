"""Confidence intervals (audit.estimators.intervals): Student-t, paired, Welch, differences.

References: scipy.stats (t.interval, ttest_rel and ttest_ind with equal_var=False and their
confidence_interval) and Welch's unequal-variance interval written out here from its textbook
form (common practice, no source).
"""

import warnings

import numpy as np
import pytest
from scipy import stats

from audit.estimators import LEVEL, t_interval
from audit.estimators.intervals import difference_interval, paired_interval, welch_interval

RNG = np.random.default_rng(31)


def test_t_interval_matches_scipy():
    from scipy import stats

    v = np.array([1.0, 1.2, 0.9, 1.1, 1.05])
    est, lo, hi, _ = t_interval(v)
    ref = stats.t.interval(0.95, len(v) - 1, loc=v.mean(), scale=stats.sem(v))  # scipy reference
    assert est == pytest.approx(v.mean())
    assert (lo, hi) == pytest.approx(ref)


@pytest.mark.parametrize("r", [2, 3, 8, 30])
@pytest.mark.parametrize("level", [0.9, LEVEL, 0.99])
def test_t_interval_equals_scipy_for_every_column(r, level):
    v = RNG.normal(size=(r, 4)) * [1, 10, 0.1, 3] + [0, 5, -2, 1]
    got = t_interval(v, level)
    for j in range(4):
        lo, hi = stats.t.interval(level, r - 1, loc=v[:, j].mean(), scale=stats.sem(v[:, j]))
        assert got.low[j] == pytest.approx(lo, rel=1e-12)
        assert got.high[j] == pytest.approx(hi, rel=1e-12)
        assert got.std_error[j] == pytest.approx(stats.sem(v[:, j]), rel=1e-12)
    # replicates along another axis give the same interval
    np.testing.assert_allclose(t_interval(v.T, level, axis=1).low, got.low, rtol=1e-14)
    assert LEVEL == 0.95


def test_t_interval_leaves_out_nan_replicates_per_entry():
    v = np.array([[1.0, np.nan, np.nan], [2.0, 5.0, np.nan], [4.0, 6.0, 7.0]])
    got = t_interval(v)
    ref = t_interval(np.array([5.0, 6.0]))
    assert got.estimate[1] == ref.estimate and got.low[1] == pytest.approx(float(ref.low))
    # one finite replicate: the estimate is that value and the interval is undefined
    assert got.estimate[2] == 7.0 and np.isnan(got.low[2]) and np.isnan(got.high[2]) and np.isnan(got.std_error[2])
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # inert units give all-NaN columns, silently
        all_nan = t_interval(np.full((4, 2), np.nan))
    assert np.isnan(all_nan.estimate).all() and np.isnan(all_nan.low).all()


def test_paired_interval_is_the_t_interval_of_the_differences():
    old = RNG.normal(size=10)
    new = old + 0.3 + 0.05 * RNG.normal(size=10)
    got = paired_interval(new, old)
    ref = stats.ttest_rel(new, old).confidence_interval(LEVEL)
    assert float(got.estimate) == pytest.approx(np.mean(new - old), rel=1e-12)
    assert (float(got.low), float(got.high)) == pytest.approx((ref.low, ref.high), rel=1e-12)
    # far narrower than treating the two sides as independent: the point of common random numbers
    independent = welch_interval(new, old)
    assert float(got.high - got.low) < 0.2 * float(independent.high - independent.low)


def _welch_by_hand(x, y, level):
    vx, vy = x.var(ddof=1) / len(x), y.var(ddof=1) / len(y)
    df = (vx + vy) ** 2 / (vx**2 / (len(x) - 1) + vy**2 / (len(y) - 1))
    half = stats.t.ppf(0.5 + level / 2, df) * np.sqrt(vx + vy)
    d = x.mean() - y.mean()
    return d, d - half, d + half, np.sqrt(vx + vy)


def test_welch_interval_against_a_direct_computation():
    new = RNG.normal(1.0, 2.0, size=(8, 3))
    old = RNG.normal(0.0, 0.5, size=(8, 3))
    got = welch_interval(new, old)
    for j in range(3):
        d, lo, hi, se = _welch_by_hand(new[:, j], old[:, j], LEVEL)
        assert (got.estimate[j], got.low[j], got.high[j], got.std_error[j]) == pytest.approx((d, lo, hi, se), rel=1e-12)
        ref = stats.ttest_ind(new[:, j], old[:, j], equal_var=False).confidence_interval(LEVEL)
        assert (got.low[j], got.high[j]) == pytest.approx((ref.low, ref.high), rel=1e-10)


def test_welch_interval_with_unequal_numbers_of_randomizations():
    new, old = RNG.normal(size=4), RNG.normal(size=12)
    got = welch_interval(new, old)
    _, lo, hi, _ = _welch_by_hand(new, old, LEVEL)
    assert (float(got.low), float(got.high)) == pytest.approx((lo, hi), rel=1e-10)


def test_welch_interval_of_identical_constant_sides_is_zero_width():
    got = welch_interval(np.ones(5), np.ones(5))
    assert got.estimate == 0.0 and got.std_error == 0.0


def test_difference_interval_adds_standard_errors_in_quadrature():
    got = difference_interval(3.0, 0.3, 1.0, 0.4, replicates=8)
    half = stats.t.ppf(0.975, 7) * 0.5
    assert float(got.estimate) == 2.0 and float(got.std_error) == pytest.approx(0.5, rel=1e-15)
    assert (float(got.low), float(got.high)) == pytest.approx((2.0 - half, 2.0 + half), rel=1e-12)
