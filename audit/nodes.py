"""How many Gauss nodes a pre-integration needs: compare rules of m and 2m nodes on a pilot.

:func:`choose_nodes` evaluates the pre-integrated function with m and 2m
nodes at a few scrambled Sobol' points of the other inputs and doubles m until
the two agree to a tolerance relative to the output's standard deviation (or
halves it while a smaller rule still agrees).

References
----------
.. [1] Comparing successive Gauss rules as an error estimate is common
   practice, no source.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .design import map_to_laws
from .design.points import ScrambledSobol
from .inputs.laws import Law
from .models.base import Model
from .quadrature import MAX_NODES, PreIntegrated, check_nodes

__all__ = ["NodeCheck", "choose_nodes", "pilot_points"]


@dataclass(frozen=True)
class NodeCheck:
    """Outcome of :func:`choose_nodes`.

    Attributes
    ----------
    nodes : int
        The node count to use.
    error : ndarray, shape (k,)
        Per output, max over the pilot points of |f̃_m − f̃_2m| / sd(f) for the
        last pair of rules compared (0 for outputs that do not vary).
    converged : bool
        True when ``max(error) < tolerance``.
    evaluations : int
        Evaluations of the wrapped function the check made.
    sd : ndarray, shape (k,)
        Standard deviation of each output used as the scale.
    """

    nodes: int
    error: np.ndarray
    converged: bool
    evaluations: int
    sd: np.ndarray

    @property
    def max_error(self) -> float:
        return float(np.max(self.error)) if self.error.size else 0.0


def _outputs_of(func: Callable[[np.ndarray], Any] | Model, X: np.ndarray) -> np.ndarray:
    if hasattr(func, "evaluate") and hasattr(func, "inputs"):
        y = func.evaluate(X).outputs  # type: ignore[union-attr]
    else:
        y = func(X)  # type: ignore[operator]
        if isinstance(y, Mapping):
            y = np.concatenate([np.asarray(v, dtype=np.float64).reshape(len(X), -1) for v in y.values()], axis=1)
    return np.asarray(y, dtype=np.float64).reshape(len(X), -1)


def pilot_points(laws: Sequence[Law], index: int, pilot: int, seed: int) -> np.ndarray:
    """``pilot`` scrambled Sobol' points of the inputs other than ``index``, through their laws."""
    others = [law for j, law in enumerate(laws) if j != index]
    u = ScrambledSobol(len(others), [seed]).uniforms(0, 0, pilot)
    return map_to_laws(u, others)


def choose_nodes(
    func: Callable[[np.ndarray], Any] | Model,
    laws: Sequence[Law],
    index: int,
    *,
    nodes: int = 32,
    tolerance: float = 1e-3,
    cap: int = MAX_NODES,
    floor: int = 4,
    pilot: int = 64,
    seed: int = 0,
    scale: np.ndarray | None = None,
) -> NodeCheck:
    """Pick the Gauss node count for integrating input ``index`` out.

    On ``pilot`` points of the other inputs, the rules with m and 2m nodes
    are compared, starting at m = ``nodes``. While the largest difference,
    relative to the output's standard deviation, is ``tolerance`` or more, m
    doubles until 2m reaches ``cap``. When the starting pair already agrees,
    m halves (not below ``floor``) while the halved rule still agrees with
    the one above it, so that smooth models are not charged for nodes they
    do not need.

    Parameters
    ----------
    func : callable or Model
        As for :class:`PreIntegrated` (dict-returning evaluators: all arrays are checked).
    laws : sequence of Law
    index : int
    nodes : int
        Starting m.
    tolerance : float
        Largest accepted relative difference between the m and 2m rules.
    cap : int
        Largest rule evaluated (2..:data:`MAX_NODES`).
    floor : int
        Smallest m the halving may reach (at most ``nodes``).
    pilot : int
        Pilot points (rounded up to a power of two).
    seed : int
        Seed of the pilot's scrambled Sobol' points.
    scale : ndarray, optional
        Standard deviation of each output (default: estimated on the pilot, from
        the starting 2m rule's evaluations, which sample x_ℓ by quadrature).

    Returns
    -------
    NodeCheck
        ``nodes`` is the m whose difference to 2m passed; when none passed,
        the finest rule evaluated (``cap``) with ``converged=False``.
    """
    nodes = check_nodes(nodes)
    cap = check_nodes(cap)
    if cap < 2:
        raise ValueError(f"cap must be at least 2 nodes (two rules are compared), got {cap}.")
    if not tolerance > 0:
        raise ValueError(f"tolerance must be > 0, got {tolerance}.")
    if pilot < 2:
        raise ValueError(f"pilot must be at least 2 points, got {pilot}.")
    pilot = 1 << (int(pilot) - 1).bit_length()
    x = pilot_points(laws, index, pilot, seed)
    evaluations = 0

    def rule(m: int) -> tuple[np.ndarray, np.ndarray]:
        """f̃_m at the pilot points, (pilot, k), and the sd of f from this rule's evaluations."""
        nonlocal evaluations
        p = PreIntegrated(lambda X: _outputs_of(func, X), laws, index, m)
        y = _outputs_of(func, p.expand(x)).reshape(pilot, p.cost, -1)
        evaluations += pilot * p.cost
        mean = np.tensordot(p.weights, y, axes=([0], [1]))
        second = np.tensordot(p.weights, y**2, axes=([0], [1])).mean(axis=0)
        return mean, np.sqrt(np.maximum(second - mean.mean(axis=0) ** 2, 0.0))

    def gap(a: np.ndarray, b: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(sd > 0, np.max(np.abs(a - b), axis=0) / np.where(sd > 0, sd, 1.0), 0.0)

    m = min(nodes, cap // 2)
    coarse, _ = rule(m)
    fine, sd_pilot = rule(2 * m)
    sd = sd_pilot if scale is None else np.asarray(scale, dtype=np.float64)
    err = gap(fine, coarse)
    if np.max(err) < tolerance:
        while m // 2 >= max(1, min(floor, m)):
            half, _ = rule(m // 2)
            err_half = gap(half, coarse)
            if not np.max(err_half) < tolerance:
                break
            m, coarse, err = m // 2, half, err_half
        return NodeCheck(m, err, True, evaluations, sd)
    while 4 * m <= cap:
        m, coarse = 2 * m, fine
        fine, _ = rule(2 * m)
        err = gap(fine, coarse)
        if np.max(err) < tolerance:
            return NodeCheck(m, err, True, evaluations, sd)
    return NodeCheck(2 * m, err, False, evaluations, sd)
