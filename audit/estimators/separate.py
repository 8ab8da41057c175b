"""Separate pairs: every total index from its own independent pairs, 2NG evaluations.

The design that never reuses an evaluation: for each input (or group) g a
pair of rows of its own,

    x^{(g)}   and   x^{(g)} with the columns of g taken from z,

with the x^{(g)} of different inputs taken from different columns of the
design (``copies = G + 1`` blocks of d columns: block g is x^{(g)}, the last
block is z; the groups are disjoint, so each uses its own columns of z). Then

* total index: ``tau_g = E[(f(x^{(g)}) - f(x^{(g)} with z_g))^2] / 2``;
* variance from all 2NG values (each distributed as f(x), Chan's merge);
* ``nu = sum_g tau_g / sigma^2``.

Costlier than the Jansen estimator (2NG against N(G + 2)) and without
first-order indices, but its terms are uncorrelated under plain Monte Carlo:
for products of factors with high kurtosis the shared f(A) of the Jansen
estimator correlates every difference, and the separate pairs can have the
smaller variance per evaluation. Under plain Monte Carlo the pairs of different
inputs are independent. With scrambled Sobol' points each pair is an RQMC
integrand of its own columns of one randomized point set of d (G + 1) columns:
no column is shared, but the pairs are not independent of each other (the
point set couples its columns), and the later inputs use later, less uniform
Sobol' coordinates. Intervals do not rely on independence between the pairs:
they come from independent randomizations.

References
----------
.. [1] "Efficient estimation of the ANOVA mean dimension, with an application
   to neural net classification", SIAM/ASA J. Uncertainty Quantification, 2021
   (the naive design of independent pairs, 2Nd evaluations, and its advantage
   for products of high-kurtosis factors).
.. [2] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (nu = sum of total indices).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from .totals import TotalSums

__all__ = ["SeparatePairs", "SeparateSums"]


class SeparateSums(TotalSums):
    """Sums of the separate pairs for ``k`` units and ``g`` inputs (see :class:`~audit.estimators.totals.TotalSums`)."""

    def add(self, y: np.ndarray, context: Any = None) -> None:
        """Add the outputs ``y`` (2 g n, k) of a block's rows, laid out as :meth:`SeparatePairs.layout`."""
        n = y.shape[0] // (2 * self.g)
        Y = y.reshape(2, self.g, n, -1)
        diff = Y[1] - Y[0]
        self.add_parts(y, diff * diff)


class SeparatePairs:
    """Total indices of every input and the mean dimension from independent pairs, 2NG evaluations.

    Parameters
    ----------
    d : int
        Number of inputs.
    groups : sequence of sequence of int, optional
        Disjoint groups of inputs redrawn together; default one per input.

    Notes
    -----
    The design needs ``copies = G + 1`` blocks of d columns per point (the
    estimator's ``copies``): a workflow builds its :class:`~audit.design.Design`
    with ``copies=estimator.copies``.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.design import Design
    >>> from audit.estimators import make_estimator
    >>> from audit.inputs import Law
    >>> est = make_estimator("separate", d=2)
    >>> est.copies, est.rows_per_point()
    (3, 4)
    >>> block = Design([Law("uniform")] * 2, 64, 1, seed=3, copies=est.copies).block(0, 0, 64)
    >>> rows, context = est.layout(block, np.float64)
    >>> sums = est.sums(1, True, block)
    >>> sums.add((rows[:, 0] + rows[:, 1])[:, None], context)
    >>> r = sums.finish(ddof=0)
    >>> bool(abs(r.total_sum[0] / r.variance[0] - 1) < 0.05)      # additive: nu = 1
    True
    """

    name = "separate"
    label = "separate pairs (total indices, no evaluation reused)"
    help = (
        "every total index and the mean dimension from a pair of its own per input, 2Nd evaluations per "
        "randomization; no first-order indices"
    )
    first_order = False
    replicates = 8

    @classmethod
    def build(cls, d: int, points: int, groups: Sequence[Sequence[int]] | None = None) -> SeparatePairs:
        """The registry's constructor (:func:`audit.estimators.make_estimator`)."""
        return cls(d, groups)

    def __init__(self, d: int, groups: Sequence[Sequence[int]] | None = None) -> None:
        self.d = int(d)
        if groups is None:
            self.groups = [np.array([j], dtype=np.intp) for j in range(self.d)]
        else:
            self.groups = [np.asarray(g, dtype=np.intp) for g in groups]
            cols = np.concatenate(self.groups) if self.groups else np.array([], dtype=np.intp)
            if len(np.unique(cols)) != len(cols):
                raise ValueError("the separate pairs need disjoint groups of inputs.")
        self.g = len(self.groups)
        #: Blocks of d columns per design point: one x per input, and z.
        self.copies = self.g + 1

    def rows_per_point(self) -> int:
        return 2 * self.g

    def check(self, points: int) -> None:
        return None

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, None]:
        """Rows x^{(g)} for every g, then x^{(g)} with z_g for every g, as one (2 G n, d) array."""
        d, g = self.d, self.g
        U = block.X
        if U.shape[1] < (g + 1) * d:
            raise ValueError(f"the separate pairs need a design with {g + 1} copies of the inputs (copies={g + 1}).")
        n = U.shape[0]
        X = np.empty((2, g, n, d), dtype=dtype)
        X[0] = U[:, : g * d].reshape(n, g, d).transpose(1, 0, 2)
        X[1] = X[0]
        Z = U[:, g * d : (g + 1) * d]
        for i, cols in enumerate(self.groups):
            X[1, i][:, cols] = Z[:, cols]
        return X.reshape(2 * g * n, d), None

    def sums(self, units: int, detail: bool, block: Any = None) -> SeparateSums:
        return SeparateSums(units, self.g, detail)

    def restore(self, state: dict[str, np.ndarray]) -> SeparateSums:
        return SeparateSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        return units * ((self.g if detail else 1) + 2) + self.g
