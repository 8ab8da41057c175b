"""Sums shared by the estimators of total indices alone: pooled moments and squared differences.

Internal: the winding stairs (:mod:`~audit.estimators.stairs`), the separate
pairs (:mod:`~audit.estimators.separate`) and the split estimator
(:mod:`~audit.estimators.split`) differ in which rows they evaluate, not in what
they keep. Each keeps, for k units and g inputs (or groups):

* the pooled mean and sum of squared deviations of some outputs, all
  distributed as f(x) (Chan's merge, :class:`~audit.estimators.base.Moments`),
  for the variance;
* with detail, per input the sum of squared differences
  ``(f(x) - f(x with z_j))^2`` and the number of such pairs, so that
  ``tau_j = sum / (2 count)``;
* without detail one sum per unit: the squared differences weighted by
  ``1 / count_j`` (known before any row is added), or unweighted when every
  input gets one pair per design point (divided by 2 N at the end).

Every sum is additive over disjoint rows, so merging halves gives the whole.

References
----------
.. [1] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (tau_j = E[(f(x) - f(x with
   z_j))^2] / 2 and nu = sum of total indices).
.. [2] "Updating formulae and a pairwise algorithm for computing sample
   variances", COMPSTAT, 1982 (the pooled moments).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .base import Moments, RepEstimates

__all__ = ["TotalSums"]


class TotalSums:
    """Pooled moments and per-input sums of squared differences for ``k`` units and ``g`` inputs.

    Parameters
    ----------
    k, g : int
        Units, and inputs (or groups of inputs).
    detail : bool
        Keep a sum and a count per input (a total index per input).
    weights : ndarray, shape (g,), optional
        Without detail: ``1 / count_j``, for estimators whose inputs get different
        numbers of pairs. ``None`` means one pair per input and design point.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.estimators.totals import TotalSums
    >>> s = TotalSums(1, 2)
    >>> s.add_parts(np.array([[0.0], [2.0]]), np.array([[[4.0]], [[0.0]]]))
    >>> s.finish(ddof=0).total[:, 0].tolist()
    [2.0, 0.0]
    """

    def __init__(self, k: int, g: int, detail: bool = True, weights: np.ndarray | None = None) -> None:
        self.k, self.g, self.detail = int(k), int(g), bool(detail)
        self.rows = 0
        self.moments = Moments(k)
        self.weights = None if weights is None else np.asarray(weights, dtype=np.float64)
        if detail:
            self.tot = np.zeros((g, k))
            self.cnt = np.zeros(g, dtype=np.int64)
        else:
            self.tot_sum = np.zeros(k)

    def add(self, y: np.ndarray, context: Any = None) -> None:  # pragma: no cover - each estimator's own
        raise NotImplementedError

    def add_parts(self, values: np.ndarray, sq: np.ndarray, js: np.ndarray | None = None) -> None:
        """Add design points.

        Parameters
        ----------
        values : ndarray, shape (m, k)
            Outputs pooled for the variance (each distributed as f(x)).
        sq : ndarray
            Squared differences: shape (g, n, k), one per input and design point
            (``js`` is None), or shape (n, k), one per design point, of input ``js``.
        js : ndarray of int, shape (n,), optional
            The input of each design point's difference.
        """
        self.moments.add(values)
        if js is None:
            n = sq.shape[1]
            self.rows += n
            if self.detail:
                self.tot += sq.sum(axis=1)
                self.cnt += n
            elif self.weights is None:
                self.tot_sum += sq.sum(axis=(0, 1))
            else:
                self.tot_sum += np.einsum("g,gnk->k", self.weights, sq)
            return
        self.rows += sq.shape[0]
        if self.detail:
            np.add.at(self.tot, js, sq)
            self.cnt += np.bincount(js, minlength=self.g)
        else:
            if self.weights is None:
                raise ValueError("sums of one difference per design point need weights (1 / count) without detail.")
            self.tot_sum += self.weights[js] @ sq

    def merge(self, other: TotalSums) -> None:
        """Add the sums of ``other`` (disjoint rows of the same randomization)."""
        if type(other) is not type(self) or (other.k, other.g, other.detail) != (self.k, self.g, self.detail):
            raise ValueError("cannot merge sums of different kinds or shapes.")
        self.rows += other.rows
        self.moments.merge(other.moments)
        if self.detail:
            self.tot += other.tot
            self.cnt += other.cnt
        else:
            self.tot_sum += other.tot_sum

    def state(self) -> dict[str, np.ndarray]:
        s = {
            "meta": np.array([self.k, self.g, self.detail, self.rows, self.moments.count]),
            "mean": self.moments.mean,
            "m2": self.moments.m2,
        }
        if self.weights is not None:
            s["weights"] = self.weights
        if self.detail:
            s.update(tot=self.tot, cnt=self.cnt)
        else:
            s["tot_sum"] = self.tot_sum
        return s

    @classmethod
    def from_state(cls, s: dict[str, np.ndarray]) -> TotalSums:
        k, g, detail, rows, count = (int(v) for v in s["meta"])
        out = cls(k, g, bool(detail), s.get("weights"))
        out.rows, out.moments.count = rows, count
        out.moments.mean, out.moments.m2 = np.array(s["mean"]), np.array(s["m2"])
        for name in ("tot", "cnt", "tot_sum"):
            if name in s:
                setattr(out, name, np.array(s[name]))
        return out

    def finish(self, ddof: int) -> RepEstimates:
        """Per-unit estimates of this randomization (un-normalised); no first-order indices."""
        if self.rows == 0:
            raise ValueError("no rows have been added.")
        m = self.moments
        var = m.variance(ddof)
        if not self.detail:
            scale = 2 * self.rows if self.weights is None else 2
            return RepEstimates(m.mean.copy(), var, None, None, self.tot_sum / scale)
        with np.errstate(invalid="ignore", divide="ignore"):
            tot = self.tot / (2 * self.cnt[:, None])
        return RepEstimates(m.mean.copy(), var, tot, None, np.nansum(tot, axis=0))
