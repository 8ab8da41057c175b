"""From per-randomization gradient moments to bounds and active directions, with intervals.

Every figure is formed per randomization and then averaged with a Student-t
interval (:mod:`audit.estimators.intervals`), as for the indices: the bound
``E[(∂f/∂z_j)²] / σ²`` of each input, their sum (a bound on ν), and the sorted
eigenvalues of ``C = E[∇f ∇fᵀ]`` divided by σ². The directions themselves come
from the pooled matrix (the mean over randomizations); how far each
randomization's leading directions turn from them is reported as an angle.

Number of directions r: the fewest leading eigenvalues that hold all but
:data:`RESIDUAL_SHARE` of ``tr C``; the largest gap ``λ_k / λ_(k+1)`` is sought among
k ≤ r, and the angle by which the k directions before it turn between randomizations
says how well they are determined. An output counts as close to a ridge function of r
directions when ``r ≤ max(3, d / 4)`` (:func:`few_directions`; a rule of thumb, no source);
eigenvalues below the rounding floor ``max((100 δ)², 1000 eps) λ_1`` (δ the gradients'
relative accuracy, eps that of float64, for the eigensolver) count as zero.

References
----------
.. [1] "Active subspace methods in theory and practice: applications to kriging
   surfaces", SIAM J. Sci. Comput., 2014 (C, its eigenvalues, and for Gaussian
   inputs the bound Σ_{k>r} λ_k on the mean squared error of the best function of
   the r leading directions).
.. [2] "Mean dimension of ridge functions", SIAM J. Numer. Anal., 2020.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from ..estimators import LEVEL, is_inert
from ..estimators.gradient import GradientMoments
from ..estimators.intervals import Interval, t_interval
from ..results import Estimate
from ..results.slopes import Direction, DirectionSummary, InputBound, OutputSlopes
from .summarize import estimate, estimates

__all__ = ["RESIDUAL_SHARE", "SHOWN", "directions", "few_directions", "output_slopes", "positive_interval"]

#: Share of tr C the directions left out may hold.
RESIDUAL_SHARE = 0.01
#: Eigenvalues shown (and kept in JSON) per output or layer.
SHOWN = 12
#: Loadings shown per direction, and directions detailed.
LOADINGS, DETAILED = 5, 3


#: Relative accuracy of a symmetric eigensolver in float64, with room (LAPACK's backward error is a small
#: multiple of eps times the matrix norm: common practice, no source).
EIGEN_FLOOR = 1e3 * float(np.finfo(np.float64).eps)


def positive_interval(values: np.ndarray, axis: int = 0) -> Interval:
    """The t interval of values that cannot be negative (moments, eigenvalues), its lower end clipped at 0."""
    i = t_interval(values, LEVEL, axis=axis)
    return Interval(i.estimate, np.maximum(i.low, 0.0), i.high, i.std_error)


def few_directions(r: int, d: int) -> bool:
    """True when r directions of d inputs count as few: ``r < d`` and ``r ≤ max(3, d / 4)``."""
    return r < d and r <= max(3, d / 4)


def _floor(lam1: float, delta: float) -> float:
    return max((100.0 * delta) ** 2, EIGEN_FLOOR) * lam1


def directions(
    outer: np.ndarray, scale: np.ndarray, names: Sequence[str], delta: float, normal: bool
) -> DirectionSummary:
    """The eigen-structure of per-randomization matrices ``outer`` (R, d, d).

    Parameters
    ----------
    outer : ndarray, shape (R, d, d)
    scale : ndarray, shape (R,)
        What eigenvalues are divided by, per randomization (σ², or tr C for shares).
    names : sequence of str
        Input names, for the loadings.
    delta : float
        Relative accuracy of the gradients (for the rounding floor).
    normal : bool
        Every input is normal: the ridge-approximation bound applies.
    """
    reps = np.linalg.eigvalsh(outer)[:, ::-1]  # (R, d), descending
    reps = np.maximum(reps, 0.0)
    pooled = outer.mean(axis=0)
    lam, vec = np.linalg.eigh(pooled)
    lam, vec = np.maximum(lam[::-1], 0.0), vec[:, ::-1]
    trace = float(lam.sum())
    d = len(lam)
    if trace <= 0:
        nan = Estimate(math.nan, math.nan, math.nan, math.nan)
        return DirectionSummary([nan], [0.0], 0, 0, math.nan, 0, 0.0, 0.0)
    floor = _floor(float(lam[0]), delta)
    share = lam / trace
    tail = np.concatenate([np.cumsum(share[::-1])[::-1][1:], [0.0]])  # share beyond k+1 leading ones
    r = int(np.argmax(tail <= RESIDUAL_SHARE)) + 1
    nonzero = int(np.sum(lam > floor))
    ratios = lam[:-1] / np.maximum(lam[1:], floor) if d > 1 else np.array([math.inf])
    gap = float(ratios[r - 1]) if r < d else math.inf
    # the largest gap among the directions that matter (a gap in the tail of near-zero eigenvalues says nothing)
    largest = int(np.argmax(ratios[: min(r, d - 1)])) + 1 if d > 1 else 1
    with np.errstate(invalid="ignore", divide="ignore"):
        normed = reps / scale[:, None]
    shown = min(SHOWN, d)
    eig = estimates(positive_interval(normed[:, :shown]))
    spread = 0.0
    for m in outer:
        _, v = np.linalg.eigh(m)
        sv = np.linalg.svd(vec[:, :largest].T @ v[:, ::-1][:, :largest], compute_uv=False)
        spread = max(spread, math.degrees(math.acos(min(1.0, float(sv.min())))))
    leading = []
    for k in range(min(r, DETAILED)):
        v = vec[:, k] * np.sign(vec[np.argmax(np.abs(vec[:, k])), k])
        top = np.argsort(-np.abs(v))[:LOADINGS]
        leading.append(Direction(float(share[k]), [(names[j], float(v[j])) for j in top], [float(w) for w in v]))
    ridge = None
    if normal:
        ridge = estimate(positive_interval(normed[:, r:].sum(axis=1)))
    return DirectionSummary(
        eig,
        [float(s) for s in share[:shown]],
        r,
        nonzero,
        gap,
        largest,
        float(tail[r - 1]),
        spread,
        leading,
        ridge,
        few_directions(r, d),
    )


def output_slopes(
    reps: Sequence[GradientMoments],
    names: Sequence[str],
    output_names: Sequence[str],
    eps: np.ndarray,
    delta: float,
    normal: bool,
) -> list[OutputSlopes]:
    """Bounds and directions of every output from its per-randomization moments.

    Parameters
    ----------
    reps : sequence of GradientMoments
        One per randomization (``outer`` per unit, or ``None``).
    names, output_names : sequence of str
    eps : ndarray
        Machine epsilon of each output (for the inert rule).
    delta : float
        Relative accuracy of the gradients.
    normal : bool
        Every input is normal.
    """
    var = np.array([r.variance for r in reps])  # (R, k)
    mean = np.array([r.mean for r in reps])
    square = np.array([r.square for r in reps])  # (R, k, d)
    top = np.max([r.top for r in reps], axis=0)  # (k,)
    inert = is_inert(mean.mean(axis=0), var.mean(axis=0), eps)
    results = []
    for u, name in enumerate(output_names):
        variance = estimate(positive_interval(var[:, u]))
        ms = estimates(positive_interval(square[:, u]))
        if inert[u]:
            nan = Estimate(math.nan, math.nan, math.nan, math.nan)
            bounds = [InputBound(f, nan, m) for f, m in zip(names, ms, strict=True)]
            results.append(OutputSlopes(name, variance, bounds, None, math.sqrt(top[u]), math.nan, inert=True))
            continue
        normed = square[:, u] / var[:, u, None]
        bound = estimates(positive_interval(normed))
        bounds = [InputBound(f, b, m) for f, b, m in zip(names, bound, ms, strict=True)]
        total = estimate(positive_interval(normed.sum(axis=1)))
        lip = math.sqrt(float(top[u]))
        lip_bound = float(top[u]) / float(var[:, u].mean())
        dirs = None
        if reps[0].outer is not None and reps[0].outer.shape[0] == len(output_names):
            outer = np.array([r.outer[u] for r in reps])
            dirs = directions(outer, var[:, u], names, delta, normal)
        results.append(OutputSlopes(name, variance, bounds, total, lip, lip_bound, None, dirs))
    return results
