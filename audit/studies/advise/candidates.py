"""Pre-integration candidates: which inputs to integrate out, and the audit of each pre-integrated model.

For every output, the ``top`` inputs by total index (not negligible) are
candidates; the distinct ones (at most ``max_candidates``, rank by rank across
outputs) are each integrated out once: a pilot chooses the Gauss rule
(:func:`audit.nodes.choose_nodes`), then the pre-integrated model f̃ is audited
by the engine like any model, one job for all outputs. A candidate reports ν
of f̃ with its interval and the check Var f̃ = σ² − τ̄²_ℓ; candidates are
ranked by ν after, lowest first.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...estimators.intervals import difference_interval, t_interval
from ...inputs import InputSpec
from ...nodes import NodeCheck, choose_nodes
from ...quadrature import PreIntegratedModel
from ...results import Candidate, Estimate, OutputResult, VarianceIdentity
from ...seeds import CANDIDATE, PILOT, child_seed
from ..options import DesignOptions
from ..session import Session
from ..setup import OUTPUTS, prepare
from ..summarize import GroupStats, estimate, output_results
from .plan import AdvicePlan

__all__ = ["Integrated", "candidate", "choose_candidates", "integrate", "node_check", "rank_key"]


@dataclass
class Integrated:
    """The audit of f̃ for one input, all outputs."""

    index: int
    check: NodeCheck
    stats: GroupStats
    results: list[OutputResult]
    evaluations: int
    model: PreIntegratedModel


def choose_candidates(plan: AdvicePlan, audits: list[OutputResult], live: list[int]) -> tuple[dict, list, list]:
    """Per output the candidate inputs, the distinct inputs to integrate out, and notices."""
    d = plan.setup.design.d
    names = plan.setup.names
    tops: dict[int, list[int]] = {}
    for k in live:
        order = sorted(range(d), key=lambda j, k=k: -audits[k].total_index[j].value.estimate)
        keep = [j for j in order if not audits[k].total_index[j].value.ci_high < plan.freeze_threshold]
        tops[k] = keep[: plan.top] if d >= 2 else []
    union: list[int] = []
    for rank in range(plan.top):
        for k in live:
            if rank < len(tops[k]) and tops[k][rank] not in union:
                if len(union) == plan.max_candidates:
                    break
                union.append(tops[k][rank])
    notices = []
    dropped = {k: [j for j in tops[k] if j not in union] for k in live}
    if any(dropped.values()):
        skipped = sorted({names[j] for js in dropped.values() for j in js})
        notices.append(
            f"Only {plan.max_candidates} inputs were integrated out (max_candidates); "
            f"not tried: {', '.join(skipped[:8])}{' ...' if len(skipped) > 8 else ''}."
        )
        tops = {k: [j for j in tops[k] if j in union] for k in live}
    return tops, union, notices


def node_check(plan: AdvicePlan, index: int, scale: np.ndarray, session: Session) -> NodeCheck:
    """Choose the Gauss rule for integrating input ``index`` out, on the pilot points."""
    s = plan.setup
    check = choose_nodes(
        s.model,
        s.laws,
        index,
        nodes=plan.nodes,
        tolerance=plan.tolerance,
        cap=plan.node_cap,
        floor=plan.node_floor,
        pilot=plan.pilot,
        seed=child_seed(s.design.seed, PILOT, index),
        scale=scale,
    )
    if session.options.progress is not None:
        session.options.progress(check.evaluations, f"pre-integrating {s.names[index]}: node check")
    return check


def integrate(
    plan: AdvicePlan, index: int, scale: np.ndarray, session: Session, check: NodeCheck | None = None
) -> Integrated:
    """Audit the model with input ``index`` integrated out (one engine job), after its node check
    (:func:`node_check`, run here unless given)."""
    s = plan.setup
    seed = s.design.seed
    name = s.names[index]
    if check is None:
        check = node_check(plan, index, scale, session)
    pm = PreIntegratedModel(s.model, s.laws, index, check.nodes, feature_names=s.names)
    names = [n for j, n in enumerate(s.names) if j != index]
    laws = [law for j, law in enumerate(s.laws) if j != index]
    spec = InputSpec(names=names, laws=laws, outputs=s.spec.outputs, source=f"{name} integrated out")
    estimator, points, replicates = plan.candidate_design()
    options = DesignOptions(
        points=points,
        replicates=replicates,
        seed=child_seed(seed, CANDIDATE, index),
        sampler=s.design.sampler,
        estimator=estimator,
    )
    keep = s.keep if s.keep is not None else np.arange(len(s.output_names))
    sub = prepare(pm, spec, design=options, layers="none", outputs=keep)
    job = sub.job(f"pre-integrating {name}")
    job.cost = pm.cost
    sums = session.run(job)
    st = GroupStats.of(sums[OUTPUTS], sub.design.ddof, sub.eps())
    results = output_results(st, list(s.output_names), names)
    return Integrated(index, check, st, results, check.evaluations + job.evaluations, pm)


def candidate(plan: AdvicePlan, main: GroupStats, k: int, total: Estimate, it: Integrated) -> Candidate:
    """The candidate ``it`` for output ``k``: ν after, Var f̃ and the variance identity."""
    s = plan.setup
    out = it.results[k]
    predicted = estimate(t_interval(main.var[:, k] - main.total[:, it.index, k]))  # type: ignore[index]
    diff = estimate(
        difference_interval(
            out.variance.estimate, out.variance.std_error, predicted.estimate, predicted.std_error, s.design.replicates
        )
    )
    identity = VarianceIdentity(out.variance, predicted, diff, bool(diff.covers(0.0)))
    return Candidate(
        feature=s.names[it.index],
        total_index=total,
        mean_dimension_after=out.mean_dimension,
        variance_after=out.variance,
        variance_identity=identity,
        nodes=it.check.nodes,
        quadrature_error=float(it.check.error[k]),
        converged=bool(it.check.error[k] < plan.tolerance),
        evaluations=it.evaluations,
    )


def rank_key(c: Candidate) -> tuple[int, float]:
    """Best first: constant f̃ (exact after pre-integration), then lowest ν after."""
    if c.mean_dimension_after is None:
        return (0, 0.0)
    nu = c.mean_dimension_after.estimate
    return (0, nu) if math.isfinite(nu) else (1, 0.0)
