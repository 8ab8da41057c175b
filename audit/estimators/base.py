"""What every estimator implements, and the sums they share.

An *estimator* turns blocks of design points into model rows and those rows'
outputs into mergeable float64 sums, one :class:`Sums` per group of units and
randomization. Sums of disjoint blocks of the same randomization merge exactly
(up to rounding), so any split of the work -- blocks, processes, machines,
checkpoints -- gives the same answer.

The protocol (:class:`Estimator`):

``name``, ``label``
    Registry name (recorded in reports and checkpoints) and what reports call it.
``replicates``
    Randomizations R used when the user sets none (8 for most; more where a
    t-interval over 8 would under-cover).
``copies``
    Blocks of d uniform columns each design point needs (2: A and B).
``rows_per_point()``
    Model rows evaluated per design point (the cost: N · rows_per_point · R).
``check(points)``
    Refuse a design the estimator cannot use (a :class:`~audit.errors.UserError`).
``layout(block, dtype)``
    The model rows of a block, and a context for ``add``.
``sums(units, detail, block)`` / ``restore(state)``
    Empty sums for a group of units (per-input sums with ``detail``), or sums
    rebuilt from :meth:`Sums.state`.
``state_size(units, detail)``
    Floats one :class:`Sums` holds (for the memory estimate).
``settings()``
    What besides the design its numbers depend on (groups, prefixes): part of a
    checkpoint's fingerprint.

And every :class:`Sums` has ``rows`` (design points added), ``add(y, context)``,
``merge(other)``, ``state()`` and ``finish(ddof)``.

References
----------
.. [1] "Updating formulae and a pairwise algorithm for computing sample
   variances", COMPSTAT, 1982 (the pairwise mean/M2 merge of :class:`Moments`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np

from ..buffers import take

__all__ = ["Estimator", "Moments", "RepEstimates", "Sums"]


class Moments:
    """Count, mean and sum of squared deviations of k columns, mergeable (Chan's update).

    Parameters
    ----------
    k : int
        Number of columns.
    """

    def __init__(self, k: int) -> None:
        self.count = 0
        self.mean = np.zeros(k)
        self.m2 = np.zeros(k)

    def add(self, y: np.ndarray) -> None:
        """Add the rows of ``y`` (n, k)."""
        y = np.asarray(y, dtype=np.float64)
        mean_b = y.mean(axis=0)
        dev = y - mean_b
        np.multiply(dev, dev, out=dev)
        self.merge_values(y.shape[0], mean_b, dev.sum(axis=0))

    def add_pair(self, a: np.ndarray, b: np.ndarray) -> None:
        """Add the rows of ``a`` and then ``b`` (any float type): the numbers of
        ``add(np.concatenate([a, b]))`` in float64, with one float64 array instead of five
        (fresh arrays of a block's size cost more in page faults than their arithmetic), lent
        by the engine between tasks (:func:`audit.buffers.take`)."""
        y = take((len(a) + len(b), *a.shape[1:]), np.float64)
        y[: len(a)], y[len(a) :] = a, b
        mean_b = y.mean(axis=0)
        np.subtract(y, mean_b, out=y)
        np.multiply(y, y, out=y)
        self.merge_values(len(y), mean_b, y.sum(axis=0))

    def merge_values(self, n_b: int, mean_b: np.ndarray, m2_b: np.ndarray) -> None:
        """Merge the moments of ``n_b`` other values."""
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

    def merge(self, other: Moments) -> None:
        self.merge_values(other.count, other.mean, other.m2)

    def variance(self, ddof: int) -> np.ndarray:
        """``m2 / (count - ddof)``."""
        return self.m2 / max(self.count - ddof, 1)


@dataclass
class RepEstimates:
    """Un-normalised estimates of one randomization for k units.

    ``total`` and ``first`` have shape (G, k) for G inputs or groups (``None``
    without detail; ``first`` is ``None`` for estimators without first-order
    indices); ``total_sum`` is ``sum_j total`` of shape (k,).
    """

    mean: np.ndarray
    variance: np.ndarray
    total: np.ndarray | None
    first: np.ndarray | None
    total_sum: np.ndarray


class Sums(Protocol):
    """Mergeable sums of one group of units over some rows of one randomization."""

    rows: int

    def add(self, y: np.ndarray, context: Any) -> None: ...

    def merge(self, other: Any) -> None: ...

    def state(self) -> dict[str, np.ndarray]: ...

    def finish(self, ddof: int) -> Any: ...


class Estimator(Protocol):
    """See the module docstring."""

    name: str
    label: str
    replicates: int
    copies: int

    def rows_per_point(self) -> int: ...

    def check(self, points: int) -> None: ...

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, Any]: ...

    def sums(self, units: int, detail: bool, block: Any) -> Sums: ...

    def restore(self, state: dict[str, np.ndarray]) -> Sums: ...

    def state_size(self, units: int, detail: bool) -> int: ...

    def settings(self) -> dict[str, Any]: ...
