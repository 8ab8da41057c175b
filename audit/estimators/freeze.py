"""The error of freezing groups of inputs: E[(f(A) - f(A_B^{(u)}))^2] for each group u.

Freezing the inputs u at a random draw changes the output by
f(x) - f(x_{-u}, x'_u), whose mean square is 2 tau_u (tau_u the un-normalised
total index of the group). Per design point the rows are f(A) and, for each
group, f(A) with the group's columns from B: N(G + 1) evaluations. Each group's
variance pools its own pair f(A), f(A_B^{(u)}), both distributed as f(x), so
that the error is normalised by a variance from the same rows.

References
----------
.. [1] The freezing error 2 tau_u follows from the ANOVA decomposition (common
   practice, no source).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .base import Moments

__all__ = ["FreezeError", "FreezeRep", "FreezeSums"]


@dataclass
class FreezeRep:
    """One randomization: ``mse`` and ``variance`` of shape (G, k)."""

    mse: np.ndarray
    variance: np.ndarray


class FreezeSums:
    """Per group: moments of the pair f(A), f(A_B^{(u)}) and the sum of squared changes."""

    def __init__(self, k: int, g: int) -> None:
        self.k, self.g = int(k), int(g)
        self.rows = 0
        self.moments = [Moments(k) for _ in range(g)]
        self.sq = np.zeros((g, k))

    def add(self, y: np.ndarray, context: Any = None) -> None:
        n = y.shape[0] // (self.g + 1)
        yA = y[:n]
        self.rows += n
        for u in range(self.g):
            yu = y[(u + 1) * n : (u + 2) * n]
            self.moments[u].add(np.concatenate([yA, yu]))
            diff = yu - yA
            self.sq[u] += np.einsum("nk,nk->k", diff, diff)

    def merge(self, other: FreezeSums) -> None:
        if (other.k, other.g) != (self.k, self.g):
            raise ValueError("cannot merge sums of different shapes.")
        self.rows += other.rows
        for mine, theirs in zip(self.moments, other.moments, strict=True):
            mine.merge(theirs)
        self.sq += other.sq

    def state(self) -> dict[str, np.ndarray]:
        return {
            "meta": np.array([self.k, self.g, self.rows]),
            "count": np.array([m.count for m in self.moments]),
            "mean": np.array([m.mean for m in self.moments]),
            "m2": np.array([m.m2 for m in self.moments]),
            "sq": self.sq,
        }

    @classmethod
    def from_state(cls, s: dict[str, np.ndarray]) -> FreezeSums:
        k, g, rows = (int(v) for v in s["meta"])
        out = cls(k, g)
        out.rows, out.sq = rows, np.array(s["sq"])
        for u, m in enumerate(out.moments):
            m.count, m.mean, m.m2 = int(s["count"][u]), np.array(s["mean"][u]), np.array(s["m2"][u])
        return out

    def finish(self, ddof: int) -> FreezeRep:
        if self.rows == 0:
            raise ValueError("no rows have been added.")
        return FreezeRep(self.sq / self.rows, np.array([m.variance(ddof) for m in self.moments]))


class FreezeError:
    """Mean squared change of the outputs when each group of inputs is redrawn.

    Parameters
    ----------
    d : int
        Number of inputs.
    groups : sequence of sequence of int
        The groups u (input indices) to freeze.
    """

    name = "freeze"
    label = "freezing error (pick-freeze over groups of inputs)"
    copies = 2

    def __init__(self, d: int, groups: Sequence[Sequence[int]]) -> None:
        self.d = int(d)
        self.groups = [list(map(int, g)) for g in groups]
        if not self.groups:
            raise ValueError("the freezing error needs at least one group.")

    def settings(self) -> dict[str, Any]:
        """What, besides the design, this estimator's numbers depend on (for checkpoints)."""
        return {"groups": self.groups}

    def rows_per_point(self) -> int:
        return len(self.groups) + 1

    def check(self, points: int) -> None:
        return None

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, None]:
        A, B = block.A.astype(dtype, copy=False), block.B.astype(dtype, copy=False)
        parts = [A]
        for u in self.groups:
            ab = A.copy()
            ab[:, u] = B[:, u]
            parts.append(ab)
        return np.concatenate(parts), None

    def sums(self, units: int, detail: bool, block: Any = None) -> FreezeSums:
        return FreezeSums(units, len(self.groups))

    def restore(self, state: dict[str, np.ndarray]) -> FreezeSums:
        return FreezeSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        return units * 4 * len(self.groups)
