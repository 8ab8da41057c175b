"""The Jansen estimator: every total and first-order index from N(G + 2) evaluations.

Per design point the rows are f(A), f(B) and f(A_B^{(g)}) for each of G inputs
(or groups of inputs, swapped as a whole). With ``y_A``, ``y_B``, ``y_g`` their
values:

* total index (Jansen): ``tau_g = E[(y_A - y_g)^2] / 2``;
* first-order index (the 2010 form, centred by the pooled mean):
  ``t_g = E[(y_B - mu) (y_g - y_A)]``, kept streaming as
  ``sum (y_B - c)(y_g - y_A)`` and ``sum (y_g - y_A)`` for a shift ``c`` fixed by
  the first block, re-centred on the pooled mean at the end (exact under merging);
* variance from the 2N values y_A and y_B (Chan's merge).

The mean dimension (superposition sense) is ``nu = sum_g tau_g / sigma^2``.

References
----------
.. [1] "Variance based sensitivity analysis of model output. Design and
   estimator for the total sensitivity index", Computer Physics
   Communications, 2010 (Jansen total index; the first-order form).
.. [2] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (nu = sum of total indices).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from ..buffers import take
from .base import Moments, RepEstimates
from .kernels import squared_differences

__all__ = ["DIFF_BUFFER", "F32_ROWS", "Jansen", "JansenSums"]

#: Rows of one float32 partial sum of squared differences (sums without per-input detail).
F32_ROWS = 256
#: Bytes of the reused buffer of differences (float32 or float64): one core's L2 cache on the machines measured.
DIFF_BUFFER = 1 << 20


def _squares_f32(yA: np.ndarray, yAB: np.ndarray) -> np.ndarray:
    """Per unit, sum over inputs and rows of (yAB[j] - yA)^2 for float32 rows.

    Differences and squares are formed in float32 (a difference of two float32 values is
    exact when they lie within a factor of two of each other, else rounded once), summed in
    float32 over at most :data:`F32_ROWS` rows, and those partial sums added in float64: a
    relative error of about 1e-6 at most (measured 1e-6 on a 1034-unit MLP), far below any
    interval's width, at about half the time of float64 differences. The differences go
    through a buffer of at most :data:`DIFF_BUFFER` bytes, several inputs at once when a
    block has few rows, so that the number of numpy calls does not grow as blocks shrink.
    Float64 throughout if a partial sum overflows float32.
    """
    g, n, k = yAB.shape
    rows = max(1, min(F32_ROWS, DIFF_BUFFER // (4 * max(k, 1))))
    out = np.zeros(k)
    if rows >= n:  # q inputs' differences at once
        q = min(g, rows // n)
        buf = np.empty((q, n, k), dtype=np.float32)
        for j in range(0, g, q):
            b = buf[: min(q, g - j)]
            np.subtract(yAB[j : j + q], yA[None], out=b)
            flat = b.reshape(-1, k)
            out += np.einsum("nk,nk->k", flat, flat)
    else:
        buf = np.empty((rows, k), dtype=np.float32)
        for s in range(0, n, rows):
            a = yA[s : s + rows]
            b = buf[: len(a)]
            for j in range(g):
                np.subtract(yAB[j, s : s + rows], a, out=b)
                out += np.einsum("nk,nk->k", b, b)
    if np.isfinite(out).all() or not (np.isfinite(yA).all() and np.isfinite(yAB).all()):
        return out
    d = yAB.astype(np.float64) - yA.astype(np.float64)
    return np.einsum("gnk,gnk->k", d, d)


def _inputs_per_pass(n: int, k: int) -> int:
    """Inputs whose float64 differences fit one :data:`DIFF_BUFFER`-sized buffer (at least one)."""
    return max(1, DIFF_BUFFER // (8 * max(n * k, 1)))


class JansenSums:
    """Sums of the Jansen estimator for ``k`` units and ``g`` inputs (or groups).

    Parameters
    ----------
    k : int
        Units (scalars) in the group.
    g : int
        Inputs or groups of inputs.
    detail : bool
        Keep per-input sums (total and first-order indices of every input);
        without detail the state is O(1) per unit: variance and mean dimension.
    """

    def __init__(self, k: int, g: int, detail: bool = True) -> None:
        self.k, self.g, self.detail = int(k), int(g), bool(detail)
        self.rows = 0
        self.moments = Moments(k)
        if detail:
            self.tot = np.zeros((g, k))
            self.fo = np.zeros((g, k))
            self.dif = np.zeros((g, k))
            self.shift: np.ndarray | None = None
        else:
            self.tot_sum = np.zeros(k)
            self._kept: np.ndarray | None = None

    def add(self, y: np.ndarray, context: Any = None) -> None:
        """Add the outputs ``y`` of a block's rows: (n (g + 2), k), laid out as :meth:`Jansen.layout`."""
        n = y.shape[0] // (self.g + 2)
        self.add_parts(y[:n], y[n : 2 * n], y[2 * n :].reshape(self.g, n, -1))

    def add_parts(self, yA: np.ndarray, yB: np.ndarray, yAB: np.ndarray) -> None:
        """Add rows: ``yA``, ``yB`` of shape (n, k); ``yAB`` of shape (g, n, k).

        Any float dtype: with per-input detail (the outputs) every difference and sum is
        formed in float64, a few inputs at a time in a reused buffer, so a float32
        network's rows are never copied whole (the numbers equal those of a float64 copy bit
        for bit). Without detail (hidden layers: hundreds to thousands of units) float32 rows'
        squared differences are summed in float64 by one compiled pass
        (:func:`.kernels.squared_differences`), or, where that loop was not built, as
        :func:`_squares_f32` says.
        """
        n = yA.shape[0]
        self.rows += n
        self.moments.add_pair(yA, yB)
        if not self.detail:
            self._add_squares(yA, yAB)
            return
        yA = np.asarray(yA, dtype=np.float64)
        yB = np.asarray(yB, dtype=np.float64)
        q = _inputs_per_pass(n, yA.shape[1])
        buf = np.empty((q, *yA.shape))
        if self.shift is None:
            self.shift = yB.mean(axis=0)
        centred = yB - self.shift
        for j in range(0, self.g, q):
            b = buf[: min(q, self.g - j)]
            np.subtract(yAB[j : j + q], yA[None], out=b)
            self.tot[j : j + q] += np.einsum("gnk,gnk->gk", b, b)
            self.fo[j : j + q] += np.einsum("nk,gnk->gk", centred, b)
            self.dif[j : j + q] += np.einsum("gnk->gk", b)

    def _add_squares(self, yA: np.ndarray, yAB: np.ndarray) -> None:
        """Without detail: add ``sum_j sum_i (yAB[j, i] - yA[i])^2`` per unit, in float64."""
        if yA.dtype == np.float32 and yAB.dtype == np.float32:
            squares = squared_differences(yA, yAB)
            self.tot_sum += _squares_f32(yA, yAB) if squares is None else squares
            return
        yA = np.asarray(yA, dtype=np.float64)
        q = _inputs_per_pass(yA.shape[0], yA.shape[1])
        buf = np.empty((q, *yA.shape))
        for j in range(0, yAB.shape[0], q):
            b = buf[: min(q, yAB.shape[0] - j)]
            np.subtract(yAB[j : j + q], yA[None], out=b)
            self.tot_sum += np.einsum("gnk,gnk->k", b, b)

    @property
    def streams(self) -> bool:
        """Whether :meth:`add_rows` takes a block in parts (without per-input detail)."""
        return not self.detail

    def add_rows(self, y: np.ndarray, start: int, points: int) -> None:
        """Add rows ``[start, start + len(y))`` of a block of ``points`` points laid out as
        :meth:`Jansen.layout`, the block's parts handed over in order.

        A model called on a thousand rows at a time has each call's values summed while
        they are still in the cache, and no array of the whole block is made. Only without
        per-input detail (:attr:`streams`). Rows A and B are kept until the block's last
        row; the sums are those of :meth:`add` on the whole block up to the order of the
        float64 additions.
        """
        if self.detail:
            raise ValueError("a block in parts is summed only without per-input detail.")
        n, stop = int(points), start + len(y)
        if start == 0:
            self._kept = take((2 * n, *y.shape[1:]), y.dtype)  # lent by the engine between tasks
        kept = self._kept
        if kept is None or stop > n * (self.g + 2):
            raise ValueError("rows must be handed over in order, from row 0 to the block's last.")
        if start < 2 * n:  # rows A, then B: kept; their moments once both are complete
            m = min(stop, 2 * n) - start
            kept[start : start + m] = y[:m]
            y, start = y[m:], start + m
            if start == 2 * n:
                self.rows += n
                self.moments.add_pair(kept[:n], kept[n:])
        while len(y):  # rows A_B^{(j)}, a part of one input's rows at a time
            i = (start - 2 * n) % n
            m = min(len(y), n - i)
            self._add_squares(kept[i : i + m], y[:m].reshape(1, m, -1))
            y, start = y[m:], start + m
        if stop == n * (self.g + 2):
            self._kept = None

    def magnitude_bound(self) -> float:
        """An upper bound of every value added: ``|mean| + sqrt(m2)`` bounds y_A and y_B, and the
        largest sum of squared differences bounds how far each y_A_B lies from its y_A (NaN or
        infinite when such values were added)."""
        m = self.moments
        squares = self.tot if self.detail else self.tot_sum
        return float(np.max(np.abs(m.mean) + np.sqrt(m.m2), initial=0.0) + np.sqrt(np.max(squares, initial=0.0)))

    def merge(self, other: JansenSums) -> None:
        """Add the sums of ``other`` (disjoint rows of the same randomization)."""
        if (other.k, other.g, other.detail) != (self.k, self.g, self.detail):
            raise ValueError("cannot merge sums of different shapes.")
        self.rows += other.rows
        self.moments.merge(other.moments)
        if not self.detail:
            self.tot_sum += other.tot_sum
            return
        if other.shift is not None:
            if self.shift is None:
                self.shift = other.shift.copy()
                self.fo += other.fo
            else:
                self.fo += other.fo + (other.shift - self.shift)[None] * other.dif
        self.tot += other.tot
        self.dif += other.dif

    def state(self) -> dict[str, np.ndarray]:
        s = {
            "meta": np.array([self.k, self.g, self.detail, self.rows, self.moments.count]),
            "mean": self.moments.mean,
            "m2": self.moments.m2,
        }
        if self.detail:
            s.update(tot=self.tot, fo=self.fo, dif=self.dif)
            if self.shift is not None:
                s["shift"] = self.shift
        else:
            s["tot_sum"] = self.tot_sum
        return s

    @classmethod
    def from_state(cls, s: dict[str, np.ndarray]) -> JansenSums:
        k, g, detail, rows, count = (int(v) for v in s["meta"])
        out = cls(k, g, bool(detail))
        out.rows, out.moments.count = rows, count
        out.moments.mean, out.moments.m2 = np.array(s["mean"]), np.array(s["m2"])
        for name in ("tot", "fo", "dif", "shift", "tot_sum"):
            if name in s:
                setattr(out, name, np.array(s[name]))
        return out

    def finish(self, ddof: int) -> RepEstimates:
        """Per-unit estimates of this randomization (un-normalised); ``ddof`` as in :meth:`Moments.variance`."""
        if self.rows == 0:
            raise ValueError("no rows have been added.")
        m = self.moments
        var = m.variance(ddof)
        if not self.detail:
            return RepEstimates(m.mean.copy(), var, None, None, self.tot_sum / (2 * self.rows))
        tot = self.tot / (2 * self.rows)
        shift = self.shift if self.shift is not None else np.zeros(self.k)
        fo = (self.fo + (shift - m.mean)[None] * self.dif) / self.rows
        return RepEstimates(m.mean.copy(), var, tot, fo, tot.sum(axis=0))


class Jansen:
    """Total indices (Jansen) and first-order indices of every input, N(G + 2) evaluations.

    Parameters
    ----------
    d : int
        Number of inputs.
    groups : sequence of sequence of int, optional
        Inputs swapped together (one index per group); default one group per input.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.design import Design
    >>> from audit.estimators import make_estimator
    >>> from audit.inputs import Law
    >>> est = make_estimator("jansen", d=2)
    >>> block = Design([Law("uniform")] * 2, 64, 1, seed=3).block(0, 0, 64)
    >>> rows, context = est.layout(block, np.float64)
    >>> sums = est.sums(1, True, block)
    >>> sums.add((rows[:, 0] + rows[:, 1])[:, None], context)
    >>> r = sums.finish(ddof=0)
    >>> bool(abs(r.total_sum[0] / r.variance[0] - 1) < 0.05)      # additive: nu = 1
    True
    """

    name = "jansen"
    label = "Jansen estimator (total and first-order indices)"
    help = "every total and first-order index, N(d+2) evaluations per randomization"
    copies = 2
    first_order = True
    replicates = 8
    #: Its sums take the model's float rows as they are (no float64 copy of the block).
    native_outputs = True

    @classmethod
    def build(cls, d: int, points: int, groups: Sequence[Sequence[int]] | None = None) -> Jansen:
        """The registry's constructor (:func:`audit.estimators.make_estimator`)."""
        return cls(d, groups)

    def __init__(self, d: int, groups: Sequence[Sequence[int]] | None = None) -> None:
        self.d = int(d)
        self.groups = None if groups is None else [np.asarray(g, dtype=np.intp) for g in groups]
        self.g = self.d if self.groups is None else len(self.groups)

    def settings(self) -> dict[str, Any]:
        """What, besides the design, this estimator's numbers depend on (for checkpoints)."""
        return {"groups": None if self.groups is None else [g.tolist() for g in self.groups]}

    def rows_per_point(self) -> int:
        return self.g + 2

    def check(self, points: int) -> None:
        return None

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, None]:
        """Rows A, B, then A_B^{(g)} for every group g, as one (n (G + 2), d) array."""
        A, B = block.A.astype(dtype, copy=False), block.B.astype(dtype, copy=False)
        n, d = A.shape
        X = np.empty((self.g + 2, n, d), dtype=A.dtype)
        X[0], X[1] = A, B
        X[2:] = A
        if self.groups is None:
            j = np.arange(d)
            X[2 + j, :, j] = B.T
        else:
            for g, cols in enumerate(self.groups):
                X[2 + g][:, cols] = B[:, cols]
        return X.reshape((self.g + 2) * n, d), None

    def sums(self, units: int, detail: bool, block: Any = None) -> JansenSums:
        return JansenSums(units, self.g, detail)

    def restore(self, state: dict[str, np.ndarray]) -> JansenSums:
        return JansenSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        return units * ((3 * self.g if detail else 1) + 2)
