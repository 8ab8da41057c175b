"""Freezing: which negligible inputs can be fixed together, the bound on the error, and its measurement.

Inputs whose normalised total index is below ``freeze_threshold`` even at the
upper end of its interval are grouped smallest first while the upper end of
the interval of the bound 2 Σ_{j∈u} τ̄²_j / σ² on the mean squared error of
freezing the group at a random draw stays at or below ``freeze_budget``; then
one engine job with fresh points (the freezing-error estimator) measures
E[(f(A) − f(A_B^{(u)}))²] = 2 τ̄²_u for every distinct group.

References
----------
.. [1] The freezing error 2 τ̄²_u ≤ 2 Σ_{j∈u} τ̄²_j follows from the ANOVA
   decomposition (common practice, no source).
"""

from __future__ import annotations

import numpy as np

from ... import engine
from ...design import Design
from ...estimators import FreezeError
from ...estimators.intervals import t_interval
from ...results import Estimate, FreezeGroup, FreezeItem, OutputResult
from ...seeds import FREEZE, child_seed
from ..evaluators import ModelEvaluator
from ..session import Session
from ..setup import OUTPUTS
from ..summarize import GroupStats, estimate
from .plan import AdvicePlan

__all__ = ["freeze", "greedy_group"]


def greedy_group(
    items: list[int], total: np.ndarray, var: np.ndarray, budget: float
) -> tuple[list[int], Estimate | None, Estimate | None]:
    """Smallest-first group of ``items`` whose normalised bound's upper end stays ≤ budget."""
    group: list[int] = []
    bound = bound_n = None
    for j in items:
        trial = [*group, j]
        b = 2 * total[:, trial].sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            bn = estimate(t_interval(b / var))
        if not (bn.ci_high <= budget):
            break
        group, bound, bound_n = trial, estimate(t_interval(b)), bn
    return group, bound, bound_n


def freeze(
    plan: AdvicePlan, audits: list[OutputResult], main: GroupStats, live: list[int], session: Session
) -> tuple[dict[int, list[FreezeItem]], dict[int, FreezeGroup], int]:
    """Freezable inputs and the measured group per output, and the evaluations of the check."""
    s = plan.setup
    d = s.design.d
    items: dict[int, list[FreezeItem]] = {}
    chosen: dict[int, tuple[list[int], Estimate, Estimate]] = {}
    for k in live:
        below = [j for j in range(d) if audits[k].total_index[j].value.ci_high < plan.freeze_threshold]
        below.sort(key=lambda j, k=k: audits[k].total_index[j].value.estimate)
        group, bound, bound_n = greedy_group(below, main.total[:, :, k], main.var[:, k], plan.freeze_budget)  # type: ignore[index]
        items[k] = [FreezeItem(s.names[j], audits[k].total_index[j].value, j in group) for j in below]
        if group and bound is not None and bound_n is not None:
            chosen[k] = (group, bound, bound_n)
    groups = list(dict.fromkeys(tuple(sorted(g)) for g, _, _ in chosen.values()))
    measured: dict[int, FreezeGroup] = {}
    if not groups:
        return items, measured, 0
    design = Design(s.laws, s.design.points, s.design.replicates, child_seed(s.design.seed, FREEZE), s.design.sampler)
    job = engine.Job(
        "freeze check",
        ModelEvaluator(s.model, [], s.keep),
        design,
        FreezeError(d, groups),
        [engine.Group(OUTPUTS, len(s.output_names), False)],
        s.names,
        s.dtype,
        identity=s.identity,
    )
    sums = session.run(job)
    reps = [x.finish(design.ddof) for x in sums[OUTPUTS]]
    for k, (group, bound, bound_n) in chosen.items():
        g = groups.index(tuple(sorted(group)))
        mse = np.array([r.mse[g, k] for r in reps])
        var = np.array([r.variance[g, k] for r in reps])
        with np.errstate(invalid="ignore", divide="ignore"):
            mse_n = mse / var
        measured[k] = FreezeGroup(
            [s.names[j] for j in group],
            bound,
            bound_n,
            estimate(t_interval(mse)),
            estimate(t_interval(mse_n)),
            plan.freeze_budget,
            job.evaluations,
        )
    return items, measured, job.evaluations
