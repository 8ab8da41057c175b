"""Confidence intervals over independent randomizations: the one place they are built.

Every figure netdim reports is the mean of R per-randomization values with a
Student-t interval (R - 1 degrees of freedom); the R randomizations are
independent, so this is exact for normal replicates and close for R ≥ 8 in
practice. A change between two models measured on the same points is the
interval of the per-randomization differences (paired); on independent points
Welch's interval; a difference of two independently estimated figures adds
their standard errors in quadrature.

Functions return :class:`Interval` arrays; :mod:`audit.studies` turns them into
:class:`~audit.results.Estimate` objects.

References
----------
.. [1] Student-t intervals over independent randomizations of an RQMC rule,
   and Welch's unequal-variance interval, are common practice, no source.
"""

from __future__ import annotations

import warnings
from typing import NamedTuple

import numpy as np

from .student import t_quantile

__all__ = ["LEVEL", "Interval", "difference_interval", "paired_interval", "t_interval", "welch_interval"]

#: Two-sided level of every interval netdim reports.
LEVEL = 0.95


class Interval(NamedTuple):
    """Estimates with the ends of their intervals and their standard errors (arrays of one shape)."""

    estimate: np.ndarray
    low: np.ndarray
    high: np.ndarray
    std_error: np.ndarray


def _t_scalar(level: float, df: float) -> float:
    # whole df (R - 1) without importing scipy: a quarter of a second of a small audit's start-up
    return t_quantile(0.5 + level / 2, df)


def _t(level: float, df: np.ndarray | float) -> np.ndarray:
    """Student-t quantile ``t_{(1+level)/2, df}``; one cached call when every df is the same."""
    df = np.asarray(df, dtype=np.float64)
    first = df.flat[0] if df.size else np.nan
    if df.size and np.isfinite(first) and first > 0 and np.all(df == first):  # the usual case: R - 1 everywhere
        return np.full(df.shape, _t_scalar(float(level), float(first)))
    from scipy import stats

    return stats.t.ppf(0.5 + level / 2, df)


def t_interval(values: np.ndarray, level: float = LEVEL, axis: int = 0) -> Interval:
    """Mean and Student-t interval over independent replicates.

    Parameters
    ----------
    values : ndarray
        Per-randomization values; replicates along ``axis``.
    level : float
        Two-sided confidence level.

    Returns
    -------
    Interval
        NaN-safe: replicates with NaN are left out per entry; fewer than two
        finite replicates give NaN ends.

    Notes
    -----
    With R independent randomizations, the interval is
    ``mean ± t_{(1+level)/2, R-1} s / sqrt(R)``.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.estimators.intervals import t_interval
    >>> r = t_interval(np.array([1.0, 2.0, 3.0]))
    >>> float(r.estimate), round(float(r.high - r.estimate), 4)
    (2.0, 2.4841)
    """
    v = np.asarray(values, dtype=np.float64)
    finite = np.isfinite(v)
    if v.size and v.shape[axis] > 1 and finite.all():  # the usual case: nanmean's and nanstd's sums, unmasked
        r = v.shape[axis]
        with np.errstate(over="ignore", invalid="ignore"):  # as the masked path: huge values give inf
            est = v.mean(axis=axis)
            se = v.std(axis=axis, ddof=1) / np.sqrt(np.float64(r))
        half = _t_scalar(float(level), float(r - 1)) * se
        return Interval(est, est - half, est + half, se)
    r = np.sum(finite, axis=axis)
    with np.errstate(invalid="ignore", divide="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN entries (inert units) give NaN
        est = np.nanmean(v, axis=axis) if v.size else np.full(v.shape[1:], np.nan)
        sd = np.nanstd(v, axis=axis, ddof=1)
        se = sd / np.sqrt(r)
        q = _t(level, np.maximum(r - 1, 1))
        half = np.where(r > 1, q * se, np.nan)
    return Interval(est, est - half, est + half, np.where(r > 1, se, np.nan))


def paired_interval(new: np.ndarray, old: np.ndarray, level: float = LEVEL, axis: int = 0) -> Interval:
    """Interval of ``new - old`` measured on the same points: t over the per-randomization differences."""
    return t_interval(np.asarray(new) - np.asarray(old), level, axis)


def welch_interval(new: np.ndarray, old: np.ndarray, level: float = LEVEL) -> Interval:
    """Interval of ``mean(new) - mean(old)`` from independent randomizations (Welch), replicates on axis 0."""
    new, old = np.asarray(new, dtype=np.float64), np.asarray(old, dtype=np.float64)
    r1, r2 = np.sum(np.isfinite(new), axis=0), np.sum(np.isfinite(old), axis=0)
    est = np.nanmean(new, axis=0) - np.nanmean(old, axis=0)
    v1, v2 = np.nanvar(new, axis=0, ddof=1) / r1, np.nanvar(old, axis=0, ddof=1) / r2
    se = np.sqrt(v1 + v2)
    with np.errstate(invalid="ignore", divide="ignore"):
        df = (v1 + v2) ** 2 / (v1**2 / (r1 - 1) + v2**2 / (r2 - 1))
    half = _t(level, np.where(np.isfinite(df), df, r1 + r2 - 2)) * se
    return Interval(est, est - half, est + half, se)


def difference_interval(
    a: float, a_se: float, b: float, b_se: float, replicates: int, level: float = LEVEL
) -> Interval:
    """``a - b`` for two figures estimated from independent randomizations (t with R - 1 df; conservative)."""
    se = float(np.hypot(a_se, b_se))
    half = float(_t(level, max(replicates - 1, 1))) * se
    d = a - b
    return Interval(np.float64(d), np.float64(d - half), np.float64(d + half), np.float64(se))
