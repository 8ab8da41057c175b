"""The advise workflow: which inputs to pre-integrate and which to freeze.

:func:`advise_model` (or :func:`prepare_advice` then :func:`execute_advice`)
runs, for every output of a model:

1. an ordinary audit (outputs only) for the variance σ², the total indices
   τ̄²_j and the mean dimension ν;
2. for the ``top`` inputs by total index, the audit of the pre-integrated
   function f̃ (the input integrated out with a Gauss rule whose node count
   is checked on a pilot sample, :func:`audit.quadrature.choose_nodes`): ν of
   f̃ with its interval, Var f̃ and the identity Var f̃ = σ² − τ̄²_ℓ;
   candidates are ranked by ν after, lowest first. One audit of f̃ serves
   every output;
3. the measured RQMC gain of the best candidate: the variance, over R
   independent randomizations, of the estimate of the output's mean from the
   first n scrambled Sobol' points, for f and for f̃, at each n of
   ``gain_points``; log–log slopes; ratios at equal n and (extrapolated) at
   equal cost;
4. freezing: inputs whose normalised total index is below
   ``freeze_threshold`` even at the upper end of its interval, grouped
   smallest first while the upper end of the interval of the bound
   2 Σ_{j∈u} τ̄²_j / σ² on the mean squared error of freezing the group at a
   random draw stays at or below ``freeze_budget`` (default 0.01: an RMS
   change of at most a tenth of the output's sd); then a separate pick-freeze
   pass with fresh points measures E[(f(A) − f(A_B^{(u)}))²] = 2 τ̄²_u.

Every phase uses its own seed, derived from the run's seed, so the
confirmations are independent of the estimates that chose what to confirm.

References
----------
.. [1] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006 (ν = Σ_j τ̄²_j / σ²).
.. [2] The identity Var E[f | x_{−ℓ}] = σ² − τ̄²_ℓ and the freezing error
   2 τ̄²_u follow from the ANOVA decomposition (common practice, no source).
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import stats as sps
from scipy.stats import qmc

from . import engine
from .design import Design
from .errors import UserError
from .estimators import Accumulator, t_interval
from .inputs import InputSpec, Law
from .models.base import Model
from .quadrature import MAX_NODES, NodeCheck, PreIntegratedModel, choose_nodes
from .results import Estimate, OutputResult
from .results.advice import (
    AdviceResult,
    Candidate,
    FreezeGroup,
    FreezeItem,
    GainRow,
    OutputAdvice,
    RqmcGain,
    VarianceIdentity,
)
from .studies import (
    LEVEL,
    OUTPUTS,
    GroupStats,
    Setup,
    _inputs_spec,
    design_info,
    function_model,
    inputs_info,
    model_info,
    output_results,
    prepare,
)

__all__ = [
    "DEFAULT_GAIN_POINTS",
    "FREEZE_BUDGET",
    "FREEZE_THRESHOLD",
    "AdvicePlan",
    "advise_function",
    "advise_model",
    "execute_advice",
    "prepare_advice",
]

#: Point counts n of the RQMC gain measurement (prefixes of one sequence per randomization).
DEFAULT_GAIN_POINTS = tuple(2**p for p in range(8, 15))
#: Normalised total index below which (at the interval's upper end) an input may be frozen.
FREEZE_THRESHOLD = 1e-3
#: Largest bound 2 Σ τ̄²_j / σ² (upper interval end) on the mean squared error of a frozen group.
FREEZE_BUDGET = 0.01

# tags of the seeds derived for each phase
_PILOT, _CANDIDATE, _GAIN, _FREEZE = 1, 2, 3, 4

Progress = Callable[[int, str], None]


def _child_seed(seed: int, *tags: int) -> int:
    return int(np.random.SeedSequence([seed, *tags]).generate_state(1, np.uint64)[0])


@dataclass
class AdvicePlan:
    """A prepared advise run: the audit's :class:`~audit.studies.Setup` and the advice settings.

    ``evaluations`` is an estimate made before any run (it assumes ``nodes``
    Gauss nodes, ``min(top, d)`` candidates, one best candidate and one freeze
    group; the pilot check may halve or double the nodes).
    """

    setup: Setup
    top: int
    max_candidates: int
    nodes: int
    tolerance: float
    node_cap: int
    node_floor: int
    pilot: int
    freeze_threshold: float
    freeze_budget: float
    gain_points: tuple[int, ...]
    notices: list[str] = field(default_factory=list)

    @property
    def evaluations(self) -> int:
        s = self.setup
        d, n, r = s.design.d, s.design.points, s.design.replicates
        if d < 2:
            return s.evaluations
        per = d + 1 if s.estimator == "jansen" else 2
        cands = min(self.top, d, self.max_candidates)
        pilot = self.pilot * 3 * self.nodes
        gain = max(self.gain_points, default=0) * r * (1 + self.nodes)
        return s.evaluations + cands * (pilot + n * r * per * self.nodes) + gain + n * r * 2

    def settings(self) -> dict[str, Any]:
        return {
            "top": self.top,
            "max_candidates": self.max_candidates,
            "nodes": self.nodes,
            "tolerance": self.tolerance,
            "node_cap": self.node_cap,
            "node_floor": self.node_floor,
            "pilot": self.pilot,
            "freeze_threshold": self.freeze_threshold,
            "freeze_budget": self.freeze_budget,
            "gain_points": list(self.gain_points),
        }


def _whole(value: Any, name: str, low: int, high: int | None = None) -> int:
    ok = not isinstance(value, bool) and isinstance(value, (int, np.integer))
    if not ok or value < low or (high is not None and value > high):
        rng = f"{low}..{high}" if high is not None else f"≥ {low}"
        raise UserError(f"The advise setting `{name}` must be a whole number {rng}, got {value!r}.")
    return int(value)


def _fraction(value: Any, name: str, high: float = 1.0) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = math.nan
    if not 0 < v <= high:
        raise UserError(f"The advise setting `{name}` must be a number in (0, {high:g}], got {value!r}.")
    return v


def _gain_points(points: Sequence[int]) -> tuple[int, ...]:
    pts = tuple(int(p) for p in points)
    if not pts:
        return ()
    bad = [p for p in pts if p < 2 or p & (p - 1)]
    if bad or list(pts) != sorted(set(pts)):
        raise UserError(
            f"The RQMC gain point counts must be increasing powers of two, at least 2, e.g. "
            f"256,1024,4096; got {','.join(map(str, pts))}."
        )
    if len(pts) < 2:
        raise UserError("The RQMC gain needs at least two point counts to fit a slope, e.g. 256,4096.")
    return pts


def prepare_advice(
    model: Model,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    points: int = 1024,
    replicates: int = 8,
    seed: int | np.random.Generator | None = None,
    sampler: str = "sobol",
    estimator: str = "jansen",
    top: int = 3,
    max_candidates: int = 8,
    nodes: int = 32,
    tolerance: float = 1e-3,
    node_cap: int = MAX_NODES,
    node_floor: int = 4,
    pilot: int = 64,
    freeze_threshold: float = FREEZE_THRESHOLD,
    freeze_budget: float = FREEZE_BUDGET,
    gain_points: Sequence[int] = DEFAULT_GAIN_POINTS,
    block: int | None = None,
) -> AdvicePlan:
    """Resolve and check everything an advise run needs, before any evaluation.

    Parameters
    ----------
    model : Model
    inputs : InputSpec, {"normal", "uniform"}, sequence of Law, optional
    points, replicates, seed, sampler, estimator, block
        Design of the audit, also used for every pre-integrated audit and the
        freeze confirmation (as for :func:`audit.studies.prepare`).
    top : int
        Inputs (largest total index first) tried for pre-integration, per output.
    max_candidates : int
        At most this many distinct inputs are integrated out in all (each costs
        an audit of the pre-integrated model, which serves every output); with
        many outputs they are taken rank by rank across the outputs.
    nodes : int
        Starting Gauss node count (1..256).
    tolerance : float
        Pilot check: largest accepted |f̃_m − f̃_2m| relative to the output's sd.
    node_cap : int
        Largest Gauss rule the pilot check may use (2..256).
    node_floor : int
        Smallest node count the pilot check may settle on when the starting
        rule is more accurate than needed (see :func:`audit.quadrature.choose_nodes`).
    pilot : int
        Pilot points of the node check.
    freeze_threshold : float
        An input may be frozen when the upper end of its normalised total
        index's interval is below this (default 0.001).
    freeze_budget : float
        Upper end allowed for the bound 2 Σ τ̄²_j / σ² of a frozen group (default 0.01).
    gain_points : sequence of int
        Increasing powers of two n for the RQMC gain (empty: skip it).

    Returns
    -------
    AdvicePlan

    Raises
    ------
    UserError
        For any setting that cannot work, saying which and why.
    """
    plan_top = _whole(top, "top", 0)
    cands = _whole(max_candidates, "max_candidates", 0)
    plan_nodes = _whole(nodes, "nodes", 1, MAX_NODES)
    cap = _whole(node_cap, "node_cap", 2, MAX_NODES)
    floor = _whole(node_floor, "node_floor", 1, MAX_NODES)
    if plan_nodes > cap:
        raise UserError(f"The starting node count ({plan_nodes}) is above the node cap ({cap}); lower --nodes.")
    plan_pilot = _whole(pilot, "pilot", 2)
    tol = _fraction(tolerance, "tolerance")
    eps = _fraction(freeze_threshold, "freeze_threshold")
    budget = _fraction(freeze_budget, "freeze_budget", 2.0)
    gains = _gain_points(gain_points)
    setup = prepare(
        model,
        inputs,
        points=points,
        replicates=replicates,
        seed=seed,
        sampler=sampler,
        estimator=estimator,
        layers="none",
        block=block,
    )
    notices = list(setup.notices)
    if setup.design.d < 2:
        notices.append("The model has a single input: there is nothing to pre-integrate against.")
    return AdvicePlan(setup, plan_top, cands, plan_nodes, tol, cap, floor, plan_pilot, eps, budget, gains, notices)


# ----------------------------------------------------------------------------- helpers


def _scaled(progress: Progress | None, factor: int, label: str) -> Progress | None:
    if progress is None:
        return None
    return lambda n, phase: progress(n * factor, f"{label}, {phase}")


def _difference(a: Estimate, b: Estimate, replicates: int) -> Estimate:
    """a − b for estimates from independent randomizations (Student-t, R − 1 df, conservative)."""
    se = math.hypot(a.std_error, b.std_error)
    half = float(sps.t.ppf(0.5 + LEVEL / 2, max(replicates - 1, 1))) * se
    d = a.estimate - b.estimate
    return Estimate(d, d - half, d + half, se)


def _estimate(values: np.ndarray) -> Estimate:
    est, lo, hi, se = t_interval(values, LEVEL, axis=0)
    return Estimate(float(est), float(lo), float(hi), float(se))


def _run(setup: Setup, progress: Progress | None) -> GroupStats:
    accs = engine.run(
        setup.evaluator(),
        setup.design,
        setup.groups,
        setup.estimator,
        block=setup.block,
        progress=progress,
        feature_names=setup.names,
    )
    return GroupStats.of(accs[OUTPUTS], setup.design.sampler)


def _map(laws: Sequence[Law], u: np.ndarray) -> np.ndarray:
    x = np.empty_like(u)
    for j, law in enumerate(laws):
        x[:, j] = law.ppf(u[:, j])
    return x


def _prefix_means(
    evaluate: Callable[[np.ndarray], np.ndarray],
    laws: Sequence[Law],
    gain_points: Sequence[int],
    replicates: int,
    seed: int,
    block: int,
) -> np.ndarray:
    """Means of the first n of R scrambled Sobol' sequences: shape (R, len(gain_points), k)."""
    n_max = max(gain_points)
    out = []
    for child in np.random.SeedSequence(seed).spawn(replicates):
        engine_ = qmc.Sobol(len(laws), scramble=True, rng=np.random.default_rng(child))
        total, start, means = None, 0, []
        wanted = list(gain_points)
        while start < n_max:
            n = min(block, n_max - start)
            y = np.asarray(evaluate(_map(laws, engine_.random(n))), dtype=np.float64).reshape(n, -1)
            csum = np.cumsum(y, axis=0) + (0.0 if total is None else total)
            while wanted and wanted[0] <= start + n:
                means.append(csum[wanted[0] - start - 1] / wanted[0])
                wanted.pop(0)
            total, start = csum[-1], start + n
        out.append(np.array(means))
    return np.array(out)


def _fit(points: Sequence[int], variances: np.ndarray) -> tuple[float, float]:
    """Least-squares line of log variance on log n: (slope, intercept); NaN with < 2 points."""
    ok = np.isfinite(variances) & (variances > 0)
    if ok.sum() < 2:
        return math.nan, math.nan
    slope, intercept = np.polyfit(np.log(np.asarray(points, float)[ok]), np.log(variances[ok]), 1)
    return float(slope), float(intercept)


def _equal_cost_ratio(points: Sequence[int], before: np.ndarray, after: np.ndarray, cost: int) -> float:
    """Fitted variance of f's estimate at n·cost points over f̃'s at n, for the largest n."""
    sb, ib = _fit(points, before)
    sa, ia = _fit(points, after)
    if not all(math.isfinite(v) for v in (sb, ib, sa, ia)):
        return math.nan
    n = math.log(max(points))
    return math.exp(ib + sb * (n + math.log(cost)) - (ia + sa * n))


def _greedy_group(
    items: list[int], total: np.ndarray, var: np.ndarray, budget: float
) -> tuple[list[int], Estimate | None, Estimate | None]:
    """Smallest-first group of ``items`` whose normalised bound's upper end stays ≤ budget."""
    group: list[int] = []
    bound = bound_n = None
    for j in items:
        trial = [*group, j]
        b = 2 * total[:, trial].sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            bn = _estimate(b / var)
        if not (bn.ci_high <= budget):
            break
        group, bound, bound_n = trial, _estimate(b), bn
    return group, bound, bound_n


def _freeze_pass(
    model: Model,
    design: Design,
    groups: list[tuple[int, ...]],
    block: int,
    progress: Progress | None,
) -> tuple[list[list[Accumulator]], int]:
    """One pick-freeze pass: f(A) and f(A_B^{(u)}) for every group u.

    Returns one accumulator per group and randomization, and the evaluations made.

    Each :class:`~audit.estimators.Accumulator` is used with d = 1 and the
    group as its single "input": its total index is ½ E[(f(A) − f(A_B^{(u)}))²]
    and its variance pools f(A) and f(A_B^{(u)}), both distributed as f(x).
    """
    accs: list[list[Accumulator]] = [[] for _ in groups]
    evaluations = 0
    for rep in range(design.replicates):
        per_group: list[Accumulator | None] = [None] * len(groups)
        for start in range(0, design.points, block):
            b = design.block(rep, start, min(block, design.points - start))
            parts = [b.A]
            for u in groups:
                ab = b.A.copy()
                ab[:, list(u)] = b.B[:, list(u)]
                parts.append(ab)
            X = np.concatenate(parts)
            y = np.asarray(model.evaluate(X).outputs, dtype=np.float64).reshape(len(X), -1)
            evaluations += len(X)
            n = b.n
            yA = y[:n]
            for g in range(len(groups)):
                yu = y[(g + 1) * n : (g + 2) * n]
                acc = Accumulator(y.shape[1], 1, "jansen", True)
                acc.add_jansen(yA, yu, yu[None])
                if per_group[g] is None:
                    per_group[g] = acc
                else:
                    per_group[g].merge(acc)  # type: ignore[union-attr]
            if progress is not None:
                progress(len(X), f"freeze check, randomization {rep + 1}/{design.replicates}")
        for g in range(len(groups)):
            accs[g].append(per_group[g])  # type: ignore[arg-type]
    return accs, evaluations


# ----------------------------------------------------------------------------- workflow


@dataclass
class _Integrated:
    """The audit of f̃ for one input, all outputs."""

    index: int
    check: NodeCheck
    stats: GroupStats
    results: list[OutputResult]
    evaluations: int
    model: PreIntegratedModel


def _integrate(plan: AdvicePlan, index: int, scale: np.ndarray, progress: Progress | None) -> _Integrated:
    s = plan.setup
    seed = s.design.seed
    check = choose_nodes(
        s.model,
        s.laws,
        index,
        nodes=plan.nodes,
        tolerance=plan.tolerance,
        cap=plan.node_cap,
        floor=plan.node_floor,
        pilot=plan.pilot,
        seed=_child_seed(seed, _PILOT, index),
        scale=scale,
    )
    name = s.names[index]
    if progress is not None:
        progress(check.evaluations, f"pre-integrating {name}: node check")
    pm = PreIntegratedModel(s.model, s.laws, index, check.nodes, feature_names=s.names)
    names = [n for j, n in enumerate(s.names) if j != index]
    laws = [law for j, law in enumerate(s.laws) if j != index]
    spec = InputSpec(names=names, laws=laws, outputs=list(s.output_names), source=f"{name} integrated out")
    sub = prepare(
        pm,
        spec,
        points=s.design.points,
        replicates=s.design.replicates,
        seed=_child_seed(seed, _CANDIDATE, index),
        sampler=s.design.sampler,
        estimator=s.estimator,
        layers="none",
    )
    st = _run(sub, _scaled(progress, pm.cost, f"pre-integrating {name}"))
    results = output_results(st, list(s.output_names), names)
    return _Integrated(index, check, st, results, check.evaluations + sub.evaluations * pm.cost, pm)


def _candidate(plan: AdvicePlan, main: GroupStats, k: int, total: Estimate, it: _Integrated) -> Candidate:
    s = plan.setup
    out = it.results[k]
    predicted = _estimate(main.var[:, k] - main.total[:, it.index, k])  # type: ignore[index]
    diff = _difference(out.variance, predicted, s.design.replicates)
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


def _rank_key(c: Candidate) -> tuple[int, float]:
    if c.mean_dimension_after is None:
        return (0, 0.0)  # f̃ constant: the integral is exact after pre-integration
    nu = c.mean_dimension_after.estimate
    return (0, nu) if math.isfinite(nu) else (1, 0.0)


def execute_advice(plan: AdvicePlan, *, progress: Progress | None = None) -> AdviceResult:
    """Run a prepared advise study and build its result.

    Parameters
    ----------
    plan : AdvicePlan
        From :func:`prepare_advice`.
    progress : callable, optional
        Called as ``progress(model_evaluations_done, phase)`` as work finishes.

    Returns
    -------
    AdviceResult
    """
    t0 = time.perf_counter()
    s = plan.setup
    d, R = s.design.d, s.design.replicates
    seed = s.design.seed
    phases = {
        "audit": s.evaluations,
        "node_check": 0,
        "preintegrated": 0,
        "gain": 0,
        "freeze_check": 0,
    }
    main = _run(s, _scaled(progress, 1, "audit"))
    audits = output_results(main, list(s.output_names), s.names)
    notices = list(plan.notices)
    live = [k for k, o in enumerate(audits) if not o.inert and o.total_index]

    # -- candidates: top inputs by total index, per output; each f̃ audited once for all outputs
    tops: dict[int, list[int]] = {}
    for k in live:
        order = sorted(range(d), key=lambda j, k=k: -audits[k].total_index[j].value.estimate)
        keep = [j for j in order if not audits[k].total_index[j].value.ci_high < plan.freeze_threshold]
        tops[k] = keep[: plan.top] if d >= 2 else []
    # distinct inputs to integrate out, rank by rank across outputs, at most max_candidates
    union: list[int] = []
    for rank in range(plan.top):
        for k in live:
            if rank < len(tops[k]) and tops[k][rank] not in union:
                if len(union) == plan.max_candidates:
                    break
                union.append(tops[k][rank])
    dropped = {k: [j for j in tops[k] if j not in union] for k in live}
    if any(dropped.values()):
        skipped = sorted({s.names[j] for js in dropped.values() for j in js})
        notices.append(
            f"Only {plan.max_candidates} inputs were integrated out (max_candidates); "
            f"not tried: {', '.join(skipped[:8])}{' ...' if len(skipped) > 8 else ''}."
        )
        tops = {k: [j for j in tops[k] if j in union] for k in live}
    scale = np.sqrt(np.maximum(main.var.mean(axis=0), 0.0))
    integrated: dict[int, _Integrated] = {}
    for j in union:
        it = _integrate(plan, j, scale, progress)
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
        cs = [_candidate(plan, main, k, audits[k].total_index[j].value, integrated[j]) for j in tops[k]]
        candidates[k] = sorted(cs, key=_rank_key)

    # -- RQMC gain: f once, each distinct best candidate once
    gains: dict[int, RqmcGain] = {}
    if plan.gain_points and any(candidates.get(k) for k in live):
        gseed = _child_seed(seed, _GAIN)
        n_max, blk = max(plan.gain_points), max(s.block, 256)

        def evaluate_f(x: np.ndarray) -> np.ndarray:
            if progress is not None:
                progress(len(x), "RQMC gain of the model")
            return s.model.evaluate(x).outputs

        before = _prefix_means(evaluate_f, s.laws, plan.gain_points, R, gseed, blk)
        var_before = before.var(axis=0, ddof=1)  # (points, k)
        phases["gain"] += n_max * R
        best = list(dict.fromkeys(candidates[k][0].feature for k in live if candidates.get(k)))
        for feature in best:
            j = s.names.index(feature)
            pm = integrated[j].model
            laws = [law for i, law in enumerate(s.laws) if i != j]

            def evaluate_g(x: np.ndarray, pm: PreIntegratedModel = pm, feature: str = feature) -> np.ndarray:
                if progress is not None:
                    progress(len(x) * pm.cost, f"RQMC gain with {feature} integrated out")
                return pm.evaluate(x).outputs

            after = _prefix_means(evaluate_g, laws, plan.gain_points, R, gseed, blk)
            var_after = after.var(axis=0, ddof=1)
            phases["gain"] += n_max * R * pm.cost
            for k in live:
                if not candidates.get(k) or candidates[k][0].feature != feature:
                    continue
                rows = [
                    GainRow(int(n), float(var_before[i, k]), float(var_after[i, k]))
                    for i, n in enumerate(plan.gain_points)
                ]
                sb = _fit(plan.gain_points, var_before[:, k])[0]
                sa = _fit(plan.gain_points, var_after[:, k])[0]
                ecr = _equal_cost_ratio(plan.gain_points, var_before[:, k], var_after[:, k], pm.cost)
                gains[k] = RqmcGain(feature, pm.cost, R, rows, sb, sa, ecr, n_max * R, n_max * R * pm.cost)

    # -- freezing: greedy group per output, then one confirming pass for the distinct groups
    freeze_items: dict[int, list[FreezeItem]] = {}
    chosen: dict[int, tuple[list[int], Estimate, Estimate]] = {}
    for k in live:
        below = [j for j in range(d) if audits[k].total_index[j].value.ci_high < plan.freeze_threshold]
        below.sort(key=lambda j, k=k: audits[k].total_index[j].value.estimate)
        group, bound, bound_n = _greedy_group(below, main.total[:, :, k], main.var[:, k], plan.freeze_budget)  # type: ignore[index]
        freeze_items[k] = [FreezeItem(s.names[j], audits[k].total_index[j].value, j in group) for j in below]
        if group and bound is not None and bound_n is not None:
            chosen[k] = (group, bound, bound_n)
    groups = list(dict.fromkeys(tuple(sorted(g)) for g, _, _ in chosen.values()))
    freeze_groups: dict[int, FreezeGroup] = {}
    if groups:
        fdesign = Design(s.laws, s.design.points, R, _child_seed(seed, _FREEZE), s.design.sampler)
        accs, n_eval = _freeze_pass(s.model, fdesign, groups, s.block, progress)
        phases["freeze_check"] += n_eval
        ddof = 0 if s.design.sampler == "sobol" else 1
        for k, (group, bound, bound_n) in chosen.items():
            g = groups.index(tuple(sorted(group)))
            reps = [a.estimates(ddof=ddof) for a in accs[g]]
            mse = np.array([2 * r.total[0, k] for r in reps])  # type: ignore[index]
            var = np.array([r.variance[k] for r in reps])
            with np.errstate(invalid="ignore", divide="ignore"):
                mse_n = mse / var
            freeze_groups[k] = FreezeGroup(
                [s.names[j] for j in group],
                bound,
                bound_n,
                _estimate(mse),
                _estimate(mse_n),
                plan.freeze_budget,
                n_eval,
            )

    outputs = [
        OutputAdvice(
            audit=o,
            preintegrate=candidates.get(k, []),
            freeze=freeze_items.get(k, []),
            freeze_group=freeze_groups.get(k),
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


def advise_model(
    model: Model | str,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    progress: Progress | None = None,
    **options: Any,
) -> AdviceResult:
    """Advise which inputs of a model to pre-integrate and which to freeze.

    Parameters
    ----------
    model : Model or str
        An opened model or a path / reference to open.
    inputs : InputSpec, {"normal", "uniform"}, sequence of Law, optional
        Input laws (default: every input N(0, 1)).
    progress : callable, optional
        ``progress(model_evaluations_done, phase)``.
    **options
        As for :func:`prepare_advice`: ``points``, ``replicates``, ``seed``,
        ``sampler``, ``estimator``, ``top``, ``nodes``, ``tolerance``,
        ``node_cap``, ``pilot``, ``freeze_threshold``, ``freeze_budget``,
        ``gain_points``, ``block``.

    Returns
    -------
    AdviceResult
    """
    if isinstance(model, str):
        from .models.open import open_model
        from .studies import _model_options

        spec = _inputs_spec(inputs)
        model = open_model(model, dim=spec.dim, **_model_options(spec))
    return execute_advice(prepare_advice(model, inputs, **options), progress=progress)


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
    inputs : InputSpec, {"normal", "uniform"}, sequence of Law, optional
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
