"""Estimators: streaming, mergeable sums from which indices and the mean dimension follow.

``ESTIMATORS`` is the registry of the estimators a user can choose (each one
module: :mod:`~audit.estimators.jansen`, :mod:`~audit.estimators.split` (registered as
``fast``: 2N evaluations, RQMC gain kept), :mod:`~audit.estimators.stairs` (winding
stairs), :mod:`~audit.estimators.separate` (separate pairs) and
:mod:`~audit.estimators.superset` (pairs' superset importance));
``REFERENCE_ESTIMATORS`` holds the ones kept for comparison only
(:mod:`~audit.estimators.fast`, the hashed one-coordinate estimator); the
internal :mod:`~audit.estimators.totals` holds the sums the total-index-only
estimators share. The workflows also use two internal ones, the freezing error
(:mod:`~audit.estimators.freeze`) and prefix means for the RQMC gain
(:mod:`~audit.estimators.prefix`). :mod:`~audit.estimators.intervals` builds
every confidence interval. The protocol is in :mod:`~audit.estimators.base`.
"""

from __future__ import annotations

from collections.abc import Sequence

from .base import Estimator, Moments, RepEstimates, Sums
from .fast import Fast, fast_assignment, fast_counts
from .freeze import FreezeError
from .inert import inert_rule, is_inert, machine_eps, unreliable
from .intervals import LEVEL, Interval, t_interval
from .jansen import Jansen
from .prefix import PrefixMeans
from .separate import SeparatePairs
from .split import Split, split_counts
from .stairs import WindingStairs
from .superset import Superset, SupersetRep, dimension_moments

__all__ = [
    "ESTIMATORS",
    "LEVEL",
    "REFERENCE_ESTIMATORS",
    "Estimator",
    "Fast",
    "FreezeError",
    "Interval",
    "Jansen",
    "Moments",
    "PrefixMeans",
    "RepEstimates",
    "SeparatePairs",
    "Split",
    "Sums",
    "Superset",
    "SupersetRep",
    "WindingStairs",
    "dimension_moments",
    "fast_assignment",
    "fast_counts",
    "inert_rule",
    "is_inert",
    "machine_eps",
    "make_estimator",
    "split_counts",
    "t_interval",
    "unreliable",
]

#: Estimators a user can choose, by name (each class has ``label``, ``help`` and ``build``).
ESTIMATORS: dict[str, type] = {
    "jansen": Jansen,
    "fast": Split,
    "stairs": WindingStairs,
    "separate": SeparatePairs,
    "superset": Superset,
}

#: Estimators kept for comparison only (the benchmarks' efficiency table), not offered to users:
#: ``hashed``, the one-coordinate estimator of version 0.1, is dominated by ``fast`` on every case
#: measured (more work at equal evaluations, no RQMC gain, intervals that under-cover on heavy tails).
REFERENCE_ESTIMATORS: dict[str, type] = {"hashed": Fast}


def make_estimator(
    name: str, *, d: int, points: int | None = None, groups: Sequence[Sequence[int]] | None = None
) -> Estimator:
    """The estimator ``name`` for d inputs (and N points, and groups of inputs where it supports them).

    Raises
    ------
    ValueError
        For an unknown name (listing the valid ones).

    Examples
    --------
    >>> from audit.estimators import make_estimator
    >>> make_estimator("jansen", d=3).rows_per_point()
    5
    """
    known = {**ESTIMATORS, **REFERENCE_ESTIMATORS}
    if name not in known:
        raise ValueError(f"unknown estimator {name!r}; valid choices: {', '.join(ESTIMATORS)}.")
    return known[name].build(d=d, points=points if points is not None else 0, groups=groups)
