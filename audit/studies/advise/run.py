"""The advise workflow: which inputs to pre-integrate and which to freeze.

:func:`advise_model` (or :func:`~audit.studies.advise.plan.prepare_advice` then
:func:`execute_advice`) runs, for every output of a model, as engine jobs of
one :class:`~audit.studies.session.Session` (so the cluster, the checkpoint
and the non-finite check apply to every phase):

1. an ordinary audit (outputs only) for the variance σ², the total indices
   τ̄²_j and the mean dimension ν;
2. for the ``top`` inputs by total index, the audit of the pre-integrated
   function f̃ (:mod:`~audit.studies.advise.candidates`);
3. the measured RQMC gain of the best candidate (:mod:`~audit.studies.advise.gain`);
4. freezing (:mod:`~audit.studies.advise.freeze`).

Every phase uses its own seed, derived from the run's seed (:mod:`audit.seeds`),
so the confirmations are independent of the estimates that chose what to confirm.

References
----------
.. [1] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (ν = Σ_j τ̄²_j / σ²).
.. [2] The identity Var E[f | x_{−ℓ}] = σ² − τ̄²_ℓ and the freezing error
   2 τ̄²_u follow from the ANOVA decomposition (common practice, no source).
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from ...inputs import InputSpec, Law
from ...results import AdviceResult, Candidate, OutputAdvice, RqmcGain
from ..audit import function_model
from ..options import RunOptions, split_options
from ..session import Session
from ..setup import OUTPUTS, check_time, inputs_spec, probe_rate, resolve_model
from ..summarize import GroupStats, design_info, inputs_info, model_info, output_results
from .budget import PhaseLog, plan_lines
from .candidates import Integrated, candidate, choose_candidates, integrate, node_check, rank_key
from .freeze import freeze
from .gain import gain, prefix_variances
from .plan import AdvicePlan, prepare_advice

__all__ = ["ADVICE_SETTINGS", "advise_function", "advise_model", "execute_advice"]

#: Settings of :func:`prepare_advice` besides the design.
ADVICE_SETTINGS = (
    "top",
    "max_candidates",
    "nodes",
    "tolerance",
    "node_cap",
    "node_floor",
    "pilot",
    "freeze_threshold",
    "freeze_budget",
    "gain_points",
    "only",
    "max_evaluations",
)


#: Evaluations of the timed first block behind the plan's time estimate (about 0.1 s for most models).
PROBE_EVALUATIONS = 1 << 16


def _no_line(line: str) -> None:
    return None


def execute_advice(
    plan: AdvicePlan,
    run: RunOptions | None = None,
    *,
    log: Callable[[str], None] | None = None,
    phase_lines: Callable[[str], None] | None = None,
) -> AdviceResult:
    """Run a prepared advise study and build its result.

    Parameters
    ----------
    plan : AdvicePlan
        From :func:`~audit.studies.advise.plan.prepare_advice`.
    run : RunOptions, optional
        Progress, checkpoint, cluster, time budget (see :class:`~audit.studies.options.RunOptions`);
        the time budget is checked against the whole plan.
    log : callable, optional
        Given the plan's lines (:func:`~audit.studies.advise.budget.plan_lines`, with a time
        estimate timed on the model's first block) before any work.
    phase_lines : callable, optional
        Given one line as each phase starts and ends (:class:`~audit.studies.advise.budget.PhaseLog`).

    Returns
    -------
    AdviceResult
    """
    run = run or RunOptions()
    s = plan.setup
    first = s.job("audit")
    rate = None
    if log is not None:  # a first block of real size: tiny tasks understate the rate of wide models
        rate = probe_rate(first, s.block, PROBE_EVALUATIONS)
        for line in plan_lines(plan, rate):
            log(line)
    check_time(first, plan.evaluations, run.time_budget, s.block, rate=rate)
    relations = s.find_relations()
    t0 = time.perf_counter()
    phases = {"audit": s.evaluations, "node_check": 0, "preintegrated": 0, "gain": 0, "freeze_check": 0}
    notices = [*plan.notices, *relations]
    skipped, cuts = dict(plan.skipped), list(plan.cuts)
    steps = PhaseLog(phase_lines or _no_line, plan.evaluations)
    limit, reserve = plan.max_evaluations, plan.phases["freeze_check"]

    def fits(cost: int) -> bool:
        return limit is None or sum(phases.values()) + cost + reserve <= limit

    with Session(run) as session:
        steps.start("audit", s.evaluations)
        main = GroupStats.of(session.run(first, block=s.block)[OUTPUTS], s.design.ddof, s.eps())
        steps.end("audit", s.evaluations)
        audits = output_results(main, list(s.output_names), s.names, s.redundant)
        live = [k for k, o in enumerate(audits) if not o.inert and o.total_index]

        tops: dict[int, list[int]] = {k: [] for k in live}
        union: list[int] = []
        if plan.candidates:
            tops, union, more = choose_candidates(plan, audits, live)
            notices += more
        scale = np.sqrt(np.maximum(main.var.mean(axis=0), 0.0))
        integrated: dict[int, Integrated] = {}
        over: list[str] = []
        planned = plan.pilot * 3 * plan.nodes + plan.preintegrated_cost(plan.nodes) if plan.candidates else 0
        steps.revise(-planned * (plan.candidates - len(union)))  # fewer inputs worth integrating out
        for j in union:
            steps.start(f"pre-integrating {s.names[j]}", planned)
            check = node_check(plan, j, scale, session)
            phases["node_check"] += check.evaluations
            cost = plan.preintegrated_cost(check.nodes)
            if not fits(cost):
                over.append(f"{s.names[j]} ({check.nodes} nodes: {cost:,} evaluations)")
                steps.end(f"pre-integrating {s.names[j]} (node check only)", check.evaluations)
                continue
            it = integrate(plan, j, scale, session, check)
            integrated[j] = it
            phases["preintegrated"] += it.evaluations - it.check.evaluations
            steps.end(f"pre-integrating {s.names[j]}", it.evaluations)
            if not it.check.converged:
                notices.append(
                    f"Integrating {s.names[j]} out: the {it.check.nodes // 2}- and "
                    f"{it.check.nodes}-node rules still differ by {it.check.max_error:.2g} of the "
                    f"output sd (tolerance {plan.tolerance:g}); the {it.check.nodes}-node rule was "
                    "used. The model is probably not smooth in that input."
                )
        if over:
            cuts.append(
                "not integrated out, their node check asking for more nodes than planned and the audit "
                f"no longer fitting the budget: {', '.join(over)}"
            )
        candidates: dict[int, list[Candidate]] = {}
        for k in live:
            cs = [
                candidate(plan, main, k, audits[k].total_index[j].value, integrated[j])
                for j in tops[k]
                if j in integrated
            ]
            candidates[k] = sorted(cs, key=rank_key)

        gains: dict[int, RqmcGain] = {}
        share = plan.phases["gain"]
        if plan.does("rqmc gain") and any(candidates.get(k) for k in live):
            n_max, reps = max(plan.gain_points), s.design.replicates
            features = list(dict.fromkeys(candidates[k][0].feature for k in live if candidates.get(k)))
            cost = n_max * reps * (1 + sum(integrated[s.names.index(f)].model.cost for f in features))
            if fits(cost):
                steps.start("RQMC gain", cost, share=share)
                before = prefix_variances(plan, s.model, s.laws, 1, "RQMC gain of the model", session)
                phases["gain"] += n_max * reps
                for feature in features:
                    j = s.names.index(feature)
                    pm = integrated[j].model
                    laws = [law for i, law in enumerate(s.laws) if i != j]
                    label = f"RQMC gain with {feature} integrated out"
                    after = prefix_variances(plan, pm, laws, pm.cost, label, session)
                    phases["gain"] += n_max * reps * pm.cost
                    for k in live:
                        if candidates.get(k) and candidates[k][0].feature == feature:
                            gains[k] = gain(plan, before, after, k, feature, pm.cost)
                steps.end("RQMC gain", phases["gain"])
            else:
                skipped["rqmc gain"] = f"left out: its {cost:,} evaluations do not fit the evaluation budget"
                cuts.append("RQMC gain left out")
                steps.revise(-share)
        else:
            steps.revise(-share)

        items: dict = {}
        groups: dict = {}
        if plan.does("freezing"):
            steps.start("freeze check", reserve)
            items, groups, n_freeze = freeze(plan, audits, main, live, session)
            phases["freeze_check"] += n_freeze
            steps.end("freeze check", n_freeze)
    notices += session.notices
    outputs = [
        OutputAdvice(
            audit=o,
            preintegrate=candidates.get(k, []),
            freeze=items.get(k, []),
            freeze_group=groups.get(k),
            rqmc_gain=gains.get(k),
        )
        for k, o in enumerate(audits)
    ]
    design = design_info(s, time.perf_counter() - t0)
    design["seeds"] = (
        "each phase (pilot, pre-integrated audits, gain, freeze check) has its own seed derived from this one"
    )
    design["evaluations"] = int(sum(phases.values()))
    design["evaluations_by_phase"] = phases
    record = {**plan.record(), "cuts": cuts}
    return AdviceResult(
        model_info(s), inputs_info(s), design, outputs, plan.settings(), notices, skipped=skipped, plan=record
    )


def advise_model(model: Any, inputs: InputSpec | str | Sequence[Law] | None = None, **options: Any) -> AdviceResult:
    """Advise which inputs of a model to pre-integrate and which to freeze.

    Parameters
    ----------
    model : Model, str or Path
        An opened model or a path / reference to open.
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
        Input laws (default: every input N(0, 1)).
    **options
        Design options (``points``, ``replicates``, ``seed``, ``sampler``, ``estimator``),
        run options (``progress``, ``checkpoint``, ``checkpoint_seconds``, ``cluster``,
        ``memory_limit``, ``block``) and the settings of
        :func:`~audit.studies.advise.plan.prepare_advice` (``top``, ``nodes``,
        ``tolerance``, ``node_cap``, ``node_floor``, ``pilot``, ``max_candidates``,
        ``freeze_threshold``, ``freeze_budget``, ``gain_points``, ``outputs``, ``only``:
        ``"freezing"`` or ``"pre-integration"`` alone, ``max_evaluations``: a budget the plan is cut to).

    Returns
    -------
    AdviceResult
    """
    design, run = split_options(options, allowed=(*ADVICE_SETTINGS, "outputs"))
    spec = inputs_spec(inputs)
    plan = prepare_advice(
        resolve_model(model, spec), spec, design=design, block=run.block, memory_limit=run.memory_limit, **options
    )
    return execute_advice(plan, run)


def advise_function(
    func: Callable[[np.ndarray], np.ndarray],
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    dim: int | None = None,
    **options: Any,
) -> AdviceResult:
    """Advise for a Python function of d independent inputs (see :func:`advise_model`).

    Parameters
    ----------
    func : callable
        Maps an (n, d) float64 array to (n,) or (n, k).
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
    dim : int, optional
        Number of inputs when ``inputs`` does not fix it.
    **options
        As for :func:`advise_model`.

    Returns
    -------
    AdviceResult
    """
    model, spec = function_model(func, inputs, dim)
    return advise_model(model, spec, **options)
