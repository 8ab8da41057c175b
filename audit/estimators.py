"""Streaming, mergeable accumulators for Sobol' indices and mean dimension.

An :class:`Accumulator` holds, for one group of ``k`` output units and one
randomization, float64 sums from which the variance, the total and
first-order Sobol' indices and the mean dimension follow. Accumulators of
disjoint blocks of rows merge exactly (up to rounding), so any split of the
work -- blocks, processes, machines, checkpoints -- gives the same answer.

Estimators (``ESTIMATORS``):

``"jansen"``
    Per row, f(A), f(B) and f(A_B^{(j)}) for every j: N(d + 2) evaluations.
    Total index (Jansen): ``tau_j = E[(f(A) - f(A_B^{(j)}))^2] / 2``.
    First-order (the 2010 Saltelli form, centred by the pooled mean):
    ``t_j = E[(f(B) - mu) (f(A_B^{(j)}) - f(A))]``.
``"fast"``
    Mean dimension only: per row one coordinate j(i), stratified so every j
    appears equally often; ``sum_j tau_j = sum_j mean_{i: j(i)=j} (f(A) -
    f(A_B^{(j)}))^2 / 2``: 2N evaluations whatever d is.

The variance comes from all the values of f that are marginally
distributed as f(x): f(A) and f(B) for ``"jansen"``, f(A) and f(A_B^{(j(i))})
for ``"fast"``. The mean dimension (superposition sense) is
``nu = sum_j tau_j / sigma^2``.

Intervals: the R randomizations are independent; :func:`t_interval` gives the
mean of the per-randomization values and a Student-t interval with R - 1
degrees of freedom.

References
----------
.. [1] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (nu = sum of total indices).
.. [2] "Variance based sensitivity analysis of model output. Design and
   estimator for the total sensitivity index", Computer Physics
   Communications, 2010 (Jansen total index, first-order form).
.. [3] "Updating formulae and a pairwise algorithm for computing sample
   variances", COMPSTAT, 1982 (the pairwise mean/M2 merge).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
from scipy import stats

__all__ = [
    "ESTIMATORS",
    "Accumulator",
    "RepEstimates",
    "fast_assignment",
    "fast_counts",
    "is_inert",
    "t_interval",
]

#: Valid estimators.
ESTIMATORS = ("jansen", "fast")

#: A unit is inert when its sd is below this fraction of |mean| (plus a tiny floor):
#: float32 networks cannot resolve smaller relative changes.
INERT_RELATIVE_SD = 1e-6
INERT_ABSOLUTE_VAR = 1e-30


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
        keys = _mix(_mix(c * np.uint64(d) + j) ^ np.uint64(seed % 2**64))
    return np.argsort(keys, axis=1, kind="stable")


def fast_assignment(start: int, n: int, d: int, seed: int) -> np.ndarray:
    """Coordinates j(g) of global rows ``g = start .. start+n-1`` for the fast estimator.

    Rows are cut into chunks of d consecutive rows; each chunk visits every
    coordinate once, in an order drawn at random (a seeded hash of the chunk
    number), so counts are balanced and no coordinate is tied to a part of the
    point set's structure. The assignment depends on the global row only, not
    on how rows are split into blocks.
    """
    first, last = start // d, (start + n - 1) // d
    perms = _chunk_perms(first, last - first + 1, d, seed).ravel()
    return perms[start - first * d : start - first * d + n]


def fast_counts(points: int, d: int, seed: int) -> np.ndarray:
    """How many of the N rows each coordinate gets with the fast estimator."""
    base, extra = divmod(points, d)
    counts = np.full(d, base, dtype=np.int64)
    if extra:
        counts += np.bincount(_chunk_perms(base, 1, d, seed)[0, :extra], minlength=d)
    return counts


class Accumulator:
    """Sums for ``k`` units over some rows of one randomization.

    Parameters
    ----------
    k : int
        Number of units (scalars) in the group.
    d : int
        Number of input features.
    estimator : {"jansen", "fast"}
    detail : bool
        Keep per-input sums (total and, for Jansen, first-order indices of every
        input); without detail the state is O(1) per unit and only the variance
        and the mean dimension are available.
    fast_weights : ndarray, shape (d,), optional
        For ``"fast"`` without detail: ``1 / n_j`` for each coordinate
        (:func:`fast_counts`), so that the O(1) sum is the stratified estimator.
    """

    def __init__(
        self,
        k: int,
        d: int,
        estimator: str = "jansen",
        detail: bool = True,
        fast_weights: np.ndarray | None = None,
    ) -> None:
        if estimator not in ESTIMATORS:
            raise ValueError(f"unknown estimator {estimator!r}; valid choices: {', '.join(ESTIMATORS)}.")
        self.k, self.d, self.estimator, self.detail = int(k), int(d), estimator, bool(detail)
        self.rows = 0  # pick-freeze rows seen (N when complete)
        self.count = 0  # values in the moments
        self.mean = np.zeros(k)
        self.m2 = np.zeros(k)
        if estimator == "jansen" and detail:
            self.tot = np.zeros((d, k))
            self.fo = np.zeros((d, k))
            self.dif = np.zeros((d, k))
            self.shift: np.ndarray | None = None
        elif estimator == "fast" and detail:
            self.tot = np.zeros((d, k))
            self.cnt = np.zeros(d, dtype=np.int64)
        else:
            self.tot_sum = np.zeros(k)
            if estimator == "fast":
                if fast_weights is None:
                    raise ValueError("the fast estimator without detail needs fast_weights (1 / n_j).")
                self.fast_weights = np.asarray(fast_weights, dtype=np.float64)

    # -- adding rows ---------------------------------------------------------

    def _add_moments(self, y: np.ndarray) -> None:
        n_b = y.shape[0]
        mean_b = y.mean(axis=0)
        m2_b = ((y - mean_b) ** 2).sum(axis=0)
        self._merge_moments(n_b, mean_b, m2_b)

    def _merge_moments(self, n_b: int, mean_b: np.ndarray, m2_b: np.ndarray) -> None:
        n_a = self.count
        if n_b == 0:
            return
        if n_a == 0:
            self.count, self.mean, self.m2 = n_b, mean_b.copy(), m2_b.copy()
            return
        n = n_a + n_b
        delta = mean_b - self.mean
        self.mean = self.mean + delta * (n_b / n)
        self.m2 = self.m2 + m2_b + delta**2 * (n_a * n_b / n)
        self.count = n

    def add_jansen(self, yA: np.ndarray, yB: np.ndarray, yAB: np.ndarray) -> None:
        """Add rows: ``yA``, ``yB`` of shape (n, k); ``yAB`` of shape (d, n, k)."""
        self.rows += yA.shape[0]
        self._add_moments(np.concatenate([yA, yB]))
        diff = yAB - yA[None]
        if not self.detail:
            self.tot_sum += np.einsum("jnk,jnk->k", diff, diff)
            return
        if self.shift is None:
            self.shift = yB.mean(axis=0)
        self.tot += np.einsum("jnk,jnk->jk", diff, diff)
        self.fo += np.einsum("nk,jnk->jk", yB - self.shift, diff)
        self.dif += diff.sum(axis=1)

    def add_fast(self, yA: np.ndarray, yJ: np.ndarray, js: np.ndarray) -> None:
        """Add rows: ``yA`` and ``yJ`` (A with column ``js[i]`` from B) of shape (n, k)."""
        self.rows += yA.shape[0]
        self._add_moments(np.concatenate([yA, yJ]))
        sq = (yA - yJ) ** 2
        if self.detail:
            np.add.at(self.tot, js, sq)
            self.cnt += np.bincount(js, minlength=self.d)
        else:
            self.tot_sum += self.fast_weights[js] @ sq

    # -- merging ---------------------------------------------------------------

    def merge(self, other: Accumulator) -> None:
        """Add the sums of ``other`` (disjoint rows of the same randomization)."""
        if (other.k, other.d, other.estimator, other.detail) != (self.k, self.d, self.estimator, self.detail):
            raise ValueError("cannot merge accumulators of different shapes or estimators.")
        self.rows += other.rows
        self._merge_moments(other.count, other.mean, other.m2)
        if self.estimator == "jansen" and self.detail:
            if other.shift is not None:
                if self.shift is None:
                    self.shift = other.shift.copy()
                    self.fo += other.fo
                else:
                    self.fo += other.fo + (other.shift - self.shift)[None] * other.dif
            self.tot += other.tot
            self.dif += other.dif
        elif self.estimator == "fast" and self.detail:
            self.tot += other.tot
            self.cnt += other.cnt
        else:
            self.tot_sum += other.tot_sum

    # -- state for checkpoints and other processes -----------------------------

    def state(self) -> dict[str, np.ndarray]:
        """All sums as arrays (for checkpoints); :meth:`from_state` inverts it."""
        s = {
            "meta": np.array([self.k, self.d, self.detail, ESTIMATORS.index(self.estimator), self.rows, self.count]),
            "mean": self.mean,
            "m2": self.m2,
        }
        for name in ("tot", "fo", "dif", "cnt", "tot_sum", "fast_weights"):
            if hasattr(self, name):
                s[name] = getattr(self, name)
        if getattr(self, "shift", None) is not None:
            s["shift"] = self.shift
        return s

    @classmethod
    def from_state(cls, s: dict[str, np.ndarray]) -> Accumulator:
        k, d, detail, est, rows, count = (int(v) for v in s["meta"])
        acc = cls(k, d, ESTIMATORS[est], bool(detail), s.get("fast_weights"))
        acc.rows, acc.count = rows, count
        for name in ("mean", "m2", "tot", "fo", "dif", "cnt", "tot_sum", "shift"):
            if name in s:
                setattr(acc, name, np.array(s[name]))
        return acc

    # -- estimates -------------------------------------------------------------

    def estimates(self, ddof: int = 1) -> RepEstimates:
        """Per-unit estimates of this randomization (un-normalised).

        Parameters
        ----------
        ddof : {0, 1}
            Divisor ``count - ddof`` of the variance. Use 1 for independent points
            (plain Monte Carlo) and 0 for scrambled Sobol' points: the expected
            sum of squares about the sample mean is ``(count - 1) sigma^2`` for
            independent values but ``count (sigma^2 - Var(mean))`` in general, and
            RQMC makes ``Var(mean)`` far smaller than ``sigma^2 / count``.
        """
        if self.rows == 0:
            raise ValueError("no rows have been added.")
        var = self.m2 / max(self.count - ddof, 1)
        tot = fo = None
        if self.estimator == "jansen" and self.detail:
            tot = self.tot / (2 * self.rows)
            shift = self.shift if self.shift is not None else np.zeros(self.k)
            fo = (self.fo + (shift - self.mean)[None] * self.dif) / self.rows
            tot_sum = tot.sum(axis=0)
        elif self.estimator == "fast" and self.detail:
            with np.errstate(invalid="ignore", divide="ignore"):
                tot = self.tot / (2 * self.cnt[:, None])
            tot_sum = np.nansum(tot, axis=0)
        elif self.estimator == "jansen":
            tot_sum = self.tot_sum / (2 * self.rows)
        else:
            tot_sum = self.tot_sum / 2
        return RepEstimates(mean=self.mean.copy(), variance=var, total=tot, first=fo, total_sum=tot_sum)


@dataclass
class RepEstimates:
    """Un-normalised estimates of one randomization for k units.

    ``total`` and ``first`` have shape (d, k) (``None`` without detail;
    ``first`` is ``None`` for the fast estimator); ``total_sum`` is
    ``sum_j total`` of shape (k,).
    """

    mean: np.ndarray
    variance: np.ndarray
    total: np.ndarray | None
    first: np.ndarray | None
    total_sum: np.ndarray


def t_interval(values: np.ndarray, level: float = 0.95, axis: int = 0) -> tuple[np.ndarray, ...]:
    """Mean and Student-t interval over independent replicates.

    Parameters
    ----------
    values : ndarray
        Per-randomization values; replicates along ``axis``.
    level : float
        Two-sided confidence level.

    Returns
    -------
    estimate, ci_low, ci_high, std_error : ndarray
        NaN-safe: replicates with NaN are left out per entry.

    Notes
    -----
    With R independent randomizations, the interval is
    ``mean ± t_{(1+level)/2, R-1} s / sqrt(R)`` (common practice, no source).
    """
    v = np.asarray(values, dtype=np.float64)
    r = np.sum(np.isfinite(v), axis=axis)
    with np.errstate(invalid="ignore", divide="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN entries (inert units) give NaN
        est = np.nanmean(v, axis=axis) if v.size else np.full(v.shape[1:], np.nan)
        sd = np.nanstd(v, axis=axis, ddof=1)
        se = sd / np.sqrt(r)
        q = stats.t.ppf(0.5 + level / 2, np.maximum(r - 1, 1))
        half = np.where(r > 1, q * se, np.nan)
    return est, est - half, est + half, np.where(r > 1, se, np.nan)


def is_inert(mean: np.ndarray, variance: np.ndarray) -> np.ndarray:
    """Units whose variance is zero up to the precision of a float32 network."""
    return variance <= (INERT_RELATIVE_SD * np.abs(mean)) ** 2 + INERT_ABSOLUTE_VAR
