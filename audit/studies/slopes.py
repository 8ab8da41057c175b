"""The slopes workflow: derivative-based bounds, active directions, and screening many inputs.

Two modes, each a pair of engine jobs run through one
:class:`~audit.studies.session.Session` (so checkpoints, clusters, memory and
time checks apply to both):

* **directions** (default): gradients of every output and captured hidden layer
  at ``gradient_points`` points per randomization give, per output, the bound
  ``E[(∂f/∂z_j)²] / σ²`` on each input's total index and the eigen-structure of
  ``C = E[∇f ∇fᵀ]`` (how many directions the output depends on, which inputs
  load on them), per layer the directions its units span together; then, unless
  ``indices=False``, the audit itself (Jansen) so that the bounds stand beside
  the total indices and ν.
* **screening** (``screen=K``): the bounds alone (no matrices, so d may be in
  the thousands) rank the inputs; an audit then swaps the K highest one by one
  and every other input as one group, at ``N (K + 3)`` evaluations per
  randomization instead of ``N (d + 2)``. The report lists the inputs left out
  and bounds what they carry together.

References
----------
.. [1] "Derivative based global sensitivity measures and their link with global
   sensitivity indices", Mathematics and Computers in Simulation, 2009.
.. [2] "Mean dimension of ridge functions", SIAM J. Numer. Anal., 2020.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .. import engine, memory
from ..design import Design, round_points
from ..errors import UserError, check_int
from ..estimators import LEVEL, Jansen
from ..estimators.gradient import GradientEstimator
from ..estimators.intervals import t_interval
from ..inputs import InputSpec, Law
from ..inputs.scales import bound_note
from ..models.base import feature_count
from ..results import AuditResult, FeatureEstimate
from ..results.slopes import LayerSlopes, OutputSlopes, ScreenedOutput, Screening, SlopesResult
from ..seeds import SLOPES, child_seed
from .evaluators import ModelEvaluator
from .options import RunOptions, split_options
from .session import Session
from .setup import OUTPUTS, Setup, check_memory, check_time, inputs_spec, prepare, resolve_model
from .slope_evaluator import GradientEvaluator, accuracy, choose_method, cost_per_point
from .slope_summary import directions, output_slopes, positive_interval
from .summarize import GroupStats, estimate, estimates, inputs_info, layer_result, model_info, output_results

__all__ = ["SlopesPlan", "execute_slopes", "prepare_slopes", "slopes_model"]


@dataclass
class SlopesPlan:
    """A slopes study resolved before any evaluation (see :func:`prepare_slopes`)."""

    setup: Setup
    gradients: engine.Job
    method: str
    screen: int | None
    indices: bool
    notices: list[str] = field(default_factory=list)

    @property
    def full_evaluations(self) -> int:
        """What an audit of every input one by one costs (N (d + 2) R)."""
        d = self.setup.design
        return d.points * d.replicates * (d.d + 2)

    @property
    def index_evaluations(self) -> int:
        d = self.setup.design
        if self.screen is not None:
            groups = self.screen + (1 if self.screen < d.d else 0)
            return d.points * d.replicates * (groups + 2)
        return self.setup.evaluations if self.indices else 0

    @property
    def evaluations(self) -> int:
        return self.gradients.evaluations + self.index_evaluations


def prepare_slopes(
    model: Any,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    design: Any = None,
    gradient_points: int | None = None,
    indices: bool = True,
    screen: int | None = None,
    layers: str | Sequence[str] = "activations",
    outputs: Sequence[str] | None = None,
    memory_limit: int | None = None,
    block: int | None = None,
) -> SlopesPlan:
    """Resolve a slopes study: inputs, outputs, layers, the gradient job and its cost. Nothing is evaluated.

    Parameters
    ----------
    model : Model
        An opened model.
    inputs : InputSpec, spec path, {"normal", "uniform"}, sequence of Law, optional
    design : DesignOptions, optional
        Points N and replicates R of the audit; the gradients use the same R.
    gradient_points : int, optional
        Gradient points per randomization (default N, or N / 4 when screening).
    indices : bool
        Also run the audit, for the indices beside the bounds (directions mode).
    screen : int, optional
        Screening mode: keep this many inputs (the highest bounds) one by one.
    layers, outputs, memory_limit, block
        As for :func:`~audit.studies.setup.prepare`; screening captures no layers.
    """
    d = feature_count(model)
    if screen is not None:
        screen = check_int(screen, "screen", 1, why="(inputs kept one by one)")
        if screen >= d:
            raise UserError(
                f"`screen` keeps {screen} inputs one by one but the model has {d}: nothing would be screened "
                f"out. Keep fewer than {d}, or run an audit of every input."
            )
        layers = "none"
    setup = prepare(model, inputs, design=design, layers=layers, block=block, memory_limit=memory_limit,
                    outputs=outputs)  # fmt: skip
    options = setup.options
    if gradient_points is None:
        gradient_points = max(16, options.points // 4) if screen is not None else options.points
    gradient_points = check_int(gradient_points, "gradient_points", 2)
    if options.sampler == "sobol":
        gradient_points = round_points(gradient_points)
    capture = [x.name for x in setup.layers]
    method, notice = choose_method(setup.model, capture, setup.laws)
    estimator = GradientEstimator(d, directions=screen is None)
    gdesign = Design(setup.laws, gradient_points, options.replicates, child_seed(options.seed, SLOPES),
                     options.sampler, copies=1)  # fmt: skip
    k = len(setup.output_names)
    groups = [engine.Group(OUTPUTS, estimator.columns(k), True)]
    groups += [engine.Group("layer:" + x.name, estimator.columns(x.units), False) for x in setup.layers]
    units = k + sum(x.units for x in setup.layers)
    job = engine.Job(
        "gradients",
        GradientEvaluator(setup.model, setup.laws, capture, setup.keep, method),
        gdesign,
        estimator,
        groups,
        setup.names,
        setup.dtype,
        cost=cost_per_point(method, d, units),
        identity={**setup.identity, "method": method},
    )
    budget = None if memory_limit is None else memory_limit // (2 * memory.IN_FLIGHT)
    gblock = block or memory.plan_block(gradient_points, d, job.units, 1, budget)
    check_memory([(job, gblock)], memory_limit)
    plan = SlopesPlan(setup, job, method, screen, bool(indices), [notice] if notice else [])
    return plan


def _normal(setup: Setup) -> bool:
    return all(law.kind == "normal" for law in setup.laws)


def _audit(setup: Setup, sums: dict[str, list[Any]], seconds: float) -> AuditResult:
    ddof = setup.design.ddof
    stats = GroupStats.of(sums[OUTPUTS], ddof, setup.eps())
    outs = output_results(stats, setup.output_names, setup.names, setup.redundant)
    layers = [
        layer_result(x, GroupStats.of(sums["layer:" + x.name], ddof, setup.eps("layer:" + x.name)), setup.names)
        for x in setup.layers
    ]
    return AuditResult(model_info(setup), inputs_info(setup), {"seconds": seconds}, outs, layers, [])


def _beside(slopes: list[OutputSlopes], audit: AuditResult) -> list[OutputSlopes]:
    """The bounds with the audit's total indices and ν beside them."""
    out = []
    for o in slopes:
        a = audit.output(o.name)
        totals = {f.feature: f.value for f in a.total_index}
        bounds = [type(b)(b.feature, b.bound, b.mean_square, totals.get(b.feature)) for b in o.bounds]
        out.append(OutputSlopes(o.name, o.variance, bounds, o.bound_sum, o.lipschitz, o.lipschitz_bound,
                                a.mean_dimension, o.directions, o.inert))  # fmt: skip
    return out


def _screen(keep: int, d: int, slopes: list[OutputSlopes]) -> tuple[list[int], list[int]]:
    """The ``keep`` inputs with the highest bound over the outputs (largest first), and the others (in order)."""
    live = [o for o in slopes if not o.inert]
    score = np.zeros(d)
    for o in live:
        score = np.maximum(score, np.nan_to_num([b.bound.estimate for b in o.bounds], nan=0.0))
    order = np.argsort(-score, kind="stable")
    return [int(j) for j in order[:keep]], sorted(int(j) for j in order[keep:])


def _screened(plan: SlopesPlan, kept: list[int], rest: list[int], sums: list[Any], greps: list[Any]) -> Screening:
    setup = plan.setup
    stats = GroupStats.of(sums, setup.design.ddof, setup.eps())
    names = setup.names
    var = stats.var  # (R, k)
    square = np.array([r.square for r in greps])  # (R, k, d)
    gvar = np.array([r.variance for r in greps])
    outs = []
    for u, name in enumerate(setup.output_names):
        if stats.inert[u]:
            outs.append(ScreenedOutput(name, [], [], None, None))
            continue
        with np.errstate(invalid="ignore", divide="ignore"):
            tot = stats.total[:, :, u] / var[:, u, None]
            first = stats.first[:, :, u] / var[:, u, None]
        t, f = estimates(t_interval(tot, LEVEL, axis=0)), estimates(t_interval(first, LEVEL, axis=0))
        kept_t = [FeatureEstimate(names[j], t[i]) for i, j in enumerate(kept)]
        kept_f = [FeatureEstimate(names[j], f[i]) for i, j in enumerate(kept)]
        rest_total = t[len(kept)] if rest else None
        rest_bound = estimate(positive_interval(square[:, u, rest].sum(axis=1) / gvar[:, u])) if rest else None
        outs.append(ScreenedOutput(name, kept_t, kept_f, rest_total, rest_bound))
    return Screening([names[j] for j in kept], [names[j] for j in rest], outs)


def execute_slopes(plan: SlopesPlan, run: RunOptions | None = None) -> SlopesResult:
    """Run a prepared slopes study and build its result.

    Parameters
    ----------
    plan : SlopesPlan
        From :func:`prepare_slopes`.
    run : RunOptions, optional
        Progress, checkpoint, cluster, memory and time budget.

    Returns
    -------
    SlopesResult
    """
    run = run or RunOptions()
    setup, job = plan.setup, plan.gradients
    check_time(job, job.evaluations, run.time_budget, run.block)
    if plan.indices and plan.screen is None:
        check_time(setup.job(), setup.evaluations, run.time_budget, run.block or setup.block)
    names = setup.names
    delta = accuracy(plan.method, setup.dtype)
    t0 = time.perf_counter()
    audit, screening, index_seconds = None, None, 0.0
    with Session(run) as session:
        gsums = session.run(job, block=run.block)
        gseconds = time.perf_counter() - t0
        greps = [s.finish(setup.design.ddof) for s in gsums[OUTPUTS]]
        slopes = output_slopes(greps, names, setup.output_names, setup.eps(), delta, _normal(setup))
        t1 = time.perf_counter()
        if plan.screen is not None:
            kept, rest = _screen(plan.screen, setup.design.d, slopes)
            groups = [[j] for j in kept] + ([rest] if rest else [])
            jansen = Jansen(setup.design.d, groups)
            sjob = engine.Job("screened audit", ModelEvaluator(setup.model, [], setup.keep), setup.design, jansen,
                              [engine.Group(OUTPUTS, len(setup.output_names), True)], names, setup.dtype,
                              identity=setup.identity)  # fmt: skip
            ssums = session.run(sjob, block=run.block)
            screening = _screened(plan, kept, rest, ssums[OUTPUTS], greps)
        elif plan.indices:
            setup.find_relations()
            audit = _audit(setup, session.run(setup.job(), block=run.block or setup.block), 0.0)
            slopes = _beside(slopes, audit)
        index_seconds = time.perf_counter() - t1
    layers, still = [], []
    for x in setup.layers:
        reps = [s.finish(setup.design.ddof) for s in gsums["layer:" + x.name]]
        outer = np.array([r.outer[0] for r in reps])
        trace = np.trace(outer, axis1=1, axis2=2)
        if not np.all(trace > 0):
            still.append(x.name)
            continue
        nu = None
        if audit is not None:
            nu = next((float(a.summary.get("nu_median", np.nan)) for a in audit.layers if a.name == x.name), None)
        layers.append(LayerSlopes(x.name, x.op, x.units, directions(outer, trace, names, delta, False), nu))
    info = inputs_info(setup)
    for entry, law in zip(info, setup.laws, strict=True):
        entry["bound_rule"] = bound_note(law)
    full = plan.full_evaluations
    spent = job.evaluations + plan.index_evaluations
    design = {
        "gradient_points": job.design.points,
        "points": setup.design.points,
        "replicates": setup.design.replicates,
        "seed": setup.design.seed,
        "sampler": setup.design.sampler,
        "method": plan.method,
        "evaluations_per_point": job.cost,
        "cost_rule": cost_rule(plan.method),
        "gradient_evaluations": job.evaluations,
        "index_evaluations": plan.index_evaluations,
        "full_evaluations": full,
        "cost_fraction": spent / full,
        "screen_fraction": job.evaluations / full,
        "accuracy": delta,
        "interval": f"Student-t over {setup.design.replicates} independent randomizations, {LEVEL:.0%}",
        "seconds": {"gradients": round(gseconds, 3), "indices": round(index_seconds, 3)},
        **({"spec": setup.spec.source} if setup.spec.source.endswith(".toml") else {}),
    }
    notices = [*setup.notices, *plan.notices, *session.notices]
    if still:
        notices.append(f"No directions for the layer(s) {', '.join(still)}: their units do not vary at the points.")
    return SlopesResult(model_info(setup), info, design, slopes, layers, screening, notices)


def cost_rule(method: str) -> str:
    """The cost of one point's gradients in words."""
    if method == "autograd":
        return "autograd: one forward pass and one reverse pass per unit, a reverse pass counted as two evaluations"
    return "central differences: the point and its two neighbours along every input, 2d + 1 evaluations"


def slopes_model(
    model: Any,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    gradient_points: int | None = None,
    indices: bool = True,
    screen: int | None = None,
    layers: str | Sequence[str] = "activations",
    outputs: Sequence[str] | None = None,
    **options: Any,
) -> SlopesResult:
    """Derivative-based bounds and active directions of a model, or a screened audit of many inputs.

    Parameters
    ----------
    model : Model, str or Path
        An opened model or a path / reference to open.
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
        Input laws (default: every input N(0, 1)).
    gradient_points : int, optional
        Gradient points per randomization (default ``points``, or ``points / 4`` when screening).
    indices : bool
        Also audit the model (Jansen) to show the total indices beside the bounds.
    screen : int, optional
        Screening mode: rank inputs by their bound, then audit the ``screen`` highest one by
        one and the rest as one group.
    layers : {"activations", "all", "none"} or list of str
        Hidden layers whose directions are summarised.
    outputs : list of str, optional
        Output units or tensors to measure.
    **options
        Design and run options as for :func:`~audit.studies.audit.audit_model`.

    Returns
    -------
    SlopesResult

    Examples
    --------
    >>> import audit
    >>> r = audit.slopes_model("model_zoo/ridge_phi.onnx", "normal", points=256, replicates=4,
    ...                        seed=1)  # doctest: +SKIP
    >>> r.outputs[0].directions.count  # doctest: +SKIP
    1
    """
    design, run = split_options(options)
    spec = inputs_spec(inputs)
    opened = resolve_model(model, spec)
    plan = prepare_slopes(opened, spec, design=design, gradient_points=gradient_points, indices=indices,
                          screen=screen, layers=layers, outputs=outputs, memory_limit=run.memory_limit,
                          block=run.block)  # fmt: skip
    return execute_slopes(plan, run)
