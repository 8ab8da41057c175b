"""Values to freeze inputs at, and the change that freezing makes, measured.

:func:`median` is the law's median. :func:`best_values` tries
:data:`CANDIDATES` quantiles of each input's law on scrambled Sobol' points
of all inputs and keeps the one with the smallest mean squared change
E[(f(x) − f(x_{−j}, c))²] / σ² (averaged over the outputs that vary), one
input after the other with the earlier ones fixed. :func:`measured_change`
measures that change for the chosen values on R independent randomizations,
with its interval. For a value drawn from the law the change is 2 τ̄²_u on
average, so the best of many candidates is at most that on the search's
points.

References
----------
.. [1] E_c E[(f(x) − f(x_{−u}, c))²] = 2 τ̄²_u over c drawn from the law of
   x_u follows from the ANOVA decomposition (common practice, no source).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ...design import Design, map_to_laws
from ...design.points import ScrambledSobol
from ...estimators.intervals import t_interval
from ...inputs import Law
from ...models.base import Model
from ...results import Estimate
from ..summarize import estimate

__all__ = ["CANDIDATES", "SEARCH_POINTS", "best_values", "measured_change", "median"]

#: Quantiles of the law tried for a value that minimises the freezing change.
CANDIDATES = 32
#: Points of the search.
SEARCH_POINTS = 256
#: Rows per model call.
_CHUNK = 1 << 15


def median(law: Law) -> float:
    """The law's median."""
    return float(law.ppf(np.array([0.5]))[0])


def _outputs(model: Model, x: np.ndarray) -> np.ndarray:
    parts = [np.asarray(model.evaluate(x[s : s + _CHUNK]).outputs, dtype=np.float64) for s in range(0, len(x), _CHUNK)]
    return np.concatenate(parts) if parts else np.zeros((0, 0))


def _change(y: np.ndarray, y0: np.ndarray, var: np.ndarray) -> np.ndarray:
    """Mean squared change over the rows, divided by the variance and averaged over varying outputs."""
    live = var > 0
    mse = ((y - y0) ** 2).mean(axis=-2)
    if not live.any():
        return mse.mean(axis=-1) * 0.0
    return (mse[..., live] / var[live]).mean(axis=-1)


def best_values(
    model: Model,
    laws: Sequence[Law],
    indices: Sequence[int],
    seed: int,
    *,
    points: int = SEARCH_POINTS,
    candidates: int = CANDIDATES,
    fixed: dict[int, float] | None = None,
) -> dict[int, tuple[float, float]]:
    """For each input in ``indices``: the candidate value with the smallest freezing change, and that change.

    Parameters
    ----------
    model : Model
    laws : sequence of Law
        All d input laws.
    indices : sequence of int
        Inputs to freeze, searched in this order (each with the earlier ones at their values).
    seed : int
        Seed of the search's scrambled Sobol' points.
    points, candidates : int
        Points of the search and quantiles tried per input.
    fixed : dict of int to float, optional
        Other frozen inputs and their values, fixed throughout the search.

    Returns
    -------
    dict of int to (float, float)
        Input position -> (value, normalised mean squared change with it, the earlier and the ``fixed``
        inputs frozen).
    """
    d = len(laws)
    x0 = map_to_laws(ScrambledSobol(d, [seed]).uniforms(0, 0, points), laws)
    y0 = _outputs(model, x0)
    var = y0.var(axis=0)
    x = x0.copy()
    for j, value in (fixed or {}).items():
        x[:, j] = value
    chosen: dict[int, tuple[float, float]] = {}
    for j in indices:
        values = laws[j].ppf((np.arange(candidates) + 0.5) / candidates)
        trial = np.repeat(x[None], candidates, axis=0)
        trial[:, :, j] = values[:, None]
        y = _outputs(model, trial.reshape(-1, d)).reshape(candidates, points, -1)
        errors = _change(y, y0[None], var)
        k = int(np.argmin(errors))
        chosen[j] = (float(values[k]), float(errors[k]))
        x[:, j] = values[k]
    return chosen


def measured_change(
    model: Model, laws: Sequence[Law], values: dict[int, float], design: Design
) -> tuple[list[Estimate], list[Estimate]]:
    """E[(f(x) − f(x_{−u}, c))²] per output: un-normalised and divided by σ², with intervals over randomizations.

    Parameters
    ----------
    model : Model
    laws : sequence of Law
    values : dict of int to float
        Frozen input -> value.
    design : Design
        Its points (one block of d columns per randomization) give x.

    Returns
    -------
    (list of Estimate, list of Estimate)
        Per output: the mean squared change, and it divided by the variance.
    """
    cols = list(values)
    mse, share = [], []
    for rep in range(design.replicates):
        sq, total, ys = None, 0, []
        for start in range(0, design.points, _CHUNK):
            n = min(_CHUNK, design.points - start)
            x = design.block(rep, start, n).A
            fixed = x.copy()
            fixed[:, cols] = [values[j] for j in cols]
            y, yc = _outputs(model, x), _outputs(model, fixed)
            part = ((yc - y) ** 2).sum(axis=0)
            sq = part if sq is None else sq + part
            total += n
            ys.append(y)
        var = np.concatenate(ys).var(axis=0, ddof=design.ddof)
        mse.append(sq / total)
        with np.errstate(invalid="ignore", divide="ignore"):
            share.append(sq / total / var)
    mse_a, share_a = np.array(mse), np.array(share)
    return (
        [estimate(t_interval(mse_a[:, k])) for k in range(mse_a.shape[1])],
        [estimate(t_interval(share_a[:, k])) for k in range(share_a.shape[1])],
    )
