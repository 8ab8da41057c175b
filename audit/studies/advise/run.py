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
from ..setup import OUTPUTS, check_time, inputs_spec, resolve_model
from ..summarize import GroupStats, design_info, inputs_info, model_info, output_results
from .candidates import Integrated, candidate, choose_candidates, integrate, rank_key
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
)


def execute_advice(plan: AdvicePlan, run: RunOptions | None = None) -> AdviceResult:
    """Run a prepared advise study and build its result.

    Parameters
    ----------
    plan : AdvicePlan
        From :func:`~audit.studies.advise.plan.prepare_advice`.
    run : RunOptions, optional
        Progress, checkpoint, cluster (see :class:`~audit.studies.options.RunOptions`).

    Returns
    -------
    AdviceResult
    """
    run = run or RunOptions()
    s = plan.setup
    check_time(s.job("audit"), plan.evaluations, run.time_budget, s.block)
    relations = s.find_relations()
    t0 = time.perf_counter()
    phases = {"audit": s.evaluations, "node_check": 0, "preintegrated": 0, "gain": 0, "freeze_check": 0}
    notices = [*plan.notices, *relations]
    with Session(run) as session:
        main = GroupStats.of(session.run(s.job("audit"), block=s.block)[OUTPUTS], s.design.ddof, s.eps())
        audits = output_results(main, list(s.output_names), s.names, s.redundant)
        live = [k for k, o in enumerate(audits) if not o.inert and o.total_index]

        tops, union, more = choose_candidates(plan, audits, live)
        notices += more
        scale = np.sqrt(np.maximum(main.var.mean(axis=0), 0.0))
        integrated: dict[int, Integrated] = {}
        for j in union:
            it = integrate(plan, j, scale, session)
            integrated[j] = it
            phases["node_check"] += it.check.evaluations
            phases["preintegrated"] += it.evaluations - it.check.evaluations
            if not it.check.converged:
                notices.append(
                    f"Integrating {s.names[j]} out: the {it.check.nodes // 2}- and "
                    f"{it.check.nodes}-node rules still differ by {it.check.max_error:.2g} of the "
                    f"output sd (tolerance {plan.tolerance:g}); the {it.check.nodes}-node rule was "
                    "used. The model is probably not smooth in that input."
                )
        candidates: dict[int, list[Candidate]] = {}
        for k in live:
            cs = [candidate(plan, main, k, audits[k].total_index[j].value, integrated[j]) for j in tops[k]]
            candidates[k] = sorted(cs, key=rank_key)

        gains: dict[int, RqmcGain] = {}
        if plan.gain_points and any(candidates.get(k) for k in live):
            n_max, reps = max(plan.gain_points), s.design.replicates
            before = prefix_variances(plan, s.model, s.laws, 1, "RQMC gain of the model", session)
            phases["gain"] += n_max * reps
            for feature in dict.fromkeys(candidates[k][0].feature for k in live if candidates.get(k)):
                j = s.names.index(feature)
                pm = integrated[j].model
                laws = [law for i, law in enumerate(s.laws) if i != j]
                label = f"RQMC gain with {feature} integrated out"
                after = prefix_variances(plan, pm, laws, pm.cost, label, session)
                phases["gain"] += n_max * reps * pm.cost
                for k in live:
                    if candidates.get(k) and candidates[k][0].feature == feature:
                        gains[k] = gain(plan, before, after, k, feature, pm.cost)

        items, groups, n_freeze = freeze(plan, audits, main, live, session)
        phases["freeze_check"] += n_freeze
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
    return AdviceResult(model_info(s), inputs_info(s), design, outputs, plan.settings(), notices)


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
        ``freeze_threshold``, ``freeze_budget``, ``gain_points``, ``outputs``).

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
