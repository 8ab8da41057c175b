"""The measured RQMC gain of pre-integration, for estimating an output's mean.

The variance, over R independent randomizations, of the mean of the first n
scrambled Sobol' points, for f and for the best f̃, at each n of
``gain_points`` (one engine job each, with the prefix-means estimator);
log–log slopes; ratios at equal n and, extrapolated along the fitted lines,
at equal cost in model evaluations.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from ... import engine
from ...design import Design
from ...estimators import PrefixMeans
from ...results import GainRow, RqmcGain
from ...seeds import GAIN, child_seed, randomization_streams
from ..evaluators import ModelEvaluator
from ..session import Session
from ..setup import OUTPUTS
from .plan import AdvicePlan

__all__ = ["equal_cost_ratio", "fit", "gain", "prefix_variances"]


def prefix_variances(plan: AdvicePlan, model, laws, cost: int, label: str, session: Session) -> np.ndarray:
    """Variance over randomizations of the means of the first n points, shape (len(gain_points), k)."""
    s = plan.setup
    seed = child_seed(s.design.seed, GAIN)
    n_max, reps = max(plan.gain_points), s.design.replicates
    design = Design(laws, n_max, reps, seed, "sobol", copies=1, seeds=randomization_streams(seed, reps))
    k = len(s.output_names)
    job = engine.Job(
        label,
        ModelEvaluator(model, [], s.keep),
        design,
        PrefixMeans(plan.gain_points),
        [engine.Group(OUTPUTS, k, False)],
        [n for n in s.names],
        cost=cost,
        identity={**s.identity, "integrated_cost": cost},
    )
    sums = session.run(job, block=max(s.block, 256))
    means = np.array([x.finish(1).means for x in sums[OUTPUTS]])  # (R, P, k)
    return means.var(axis=0, ddof=1)


def fit(points: Sequence[int], variances: np.ndarray) -> tuple[float, float]:
    """Least-squares line of log variance on log n: (slope, intercept); NaN with < 2 points."""
    ok = np.isfinite(variances) & (variances > 0)
    if ok.sum() < 2:
        return math.nan, math.nan
    slope, intercept = np.polyfit(np.log(np.asarray(points, float)[ok]), np.log(variances[ok]), 1)
    return float(slope), float(intercept)


def equal_cost_ratio(points: Sequence[int], before: np.ndarray, after: np.ndarray, cost: int) -> float:
    """Fitted variance of f's estimate at n·cost points over f̃'s at n, for the largest n."""
    sb, ib = fit(points, before)
    sa, ia = fit(points, after)
    if not all(math.isfinite(v) for v in (sb, ib, sa, ia)):
        return math.nan
    n = math.log(max(points))
    return math.exp(ib + sb * (n + math.log(cost)) - (ia + sa * n))


def gain(plan: AdvicePlan, var_before: np.ndarray, var_after: np.ndarray, k: int, feature: str, cost: int) -> RqmcGain:
    """The :class:`RqmcGain` of output ``k`` from the prefix variances of f and f̃."""
    pts = plan.gain_points
    reps = plan.setup.design.replicates
    n_max = max(pts)
    rows = [GainRow(int(n), float(var_before[i, k]), float(var_after[i, k])) for i, n in enumerate(pts)]
    sb = fit(pts, var_before[:, k])[0]
    sa = fit(pts, var_after[:, k])[0]
    ecr = equal_cost_ratio(pts, var_before[:, k], var_after[:, k], cost)
    return RqmcGain(feature, cost, reps, rows, sb, sa, ecr, n_max * reps, n_max * reps * cost)
