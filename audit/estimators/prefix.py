"""Means of the first n points of each randomization: the data of an RQMC gain measurement.

For increasing point counts n_1 < n_2 < ... (prefixes of one sequence per
randomization), the sums ``S_p = sum_{i < n_p} f(x_i)`` give the estimates
``S_p / n_p`` of the mean; their variance over independent randomizations,
against n, shows how fast the randomized quasi-Monte Carlo error falls. A
block of rows adds to every prefix it overlaps, so the sums merge exactly.

References
----------
.. [1] Measuring the RQMC variance over independent randomizations at
   several n is common practice, no source.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["PrefixMeans", "PrefixRep", "PrefixSums"]


@dataclass
class PrefixRep:
    """One randomization: ``means`` of shape (P, k), one row per prefix."""

    means: np.ndarray


class PrefixSums:
    """Sums of the outputs over the rows below each prefix."""

    def __init__(self, k: int, prefixes: Sequence[int]) -> None:
        self.k = int(k)
        self.prefixes = np.asarray(prefixes, dtype=np.int64)
        self.rows = 0
        self.total = np.zeros((len(self.prefixes), self.k))

    def add(self, y: np.ndarray, start: int) -> None:
        n = y.shape[0]
        self.rows += n
        c = np.cumsum(y, axis=0)
        for p, end in enumerate(self.prefixes):
            m = min(n, int(end) - start)
            if m > 0:
                self.total[p] += c[m - 1]

    def merge(self, other: PrefixSums) -> None:
        if other.k != self.k or not np.array_equal(other.prefixes, self.prefixes):
            raise ValueError("cannot merge sums of different shapes.")
        self.rows += other.rows
        self.total += other.total

    def state(self) -> dict[str, np.ndarray]:
        return {"meta": np.array([self.k, self.rows]), "prefixes": self.prefixes, "total": self.total}

    @classmethod
    def from_state(cls, s: dict[str, np.ndarray]) -> PrefixSums:
        k, rows = (int(v) for v in s["meta"])
        out = cls(k, s["prefixes"])
        out.rows, out.total = rows, np.array(s["total"])
        return out

    def finish(self, ddof: int) -> PrefixRep:
        return PrefixRep(self.total / self.prefixes[:, None])


class PrefixMeans:
    """The mean over the first n points, for each n of ``prefixes`` (one row per point).

    Parameters
    ----------
    prefixes : sequence of int
        Increasing point counts; the design's N is the largest.
    """

    name = "prefix_means"
    label = "means over prefixes of each sequence (RQMC gain)"
    copies = 1

    def __init__(self, prefixes: Sequence[int]) -> None:
        self.prefixes = [int(p) for p in prefixes]
        if not self.prefixes or self.prefixes != sorted(set(self.prefixes)) or self.prefixes[0] < 1:
            raise ValueError(f"prefixes must be increasing positive counts, got {prefixes!r}.")

    def settings(self) -> dict[str, Any]:
        """What, besides the design, this estimator's numbers depend on (for checkpoints)."""
        return {"prefixes": self.prefixes}

    def rows_per_point(self) -> int:
        return 1

    def check(self, points: int) -> None:
        if points < self.prefixes[-1]:
            raise ValueError(f"the design has {points} points, fewer than the largest prefix {self.prefixes[-1]}.")

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, int]:
        return block.X.astype(dtype, copy=False), block.start

    def sums(self, units: int, detail: bool, block: Any = None) -> PrefixSums:
        return PrefixSums(units, self.prefixes)

    def restore(self, state: dict[str, np.ndarray]) -> PrefixSums:
        return PrefixSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        return units * len(self.prefixes)
