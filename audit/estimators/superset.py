"""Superset importance of every pair among K inputs, and the spread of the dimension distribution.

For inputs j != k the superset importance of the pair is

    Upsilon^2_{jk} = sum_{u ⊇ {j, k}} sigma^2_u
                   = E[(f(x) - f(x with z_j) - f(x with z_k) + f(x with z_j, z_k))^2] / 4,

for independent x, z (the square of a second-order difference). Per design
point the rows are, with x = A and z = B,

    f(x),   f(x with z_j) for each of the K inputs,   f(x with z_j, z_k) for each of the K(K-1)/2 pairs,

so f(x) and the single swaps are shared by every pair: 1 + K + K(K - 1)/2
rows per point. The single swaps also give the total indices
``tau_j = E[(f(x) - f(x with z_j))^2] / 2`` of the K inputs, and with them

* ``sum_{j in K} tau_j = sum_u |u ∩ K| sigma^2_u`` (``nu sigma^2`` when K holds every input);
* ``M2 = sum_{j in K} tau_j + 2 sum_{j < k} Upsilon^2_{jk} = sum_u |u ∩ K|^2 sigma^2_u``
  (``E|u|^2 sigma^2`` when K holds every input), so that the dimension
  distribution (|u| drawn with probability sigma^2_u / sigma^2) has second moment
  ``M2 / sigma^2`` and variance ``M2 / sigma^2 - nu^2``.

The variance pools every row (each distributed as f(x)). Ratios are formed per
randomization and their intervals come from independent randomizations
(:func:`dimension_moments`).

For many inputs, ``sample`` pairs drawn at random (without replacement, anew
in each randomization, from a stream of its seed) stand for all P pairs: their
sum, times P / sample, estimates the sum over all pairs without bias, and the
interval over randomizations includes the draw of the pairs. Cost
N (1 + K + sample); the pairs' own estimates are then not reported.

References
----------
.. [1] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (superset importance of a
   pair by the squared second-order difference, and the second moment of the
   dimension distribution from total indices and pairs).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from itertools import combinations
from typing import Any

import numpy as np

from .base import RepEstimates
from .intervals import LEVEL, Interval, t_interval
from .totals import TotalSums

__all__ = ["Superset", "SupersetRep", "SupersetSums", "dimension_moments"]

#: Spawn key of the stream that draws a randomization's sampled pairs (apart from its points' stream).
_PAIR_STREAM = 0x7061


@dataclass
class SupersetRep(RepEstimates):
    """One randomization: :class:`~audit.estimators.base.RepEstimates` of the K inputs, and the pairs.

    ``pairs`` has shape (P, k) (``None`` without detail), ``pair_index`` (P, 2)
    the inputs of each pair; ``second_moment`` is ``M2`` of shape (k,), un-normalised.
    """

    pairs: np.ndarray | None
    pair_index: np.ndarray
    second_moment: np.ndarray


class SupersetSums(TotalSums):
    """Sums of the single swaps (as :class:`~audit.estimators.totals.TotalSums`) and of the pairs' differences.

    Parameters
    ----------
    k, g : int
        Units, and the K inputs.
    detail : bool
        Keep a sum per input and per pair; otherwise one sum per unit for each.
    weights : None
        Unused (the single swaps give one pair per input and design point).
    pair_index : ndarray of int, shape (P, 2), optional
        The measured pairs (positions among the K inputs); default all pairs.
    scale : float
        Factor from the measured pairs' sum to the sum over all pairs (1 without sampling).
    """

    def __init__(
        self,
        k: int,
        g: int,
        detail: bool = True,
        weights: np.ndarray | None = None,
        pair_index: np.ndarray | None = None,
        scale: float = 1.0,
    ) -> None:
        super().__init__(k, g, detail, weights)
        if pair_index is None:
            pair_index = np.array(list(combinations(range(self.g), 2)), dtype=np.intp).reshape(-1, 2)
        self.pair_index = np.asarray(pair_index, dtype=np.intp).reshape(-1, 2)
        self.p, self.scale = len(self.pair_index), float(scale)
        if detail:
            self.pair = np.zeros((self.p, self.k))
        else:
            self.pair_sum = np.zeros(self.k)

    def add(self, y: np.ndarray, context: Any = None) -> None:
        """Add the outputs ``y`` (n (1 + K + P), k) of a block's rows, laid out as :meth:`Superset.layout`."""
        n = y.shape[0] // (1 + self.g + self.p)
        Y = y.reshape(1 + self.g + self.p, n, -1)
        y0, ys, yp = Y[0], Y[1 : 1 + self.g], Y[1 + self.g :]
        single = ys - y0[None]
        self.add_parts(y, single * single)
        j, k = self.pair_index[:, 0], self.pair_index[:, 1]
        second = yp - single[j] - single[k] - y0[None]
        if self.detail:
            self.pair += np.einsum("pnk,pnk->pk", second, second)
        else:
            self.pair_sum += np.einsum("pnk,pnk->k", second, second)

    def merge(self, other: SupersetSums) -> None:
        if not np.array_equal(other.pair_index, self.pair_index) or other.scale != self.scale:
            raise ValueError("cannot merge sums of different pairs.")
        super().merge(other)
        if self.detail:
            self.pair += other.pair
        else:
            self.pair_sum += other.pair_sum

    def state(self) -> dict[str, np.ndarray]:
        s = super().state()
        s.update(pair_index=self.pair_index, scale=np.array([self.scale]))
        if self.detail:
            s["pair"] = self.pair
        else:
            s["pair_sum"] = self.pair_sum
        return s

    @classmethod
    def from_state(cls, s: dict[str, np.ndarray]) -> SupersetSums:
        out = super().from_state(s)
        out.pair_index, out.scale = np.array(s["pair_index"]).reshape(-1, 2), float(s["scale"][0])
        out.p = len(out.pair_index)
        for name in ("pair", "pair_sum"):
            if name in s:
                setattr(out, name, np.array(s[name]))
        return out  # type: ignore[return-value]

    def finish(self, ddof: int) -> SupersetRep:
        """Per-unit estimates of this randomization (un-normalised)."""
        r = super().finish(ddof)
        if self.detail:
            pairs = self.pair / (4 * self.rows)
            pair_sum = pairs.sum(axis=0)
        else:
            pairs, pair_sum = None, self.pair_sum / (4 * self.rows)
        m2 = r.total_sum + 2 * self.scale * pair_sum
        return SupersetRep(r.mean, r.variance, r.total, None, r.total_sum, pairs, self.pair_index.copy(), m2)


def dimension_moments(reps: Sequence[SupersetRep], level: float = LEVEL) -> dict[str, Interval]:
    """Intervals over independent randomizations of the dimension distribution's moments, per unit.

    Parameters
    ----------
    reps : sequence of SupersetRep
        One per randomization (``finish`` of each randomization's sums).
    level : float
        Two-sided level.

    Returns
    -------
    dict of str to Interval
        ``"nu"`` (``sum tau_j / sigma^2``), ``"second_moment"`` (``M2 / sigma^2``),
        ``"spread"`` (``M2 / sigma^2 - nu^2``, the variance of |u|) and, with detail and
        the same pairs in every randomization, ``"pairs"`` (``Upsilon^2_{jk} / sigma^2``,
        shape (P, k)); each formed per
        randomization, then a Student-t interval (:func:`~audit.estimators.intervals.t_interval`).
    """
    var = np.array([r.variance for r in reps])
    nu = np.array([r.total_sum for r in reps]) / var
    m2 = np.array([r.second_moment for r in reps]) / var
    out = {
        "nu": t_interval(nu, level),
        "second_moment": t_interval(m2, level),
        "spread": t_interval(m2 - nu**2, level),
    }
    same = all(np.array_equal(r.pair_index, reps[0].pair_index) for r in reps)
    if reps[0].pairs is not None and same:
        out["pairs"] = t_interval(np.array([r.pairs for r in reps]) / var[:, None, :], level)
    return out


class Superset:
    """Superset importance of every pair among K inputs, their total indices, and E|u|^2.

    Parameters
    ----------
    d : int
        Number of inputs.
    inputs : sequence of int, optional
        The K inputs (default all d); every pair among them is measured.
    sample : int, optional
        Measure this many pairs, drawn anew in each randomization, instead of all
        (see the module docstring).

    Notes
    -----
    Through :func:`~audit.estimators.make_estimator` the K inputs are the
    ``groups``, each a single input. Cost: N (1 + K + K(K - 1)/2) evaluations per
    randomization.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.design import Design
    >>> from audit.estimators import make_estimator
    >>> from audit.inputs import Law
    >>> est = make_estimator("superset", d=3)
    >>> est.rows_per_point()                              # 1 + 3 + 3
    7
    >>> block = Design([Law("normal")] * 3, 256, 1, seed=3).block(0, 0, 256)
    >>> rows, context = est.layout(block, np.float64)
    >>> sums = est.sums(1, True, block)
    >>> sums.add((rows[:, 0] * rows[:, 1] + rows[:, 2])[:, None], context)
    >>> r = sums.finish(ddof=0)
    >>> [round(float(v), 1) for v in r.pairs[:, 0] / r.variance[0]]    # x0x1 is a pure pair of variance 1
    [0.5, 0.0, 0.0]
    """

    name = "superset"
    label = "superset importance of pairs (total indices of K inputs, E|u|^2)"
    help = (
        "superset importance of every pair among K inputs, their total indices and the spread of the dimension "
        "distribution, N(1 + K + K(K-1)/2) evaluations per randomization"
    )
    copies = 2
    first_order = False
    replicates = 8

    @classmethod
    def build(cls, d: int, points: int, groups: Sequence[Sequence[int]] | None = None) -> Superset:
        """The registry's constructor: ``groups`` are the K inputs, one input each."""
        if groups is None:
            return cls(d)
        inputs = []
        for g in groups:
            g = list(np.atleast_1d(np.asarray(g, dtype=np.intp)))
            if len(g) != 1:
                raise ValueError("the superset estimator measures pairs of single inputs; give one input per group.")
            inputs.append(int(g[0]))
        return cls(d, inputs)

    def __init__(self, d: int, inputs: Sequence[int] | None = None, sample: int | None = None) -> None:
        self.d = int(d)
        self.inputs = np.arange(self.d) if inputs is None else np.asarray(list(inputs), dtype=np.intp)
        if len(np.unique(self.inputs)) != len(self.inputs) or len(self.inputs) < 1:
            raise ValueError("the superset estimator needs distinct inputs.")
        if self.inputs.min() < 0 or self.inputs.max() >= self.d:
            raise ValueError(f"inputs must lie in 0..{self.d - 1}.")
        self.g = len(self.inputs)
        self.pair_index = np.array(list(combinations(range(self.g), 2)), dtype=np.intp).reshape(-1, 2)
        total = len(self.pair_index)
        if sample is not None and not 1 <= int(sample) <= total:
            raise ValueError(f"sample must be between 1 and the {total} pairs of {self.g} inputs, got {sample}.")
        self.sample = None if sample is None or int(sample) == total else int(sample)

    @property
    def pairs(self) -> list[tuple[int, int]]:
        """All pairs among the K inputs, as input indices, in the order of the estimates."""
        return [(int(self.inputs[a]), int(self.inputs[b])) for a, b in self.pair_index]

    def measured(self, rep_seed: Any) -> np.ndarray:
        """Positions (P, 2) among the K inputs of the pairs measured in the randomization of ``rep_seed``."""
        if self.sample is None:
            return self.pair_index
        if isinstance(rep_seed, np.random.SeedSequence):
            seq = np.random.SeedSequence(rep_seed.entropy, spawn_key=(*rep_seed.spawn_key, _PAIR_STREAM))
        else:
            seq = np.random.SeedSequence(int(rep_seed), spawn_key=(_PAIR_STREAM,))
        chosen = np.sort(np.random.default_rng(seq).choice(len(self.pair_index), self.sample, replace=False))
        return self.pair_index[chosen]

    def rows_per_point(self) -> int:
        return 1 + self.g + (len(self.pair_index) if self.sample is None else self.sample)

    def check(self, points: int) -> None:
        return None

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, None]:
        """Rows x, x with z_j for each input j, x with z_j and z_k for each pair, as one array."""
        A, B = block.A.astype(dtype, copy=False), block.B.astype(dtype, copy=False)
        n, d = A.shape
        m = self.rows_per_point()
        mask = np.zeros((m, d), dtype=bool)
        mask[1 + np.arange(self.g), self.inputs] = True
        pairs = self.measured(block.rep_seed)
        rows = 1 + self.g + np.arange(len(pairs))
        mask[rows, self.inputs[pairs[:, 0]]] = True
        mask[rows, self.inputs[pairs[:, 1]]] = True
        X = np.where(mask[:, None, :], B[None], A[None])
        return X.reshape(m * n, d), None

    def sums(self, units: int, detail: bool, block: Any = None) -> SupersetSums:
        if self.sample is None:
            return SupersetSums(units, self.g, detail)
        scale = len(self.pair_index) / self.sample
        return SupersetSums(units, self.g, detail, pair_index=self.measured(block.rep_seed), scale=scale)

    def restore(self, state: dict[str, np.ndarray]) -> SupersetSums:
        return SupersetSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        p = self.rows_per_point() - 1 - self.g
        return units * ((self.g + p if detail else 2) + 2) + self.g + 2 * p + 1
