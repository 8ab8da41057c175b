"""Gradient moments: derivative-based bounds on total indices and the matrix of active directions.

An engine plug-in whose rows are the design points A themselves (one row per
point); its evaluator returns, per unit, the value and the gradient in
standardised coordinates (:mod:`audit.inputs.scales`), laid out as
``[f_1..f_k, ∂_1 f_1..∂_d f_1, ..., ∂_1 f_k..∂_d f_k]`` (k (d + 1) columns).
Per randomization the sums keep

* the mean and variance of each unit (Chan's merge of :class:`Moments`);
* ``Σ (∂_j f)²`` per unit and input: the derivative-based bound on the
  unnormalised total index of input j is its mean ([1]_);
* ``Σ ∇f ∇fᵀ``, the matrix ``C = E[∇f ∇fᵀ]`` of active directions ([2]_): one
  d × d matrix per unit with ``detail``, one summed over the group's units
  without it (a hidden layer: the directions its units span together), none when
  the estimator is built with ``directions=False`` (screening many inputs);
* the largest squared gradient length seen, ``max ‖∇f‖²`` per unit (an
  empirical Lipschitz constant, merged by ``max``).

References
----------
.. [1] "Derivative based global sensitivity measures and their link with global
   sensitivity indices", Mathematics and Computers in Simulation, 2009.
.. [2] "Active subspace methods in theory and practice: applications to kriging
   surfaces", SIAM J. Sci. Comput., 2014.

Examples
--------
>>> import numpy as np
>>> from audit.estimators.gradient import GradientEstimator
>>> est = GradientEstimator(2)
>>> sums = est.sums(est.columns(1), True)
>>> x = np.array([[1.0, 2.0], [3.0, 4.0]])
>>> sums.add(np.column_stack([x @ [1.0, 2.0], np.ones(2), 2 * np.ones(2)]), None)
>>> sums.finish(0).square[0].tolist()
[1.0, 4.0]
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .base import Moments

__all__ = ["GradientEstimator", "GradientMoments", "GradientSums"]


@dataclass
class GradientMoments:
    """One randomization's gradient moments of k units in d inputs.

    Attributes
    ----------
    mean, variance : ndarray, shape (k,)
    square : ndarray, shape (k, d)
        ``E[(∂_j f)²]``: the bound on each input's unnormalised total index.
    outer : ndarray, shape (k, d, d), (1, d, d) or None
        ``E[∇f ∇fᵀ]`` per unit, summed over the units, or not kept.
    top : ndarray, shape (k,)
        ``max ‖∇f‖²`` over the points.
    """

    mean: np.ndarray
    variance: np.ndarray
    square: np.ndarray
    outer: np.ndarray | None
    top: np.ndarray


class GradientSums:
    """Mergeable gradient sums of ``k`` units in ``d`` inputs (see the module docstring).

    Parameters
    ----------
    k, d : int
    mode : {"unit", "group", "none"}
        Directions matrix per unit, one summed over the units, or none.
    """

    MODES = ("unit", "group", "none")

    def __init__(self, k: int, d: int, mode: str = "unit") -> None:
        if mode not in self.MODES:
            raise ValueError(f"unknown mode {mode!r}; valid modes: {', '.join(self.MODES)}.")
        self.k, self.d, self.mode = int(k), int(d), mode
        self.rows = 0
        self.moments = Moments(self.k)
        self.square = np.zeros((self.k, self.d))
        self.top = np.zeros(self.k)
        shape = {"unit": (self.k, self.d, self.d), "group": (1, self.d, self.d)}.get(mode)
        self.outer = None if shape is None else np.zeros(shape)

    def add(self, y: np.ndarray, context: Any = None) -> None:
        """Add rows ``y`` of shape (n, k (d + 1)): values, then each unit's gradient."""
        n = y.shape[0]
        values = y[:, : self.k]
        grad = y[:, self.k :].reshape(n, self.k, self.d)
        self.rows += n
        self.moments.add(values)
        self.square += np.einsum("nkj,nkj->kj", grad, grad)
        self.top = np.maximum(self.top, np.einsum("nkj,nkj->nk", grad, grad).max(axis=0, initial=0.0))
        if self.mode == "unit":
            self.outer += np.einsum("nki,nkj->kij", grad, grad)
        elif self.mode == "group":
            flat = grad.reshape(-1, self.d)
            self.outer[0] += flat.T @ flat

    def merge(self, other: GradientSums) -> None:
        """Add the sums of ``other`` (disjoint rows of the same randomization)."""
        if (other.k, other.d, other.mode) != (self.k, self.d, self.mode):
            raise ValueError("cannot merge sums of different shapes.")
        self.rows += other.rows
        self.moments.merge(other.moments)
        self.square += other.square
        self.top = np.maximum(self.top, other.top)
        if self.outer is not None:
            self.outer += other.outer

    def state(self) -> dict[str, np.ndarray]:
        s = {
            "meta": np.array([self.k, self.d, self.MODES.index(self.mode), self.rows, self.moments.count]),
            "mean": self.moments.mean,
            "m2": self.moments.m2,
            "square": self.square,
            "top": self.top,
        }
        if self.outer is not None:
            s["outer"] = self.outer
        return s

    @classmethod
    def from_state(cls, s: dict[str, np.ndarray]) -> GradientSums:
        k, d, mode, rows, count = (int(v) for v in s["meta"])
        out = cls(k, d, cls.MODES[mode])
        out.rows, out.moments.count = rows, count
        out.moments.mean, out.moments.m2 = np.array(s["mean"]), np.array(s["m2"])
        out.square, out.top = np.array(s["square"]), np.array(s["top"])
        if "outer" in s:
            out.outer = np.array(s["outer"])
        return out

    def finish(self, ddof: int) -> GradientMoments:
        """Means over the points of this randomization; ``ddof`` as in :meth:`Moments.variance`."""
        if self.rows == 0:
            raise ValueError("no rows have been added.")
        outer = None if self.outer is None else self.outer / self.rows
        m = self.moments
        return GradientMoments(m.mean.copy(), m.variance(ddof), self.square / self.rows, outer, self.top.copy())


class GradientEstimator:
    """Gradient moments at N points per randomization (one model row per point, plus its gradient's cost).

    Parameters
    ----------
    d : int
        Number of inputs.
    directions : bool
        Keep the matrices of active directions (d² floats per unit or layer); without
        them only the per-input bounds (screening thousands of inputs).
    """

    name = "gradient"
    label = "gradient moments (derivative-based bounds, active directions)"
    help = "E[(∂f/∂z_j)²] and E[∇f ∇fᵀ] from N gradient evaluations per randomization"
    copies = 1
    first_order = False
    replicates = 8

    def __init__(self, d: int, directions: bool = True) -> None:
        self.d = int(d)
        self.directions = bool(directions)

    def settings(self) -> dict[str, Any]:
        return {"directions": self.directions}

    def columns(self, units: int) -> int:
        """Evaluator columns of a group of ``units`` units: each value and its gradient."""
        return int(units) * (self.d + 1)

    def _units(self, columns: int) -> int:
        if columns % (self.d + 1):
            raise ValueError(f"{columns} columns do not hold values and gradients in {self.d} inputs.")
        return columns // (self.d + 1)

    def _mode(self, detail: bool) -> str:
        return "none" if not self.directions else ("unit" if detail else "group")

    def rows_per_point(self) -> int:
        return 1

    def check(self, points: int) -> None:
        return None

    def layout(self, block: Any, dtype: Any) -> tuple[np.ndarray, None]:
        """The points A themselves."""
        return block.A.astype(dtype, copy=False), None

    def sums(self, units: int, detail: bool, block: Any = None) -> GradientSums:
        """Empty sums for a group of ``units`` evaluator columns (``k (d + 1)``)."""
        return GradientSums(self._units(units), self.d, self._mode(detail))

    def restore(self, state: dict[str, np.ndarray]) -> GradientSums:
        return GradientSums.from_state(state)

    def state_size(self, units: int, detail: bool) -> int:
        k = self._units(units)
        mode = self._mode(detail)
        outer = {"unit": k * self.d * self.d, "group": self.d * self.d}.get(mode, 0)
        return k * (self.d + 3) + outer
