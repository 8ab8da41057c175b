"""The one-coordinate estimator of the mean dimension: 2N evaluations whatever d is.

Per design point i one coordinate j(i) is resampled: the rows are f(A) and
f(A with column j(i) from B). Rows are cut into chunks of d consecutive rows;
each chunk visits every coordinate once, in an order drawn by a seeded hash of
the chunk number, so counts n_j are balanced and the assignment depends on the
global row only (not on how rows are split into blocks). Then

    sum_j tau_j = sum_j mean_{i: j(i) = j} (f(A) - f(A_B^{(j)}))^2 / 2,

and the variance pools the 2N values f(A) and f(A_B^{(j(i))}), all distributed as f(x).
Without per-input detail the per-row weights 1 / n_j make it an O(1)-state sum.

References
----------
.. [1] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (nu = sum of total indices).
.. [2] The splitmix64 finaliser used as the hash is common practice, no source.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..errors import UserError
from .base import Moments, RepEstimates

__all__ = ["Fast", "FastSums", "fast_assignment", "fast_counts"]


def _mix(x: np.ndarray) -> np.ndarray:
    """splitmix64 finaliser: a fast, well-spread hash of uint64 values."""
    x = x + np.uint64(0x9E3779B97F4A7C15)
    x = (x ^ (x >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    x = (x ^ (x >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return x ^ (x >> np.uint64(31))


def _chunk_perms(first: int, count: int, d: int, seed: int) -> np.ndarray:
    """Random permutations of 0..d-1 for chunks ``first .. first+count-1`` (one row each)."""
    c = np.arange(first, first + count, dtype=np.uint64)[:, None]
    j = np.arange(d, dtype=np.uint64)[None, :]
    with np.errstate(over="ignore"):
        keys = _mix(_mix(c * np.uint64(d) + j) ^ np.uint64(int(seed) % 2**64))
    return np.argsort(keys, axis=1, kind="stable")


def fast_assignment(start: int, n: int, d: int, seed: int) -> np.ndarray:
    """Coordinates j(g) of global rows ``g = start .. start+n-1`` (see the module docstring)."""
    first, last = start // d, (start + n - 1) // d
    perms = _chunk_perms(first, last - first + 1, d, seed).ravel()
    return perms[start - first * d : start - first * d + n]


def fast_counts(points: int, d: int, seed: int) -> np.ndarray:
    """How many of the N rows each coordinate gets."""
    base, extra = divmod(points, d)
    counts = np.full(d, base, dtype=np.int64)
    if extra:
        counts += np.bincount(_chunk_perms(base, 1, d, seed)[0, :extra], minlength=d)
    return counts


class FastSums:
    """Sums of the one-coordinate estimator for ``k`` units.

    Parameters
    ----------
    k, d : int
        Units and inputs.
    detail : bool
        Keep per-input sums (a total index per input); otherwise O(1) per unit.
    weights : ndarray, shape (d,), optional
        ``1 / n_j`` for each coordinate; needed without detail.
    """

    def __init__(self, k: int, d: int, detail: bool = True, weights: np.ndarray | None = None) -> None:
        self.k, self.d, self.detail = int(k), int(d), bool(detail)
        self.rows = 0
        self.moments = Moments(k)
        if detail:
            self.tot = np.zeros((d, k))
            self.cnt = np.zeros(d, dtype=np.int64)
        else:
            if weights is None:
                raise ValueError("the fast estimator without detail needs weights (1 / n_j).")
            self.weights = np.asarray(weights, dtype=np.float64)
            self.tot_sum = np.zeros(k)

    def add(self, y: np.ndarray, js: np.ndarray) -> None:
        """Add the outputs ``y`` (2n, k) of a block's rows; ``js`` the resampled coordinates."""
        n = y.shape[0] // 2
        yA, yJ = y[:n], y[n:]
        self.rows += n
        self.moments.add_pair(yA, yJ)
        sq = (yA - yJ) ** 2
        if self.detail:
            np.add.at(self.tot, js, sq)
            self.cnt += np.bincount(js, minlength=self.d)
        else:
            self.tot_sum += self.weights[js] @ sq

    def merge(self, other: FastSums) -> None:
        if (other.k, other.d, other.detail) != (self.k, self.d, self.detail):
            raise ValueError("cannot merge sums of different shapes.")
        self.rows += other.rows
        self.moments.merge(other.moments)
        if self.detail:
            self.tot += other.tot
            self.cnt += other.cnt
        else:
            self.tot_sum += other.tot_sum

    def state(self) -> dict[str, np.ndarray]:
        s = {
            "meta": np.array([self.k, self.d, self.detail, self.rows, self.moments.count]),
            "mean": self.moments.mean,
            "m2": self.moments.m2,
        }
        if self.detail:
            s.update(tot=self.tot, cnt=self.cnt)
        else:
            s.update(tot_sum=self.tot_sum, weights=self.weights)
        return s

    @classmethod
    def from_state(cls, s: dict[str, np.ndarray]) -> FastSums:
        k, d, detail, rows, count = (int(v) for v in s["meta"])
        out = cls(k, d, bool(detail), s.get("weights"))
        out.rows, out.moments.count = rows, count
        out.moments.mean, out.moments.m2 = np.array(s["mean"]), np.array(s["m2"])
        for name in ("tot", "cnt", "tot_sum"):
            if name in s:
                setattr(out, name, np.array(s[name]))
        return out

    def finish(self, ddof: int) -> RepEstimates:
        if self.rows == 0:
            raise ValueError("no rows have been added.")
        m = self.moments
        var = m.variance(ddof)
        if not self.detail:
            return RepEstimates(m.mean.copy(), var, None, None, self.tot_sum / 2)
        with np.errstate(invalid="ignore", divide="ignore"):
            tot = self.tot / (2 * self.cnt[:, None])
        return RepEstimates(m.mean.copy(), var, tot, None, np.nansum(tot, axis=0))


class Fast:
    """The mean dimension (and a total index per input) from 2N evaluations.

    Parameters
    ----------
    d : int
        Number of inputs.
    points : int
        N per randomization (each coordinate gets about N / d rows).
    """

    name = "hashed"
    label = "hashed one-coordinate estimator (mean dimension; no gain from scrambled points: Monte Carlo rate)"
    help = (
        "netdim 0.1's fast estimator, kept so its reports reproduce: 2N evaluations, but the hashed order "
        "loses the RQMC gain (use fast)"
    )
    copies = 2
    first_order = False
    replicates = 8

    @classmethod
    def build(cls, d: int, points: int, groups: Any = None) -> Fast:
        """The registry's constructor (:func:`audit.estimators.make_estimator`)."""
        if groups is not None:
            raise UserError("The fast estimator measures single inputs only; use the Jansen estimator for groups.")
        return cls(d, points)

    def __init__(self, d: int, points: int) -> None:
        self.d, self.points = int(d), int(points)

    def settings(self) -> dict[str, Any]:
        """What, besides the design, this estimator's numbers depend on (for checkpoints)."""
        return {}

    def rows_per_point(self) -> int:
        return 2

    def check(self, points: int) -> None:
        if points < self.d:
            raise UserError(
                f"The fast estimator needs at least as many points as inputs ({self.d}); got {points}. Raise `points`."
            )

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, np.ndarray]:
        A, B = block.A.astype(dtype, copy=False), block.B.astype(dtype, copy=False)
        n = A.shape[0]
        js = fast_assignment(block.start, n, self.d, int(block.rep_seed))
        AJ = A.copy()
        AJ[np.arange(n), js] = B[np.arange(n), js]
        return np.concatenate([A, AJ]), js

    def sums(self, units: int, detail: bool, block: Any) -> FastSums:
        weights = None if detail else 1.0 / fast_counts(self.points, self.d, int(block.rep_seed))
        return FastSums(units, self.d, detail, weights)

    def restore(self, state: dict[str, np.ndarray]) -> FastSums:
        return FastSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        return units * ((self.d if detail else 1) + 2) + self.d
