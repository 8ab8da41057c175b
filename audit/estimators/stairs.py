"""The winding stairs estimator: every total index from N(G + 1) evaluations.

Per design point the rows walk from A to B one input (or group) at a time,
along the path pi_1, ..., pi_G (the inputs in order, or the groups in the order
given):

    x^0 = A,   x^i = x^{i-1} with the columns of pi_i taken from B,   x^G = B

(when the groups cover every input). Consecutive rows differ in pi_i alone, so
every evaluation but the two ends serves two differences, and

* total index: ``tau_{pi_i} = E[(f(x^{i-1}) - f(x^i))^2] / 2`` (each pair is
  (x, x with z_{pi_i}) for independent x, z);
* variance from the 2N values f(x^0) and f(x^G), both distributed as f(x)
  (Chan's merge);
* ``nu = sum_i tau_{pi_i} / sigma^2``.

First-order indices are not available: a first-order index of x_j needs two
rows that share x_j and nothing else, and along the stairs only
(x^1, x^G) and (x^0, x^{G-1}) do so -- for the first and the last input of the
path alone. The estimator reports total indices and the mean dimension.

Every row is a fixed function of one point (A, B) of the design, so with
scrambled Sobol' points each difference is an RQMC integrand in 2d dimensions.

References
----------
.. [1] "Efficient estimation of the ANOVA mean dimension, with an application
   to neural net classification", SIAM/ASA J. Uncertainty Quantification, 2021
   (the winding stairs design for the mean dimension, N(d + 1) evaluations).
.. [2] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (nu = sum of total indices).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from .totals import TotalSums

__all__ = ["StairsSums", "WindingStairs"]


class StairsSums(TotalSums):
    """Sums of the winding stairs for ``k`` units and ``g`` steps (see :class:`~audit.estimators.totals.TotalSums`)."""

    def add(self, y: np.ndarray, context: Any = None) -> None:
        """Add the outputs ``y`` (n (g + 1), k) of a block's rows, laid out as :meth:`WindingStairs.layout`."""
        n = y.shape[0] // (self.g + 1)
        Y = y.reshape(self.g + 1, n, -1)
        diff = Y[1:] - Y[:-1]
        self.add_parts(np.concatenate([Y[0], Y[-1]]), diff * diff)


class WindingStairs:
    """Total indices of every input and the mean dimension from N(G + 1) evaluations.

    Parameters
    ----------
    d : int
        Number of inputs.
    groups : sequence of sequence of int, optional
        Disjoint groups of inputs changed together, in the order of the path;
        default one step per input, in input order.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.design import Design
    >>> from audit.estimators import make_estimator
    >>> from audit.inputs import Law
    >>> est = make_estimator("stairs", d=2)
    >>> est.rows_per_point()
    3
    >>> block = Design([Law("uniform")] * 2, 64, 1, seed=3).block(0, 0, 64)
    >>> rows, context = est.layout(block, np.float64)
    >>> sums = est.sums(1, True, block)
    >>> sums.add((rows[:, 0] + rows[:, 1])[:, None], context)
    >>> r = sums.finish(ddof=0)
    >>> bool(abs(r.total_sum[0] / r.variance[0] - 1) < 0.05)      # additive: nu = 1
    True
    """

    name = "stairs"
    label = "winding stairs (total indices, one input changed at a time)"
    help = "every total index and the mean dimension, N(d+1) evaluations per randomization; no first-order indices"
    copies = 2
    first_order = False
    replicates = 8

    @classmethod
    def build(cls, d: int, points: int, groups: Sequence[Sequence[int]] | None = None) -> WindingStairs:
        """The registry's constructor (:func:`audit.estimators.make_estimator`)."""
        return cls(d, groups)

    def __init__(self, d: int, groups: Sequence[Sequence[int]] | None = None) -> None:
        self.d = int(d)
        step = np.full(self.d, -1, dtype=np.intp)  # the step at which each column changes (-1: never)
        if groups is None:
            step[:] = np.arange(self.d)
            self.g = self.d
        else:
            for i, cols in enumerate(groups):
                cols = np.asarray(cols, dtype=np.intp)
                if (step[cols] >= 0).any() or len(set(cols.tolist())) != len(cols):
                    raise ValueError("the winding stairs need disjoint groups of inputs.")
                step[cols] = i
            self.g = len(groups)
        # mask[i, c]: column c of row x^i comes from B
        self.mask = (step[None, :] >= 0) & (step[None, :] < np.arange(self.g + 1)[:, None])

    def rows_per_point(self) -> int:
        return self.g + 1

    def check(self, points: int) -> None:
        return None

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, None]:
        """Rows x^0 = A, x^1, ..., x^G as one (n (G + 1), d) array."""
        A, B = block.A.astype(dtype, copy=False), block.B.astype(dtype, copy=False)
        n, d = A.shape
        X = np.where(self.mask[:, None, :], B[None], A[None])
        return X.reshape((self.g + 1) * n, d), None

    def sums(self, units: int, detail: bool, block: Any = None) -> StairsSums:
        return StairsSums(units, self.g, detail)

    def restore(self, state: dict[str, np.ndarray]) -> StairsSums:
        return StairsSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        return units * ((self.g if detail else 1) + 2) + self.g
