"""The fast estimator of the mean dimension (registered as ``fast``): 2N evaluations whatever d is, RQMC gain kept.

The N design points (A, B) of a randomization are split among the d inputs in
consecutive runs: input j gets the rows ``[o_j, o_j + n_j)`` and there its rows
are f(A) and f(A with column j from B). Then

    sum_j tau_j = sum_j (1 / n_j) sum_{i in run j} (f(A_i) - f(A_B^{(j)}_i))^2 / 2,

and the variance pools the 2N values f(A) and f(A_B^{(j)}), all distributed as f(x).

Why runs and not a hashed assignment: for N a power of two each n_j is a
power of two, ``n_j = 2^a`` or ``2^{a+1}`` with ``2^a <= N / d < 2^{a+1}``
(the larger runs first), so every run starts at a multiple of its length. Such
a run of a scrambled Sobol' sequence is itself a scrambled digital net, and each
term of the sum is a fixed integrand, ``(f(x) - f(x with z_j))^2 / 2``, averaged
over a net of its own: its variance falls at the RQMC rate in n_j. A hash that
scatters rows over the inputs leaves each term an average over an irregular
subset of the points, with about the Monte Carlo variance. For other N (plain
Monte Carlo points) the runs are balanced, lengths differing by at most one.

Intervals come, as for every estimator, from independent randomizations: the
terms of one randomization need not be independent of each other.

References
----------
.. [1] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (nu = sum of total indices).
.. [2] That consecutive runs of 2^a points of a digital (t, s)-sequence in base
   2, starting at a multiple of 2^a, are (t, a, s)-nets is a standard property of
   digital sequences (common practice, no source).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..errors import UserError
from .totals import TotalSums

__all__ = ["Split", "SplitSums", "split_counts", "split_inputs"]


def split_counts(points: int, d: int) -> np.ndarray:
    """Rows n_j of each input's run (see the module docstring); they add up to ``points``.

    Parameters
    ----------
    points : int
        N per randomization (at least d).
    d : int
        Number of inputs.

    Returns
    -------
    ndarray of int64, shape (d,)
        Powers of two, the larger first, when N is a power of two; else balanced.

    Raises
    ------
    ValueError
        When there are fewer points than inputs.

    Examples
    --------
    >>> from audit.estimators.split import split_counts
    >>> split_counts(64, 5).tolist()       # 8 <= 64 / 5 < 16: three runs of 16, two of 8
    [16, 16, 16, 8, 8]
    >>> split_counts(10, 3).tolist()       # not a power of two: balanced
    [4, 3, 3]
    """
    points, d = int(points), int(d)
    if d < 1 or points < d:
        raise ValueError(f"the split estimator needs at least as many points as inputs ({d}), got {points}.")
    if points & (points - 1) == 0:
        base = 1 << ((points // d).bit_length() - 1)
        double = points // base - d
        return np.array([2 * base] * double + [base] * (d - double), dtype=np.int64)
    q, r = divmod(points, d)
    return np.array([q + 1] * r + [q] * (d - r), dtype=np.int64)


def split_inputs(start: int, n: int, counts: np.ndarray) -> np.ndarray:
    """The input j of each global row ``start .. start + n - 1``.

    Parameters
    ----------
    start, n : int
        First global row and number of rows.
    counts : ndarray of int
        The runs' lengths (:func:`split_counts`).

    Returns
    -------
    ndarray of intp, shape (n,)
        Depends on the global row alone, not on how rows are split into blocks.
    """
    ends = np.cumsum(counts)
    return np.searchsorted(ends, np.arange(start, start + n), side="right").astype(np.intp)


class SplitSums(TotalSums):
    """Sums of the split estimator for ``k`` units and ``d`` inputs (as :class:`~audit.estimators.totals.TotalSums`)."""

    def add(self, y: np.ndarray, js: np.ndarray) -> None:
        """Add the outputs ``y`` (2n, k) of a block's rows; ``js`` the input of each design point."""
        n = y.shape[0] // 2
        diff = y[:n] - y[n:]
        self.add_parts(y, diff * diff, js)


class Split:
    """The mean dimension (and a total index per input) from 2N evaluations, keeping the RQMC gain.

    Parameters
    ----------
    d : int
        Number of inputs.
    points : int
        N per randomization (input j gets n_j of them, :func:`split_counts`).

    Examples
    --------
    >>> import numpy as np
    >>> from audit.design import Design
    >>> from audit.estimators import make_estimator
    >>> from audit.inputs import Law
    >>> est = make_estimator("split", d=2, points=256)
    >>> block = Design([Law("uniform")] * 2, 256, 1, seed=3).block(0, 0, 256)
    >>> rows, context = est.layout(block, np.float64)
    >>> rows.shape
    (512, 2)
    >>> sums = est.sums(1, True, block)
    >>> sums.add((rows[:, 0] + rows[:, 1])[:, None], context)
    >>> r = sums.finish(ddof=0)
    >>> bool(abs(r.total_sum[0] / r.variance[0] - 1) < 0.05)      # additive: nu = 1
    True
    """

    name = "fast"
    label = "fast estimator (mean dimension; the points split among the inputs in runs of scrambled nets)"
    help = (
        "the mean dimension and a total index per input, 2N evaluations per randomization whatever d is; "
        "each input's differences average over a scrambled net of their own, so the RQMC gain is kept"
    )
    copies = 2
    first_order = False
    #: Default randomizations: its replicates of nu are skewed on heavy-tailed outputs (each input's
    #: differences average over about N / d rows), and a t-interval over 8 or 10 of them under-covers;
    #: 32 at the same evaluations cover (tests/validation/test_estimator_coverage.py).
    replicates = 32

    @classmethod
    def build(cls, d: int, points: int, groups: Any = None) -> Split:
        """The registry's constructor (:func:`audit.estimators.make_estimator`)."""
        if groups is not None:
            raise UserError("The split estimator measures single inputs only; use the Jansen estimator for groups.")
        return cls(d, points)

    def __init__(self, d: int, points: int) -> None:
        self.d, self.points = int(d), int(points)
        self.counts = split_counts(self.points, self.d) if self.points >= self.d else None

    def rows_per_point(self) -> int:
        return 2

    def check(self, points: int) -> None:
        if points < self.d:
            raise UserError(
                f"The fast estimator needs at least as many points as inputs ({self.d}); got {points}. Raise `points`."
            )
        if points != self.points:
            raise ValueError(f"the split estimator was built for {self.points} points, the design has {points}.")

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, np.ndarray]:
        """Rows A, then A with column j(i) from B, as one (2n, d) array; the context is j(i)."""
        if self.counts is None:
            self.check(self.points)
        A, B = block.A.astype(dtype, copy=False), block.B.astype(dtype, copy=False)
        n = A.shape[0]
        js = split_inputs(block.start, n, self.counts)
        AJ = A.copy()
        AJ[np.arange(n), js] = B[np.arange(n), js]
        return np.concatenate([A, AJ]), js

    def sums(self, units: int, detail: bool, block: Any = None) -> SplitSums:
        weights = None if detail else 1.0 / self.counts
        return SplitSums(units, self.d, detail, weights)

    def restore(self, state: dict[str, np.ndarray]) -> SplitSums:
        return SplitSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        return units * ((self.d if detail else 1) + 2) + self.d
