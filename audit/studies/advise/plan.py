"""Plan an advise run: settings checked and the cost estimated before any evaluation.

The plan holds the parts to run (``only``: freezing or pre-integration alone) and,
with ``max_evaluations``, is cut to fit that budget (:func:`fit_plan`): first the
largest RQMC gain point counts (down to two), then the starting Gauss nodes (down
to ``node_floor``), then the candidates integrated out (down to one), then the
gain altogether; a budget that even the smallest plan exceeds is refused. While the
run goes, a candidate whose node check asks for more nodes than planned is left
out when its audit would no longer fit (:func:`~audit.studies.advise.run.execute_advice`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Any

from ...errors import UserError, check_choice, check_int, check_number
from ...estimators import make_estimator
from ...inputs import InputSpec, Law
from ...models.base import Model
from ...quadrature import MAX_NODES
from ..options import DesignOptions
from ..setup import Setup, prepare

__all__ = [
    "DEFAULT_GAIN_POINTS",
    "FREEZE_BUDGET",
    "FREEZE_THRESHOLD",
    "GAIN_POINTS_PER_POINT",
    "PARTS",
    "AdvicePlan",
    "default_gain_points",
    "fit_plan",
    "prepare_advice",
]

#: Point counts n of the RQMC gain measurement (prefixes of one sequence per randomization), at most.
DEFAULT_GAIN_POINTS = tuple(2**p for p in range(8, 15))
#: By default the gain is measured up to this many times the audit's points (never below 4096, so
#: that at least five counts fit each slope): a small audit's advice does not pay for 16,384-point
#: gain runs (they were 62 % of the evaluations of advise at 512 points on the digits MLP).
GAIN_POINTS_PER_POINT = 16


def default_gain_points(points: int) -> tuple[int, ...]:
    """The default RQMC gain counts for an audit of ``points`` points: 256, 512, ... up to
    min(16384, max(4096, 16 · points)).

    Examples
    --------
    >>> default_gain_points(512)
    (256, 512, 1024, 2048, 4096, 8192)
    >>> default_gain_points(4096) == DEFAULT_GAIN_POINTS
    True
    """
    top = min(max(DEFAULT_GAIN_POINTS), max(4096, GAIN_POINTS_PER_POINT * int(points)))
    return tuple(n for n in DEFAULT_GAIN_POINTS if n <= top)


#: Normalised total index below which (at the interval's upper end) an input may be frozen.
FREEZE_THRESHOLD = 1e-3
#: Largest bound 2 Σ τ̄²_j / σ² (upper interval end) on the mean squared error of a frozen group.
FREEZE_BUDGET = 0.01
#: Inputs left after integrating one out from which the candidates' audits use the fast estimator.
FAST_CANDIDATES_FROM = 31
#: The parts of the advice that ``only`` can choose.
PARTS = ("freezing", "pre-integration")
#: Phases of an advise run, in the order they run (keys of ``AdvicePlan.phases``).
PHASES = ("audit", "node_check", "preintegrated", "gain", "freeze_check")
#: How each phase is named in the printed plan, phase lines and messages.
PHASE_LABELS = {
    "audit": "audit",
    "node_check": "node checks",
    "preintegrated": "pre-integrated audits",
    "gain": "RQMC gain",
    "freeze_check": "freeze check",
}


@dataclass
class AdvicePlan:
    """A prepared advise run: the audit's :class:`~audit.studies.setup.Setup` and the advice settings.

    ``evaluations`` is an estimate made before any run (it assumes ``nodes``
    Gauss nodes, :attr:`candidates` inputs integrated out, :attr:`gain_features`
    best candidates measured for the RQMC gain and one freeze group; the pilot
    check may halve or double the nodes, and fewer outputs may share a best candidate). ``only`` names the one
    part to run (``None``: both); ``cuts`` says what was cut to fit ``max_evaluations``
    and ``skipped`` which parts are not done, with the reason.
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
    only: str | None = None
    max_evaluations: int | None = None
    cuts: list[str] = field(default_factory=list)
    skipped: dict[str, str] = field(default_factory=dict)

    def does(self, part: str) -> bool:
        """Whether ``part`` (one of :data:`PARTS`) is run."""
        return part not in self.skipped

    @property
    def candidates(self) -> int:
        """Inputs the plan integrates out, at most (0 when pre-integration is not done): ``top`` per
        output, distinct across the outputs, capped by ``max_candidates`` and d."""
        s = self.setup
        d, outputs = s.design.d, max(1, len(s.output_names))
        if d < 2 or not self.does("pre-integration"):
            return 0
        return min(self.top * outputs, d, self.max_candidates)

    @property
    def gain_features(self) -> int:
        """Inputs whose RQMC gain is measured, at most: each output's best candidate, so up to one per
        output and never more than :attr:`candidates` (0 when the gain is not measured)."""
        if not self.candidates or not self.does("rqmc gain"):
            return 0
        return min(self.candidates, max(1, len(self.setup.output_names)))

    def candidate_design(self) -> tuple[str, int, int]:
        """Estimator, points N' and randomizations R' of each pre-integrated audit.

        The ranking needs ν after and the variance after, not first-order indices. With the
        Jansen estimator and at least :data:`FAST_CANDIDATES_FROM` inputs left, the fast
        estimator gets them at a quarter of the evaluations or less: R' = 4R randomizations (its
        intervals need more, see :class:`~audit.estimators.Split`) of N' = (d + 1) N / 32 points
        (rounded down to a power of two), 2 N' R' <= (d + 1) N R / 4 rows per Gauss node. On the
        digits network (d = 64, N = 1024, R = 8) the standard error of ν after was 1.6 times the
        Jansen estimator's (median over 13 candidates; intervals 1.36 times as wide, on 31 degrees
        of freedom instead of 7) at a quarter of the evaluations. Otherwise (or when N' would be
        below the d - 1 inputs the fast estimator needs) the audit's own estimator, N and R.
        """
        s = self.setup
        d, n, r, name = s.design.d, s.design.points, s.design.replicates, s.estimator.name
        share = (d + 1) * n // 32
        points = 1 << (share.bit_length() - 1) if share else 0
        if name != "jansen" or d - 1 < FAST_CANDIDATES_FROM or points < d - 1:
            return name, n, r
        return "fast", points, 4 * r

    def preintegrated_cost(self, nodes: int) -> int:
        """Evaluations of one pre-integrated audit with ``nodes`` Gauss nodes."""
        name, n, r = self.candidate_design()
        return n * r * make_estimator(name, d=self.setup.design.d - 1, points=n).rows_per_point() * nodes

    @property
    def phases(self) -> dict[str, int]:
        """Planned evaluations per phase (:data:`PHASES`), an estimate."""
        s = self.setup
        n, r = s.design.points, s.design.replicates
        out = dict.fromkeys(PHASES, 0)
        out["audit"] = s.evaluations
        if s.design.d < 2:
            return out
        cands = self.candidates
        out["node_check"] = cands * self.pilot * 3 * self.nodes
        out["preintegrated"] = cands * self.preintegrated_cost(self.nodes)
        if self.gain_features:
            out["gain"] = max(self.gain_points, default=0) * r * (1 + self.gain_features * self.nodes)
        if self.does("freezing"):
            out["freeze_check"] = n * r * 2
        return out

    @property
    def evaluations(self) -> int:
        return sum(self.phases.values())

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
            "only": self.only,
            "max_evaluations": self.max_evaluations,
        }

    def record(self) -> dict[str, Any]:
        """The plan as the result keeps it: evaluations per phase and in total, the budget and the cuts."""
        return {
            "evaluations": self.phases,
            "total": self.evaluations,
            "max_evaluations": self.max_evaluations,
            "cuts": list(self.cuts),
        }


def _listed(values: Sequence[int]) -> str:
    return ", ".join(map(str, values))


def fit_plan(plan: AdvicePlan, max_evaluations: int | None) -> AdvicePlan:
    """The plan cut to at most ``max_evaluations`` planned evaluations (unchanged when it fits or ``None``).

    Cuts, each only as far as needed, in this order: the largest RQMC gain point
    counts (two stay), the starting Gauss nodes (halved, not below ``node_floor``;
    the node check still doubles them when the tolerance needs it, and the run then
    leaves out a candidate that no longer fits), the number of inputs integrated out
    (one stays), and last the RQMC gain itself.

    Parameters
    ----------
    plan : AdvicePlan
    max_evaluations : int or None
        The evaluation budget.

    Returns
    -------
    AdvicePlan
        With ``max_evaluations`` set, and ``cuts`` (and ``skipped``) saying what was cut.

    Raises
    ------
    UserError
        When even the smallest plan needs more, stating its cost.

    Examples
    --------
    >>> from audit.models.python import PythonModel
    >>> plan = prepare_advice(PythonModel(lambda x: x.sum(axis=1), 4, source="sum"), "normal", seed=1)
    >>> fitted = fit_plan(plan, plan.evaluations // 2)
    >>> fitted.evaluations <= plan.evaluations // 2, bool(fitted.cuts)
    (True, True)
    """
    if max_evaluations is None:
        return plan
    limit = check_int(max_evaluations, "max_evaluations", 1)
    p = replace(plan, max_evaluations=limit, cuts=list(plan.cuts), skipped=dict(plan.skipped))
    if p.evaluations <= limit:
        return p
    cuts: list[str] = []
    gains = p.gain_points
    while p.evaluations > limit and len(p.gain_points) > 2 and p.phases["gain"]:
        p = replace(p, gain_points=p.gain_points[:-1])
    if p.gain_points != gains:
        cuts.append(f"RQMC gain point counts cut to {_listed(p.gain_points)} (from {_listed(gains)})")
    nodes = p.nodes
    while p.evaluations > limit and p.candidates and p.nodes // 2 >= max(1, p.node_floor):
        p = replace(p, nodes=p.nodes // 2)
    if p.nodes != nodes:
        cuts.append(f"starting Gauss nodes cut to {p.nodes} (from {nodes}; the node check may still raise them)")
    count = p.candidates
    while p.evaluations > limit and p.candidates > 1:
        p = replace(p, max_candidates=p.candidates - 1)
    if p.candidates != count:
        cuts.append(f"inputs integrated out cut to {p.candidates} (from {count})")
    if p.evaluations > limit and p.phases["gain"]:
        p = replace(p, skipped={**p.skipped, "rqmc gain": "left out to fit the evaluation budget"})
        cuts.append("RQMC gain left out")
    if p.evaluations > limit:
        parts = ", ".join(f"{PHASE_LABELS[k]} {v:,}" for k, v in p.phases.items() if v)
        raise UserError(
            f"Even the smallest advise plan needs about {p.evaluations:,} model evaluations ({parts}), more "
            f"than the budget of {limit:,} (`max_evaluations`). Raise `max_evaluations`, use fewer `points` "
            "or `replicates`, or run one part alone with `only`."
        )
    p.cuts += cuts
    return p


def _gain_points(points: Sequence[int]) -> tuple[int, ...]:
    pts = tuple(int(p) for p in points)
    if not pts:
        return ()
    bad = [p for p in pts if p < 2 or p & (p - 1)]
    if bad or list(pts) != sorted(set(pts)):
        raise UserError(
            f"The RQMC gain point counts (`gain_points`) must be increasing powers of two, at least 2, e.g. "
            f"256,1024,4096; got {','.join(map(str, pts))}."
        )
    if len(pts) < 2:
        raise UserError("The RQMC gain needs at least two point counts (`gain_points`) to fit a slope, e.g. 256,4096.")
    return pts


def prepare_advice(
    model: Model,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    design: DesignOptions | None = None,
    top: int = 3,
    max_candidates: int = 8,
    nodes: int = 32,
    tolerance: float = 1e-3,
    node_cap: int = MAX_NODES,
    node_floor: int = 4,
    pilot: int = 64,
    freeze_threshold: float = FREEZE_THRESHOLD,
    freeze_budget: float = FREEZE_BUDGET,
    gain_points: Sequence[int] | None = None,
    block: int | None = None,
    memory_limit: int | None = None,
    outputs: Sequence[str] | None = None,
    only: str | None = None,
    max_evaluations: int | None = None,
    **design_options: Any,
) -> AdvicePlan:
    """Resolve and check everything an advise run needs, before any evaluation.

    Parameters
    ----------
    model : Model
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
    design : DesignOptions, optional
        Design of the audit, also used for every pre-integrated audit and the freeze
        confirmation (or give its fields ``points``, ``replicates``, ``seed``,
        ``sampler``, ``estimator`` as keywords).
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
        rule is more accurate than needed (see :func:`audit.nodes.choose_nodes`).
    pilot : int
        Pilot points of the node check.
    freeze_threshold : float
        An input may be frozen when the upper end of its normalised total
        index's interval is below this (default 0.001).
    freeze_budget : float
        Upper end allowed for the bound 2 Σ τ̄²_j / σ² of a frozen group (default 0.01).
    gain_points : sequence of int, optional
        Increasing powers of two n for the RQMC gain (empty: skip it); default
        :func:`default_gain_points` of the design's points (256 up to 16 N, within 4096..16384).
    block, memory_limit : int, optional
        Points per task and the memory the run may use (bytes).
    outputs : list of str, optional
        Output units or tensors to advise on (default: the spec's ``[outputs] keep``, else all).
    only : {"freezing", "pre-integration"}, optional
        Run this part of the advice alone (default both); the result says what was not done.
    max_evaluations : int, optional
        Evaluation budget: the plan is cut to fit it (:func:`fit_plan`, which says how).

    Returns
    -------
    AdvicePlan

    Raises
    ------
    UserError
        For any setting that cannot work, saying which and why.
    """
    if design is None:
        design = DesignOptions(**design_options)
    elif design_options:
        raise UserError(f"Give the design either as `design` or as keywords, not both ({', '.join(design_options)}).")
    plan_top = check_int(top, "top", 0)
    cands = check_int(max_candidates, "max_candidates", 0)
    plan_nodes = check_int(nodes, "nodes", 1, MAX_NODES)
    cap = check_int(node_cap, "node_cap", 2, MAX_NODES)
    floor = check_int(node_floor, "node_floor", 1, MAX_NODES)
    if plan_nodes > cap:
        raise UserError(f"The starting node count ({plan_nodes}) is above the node cap ({cap}); lower `nodes`.")
    plan_pilot = check_int(pilot, "pilot", 2)
    tol = check_number(tolerance, "tolerance", 0.0, 1.0, low_open=True)
    eps = check_number(freeze_threshold, "freeze_threshold", 0.0, 1.0, low_open=True)
    budget = check_number(freeze_budget, "freeze_budget", 0.0, 2.0, low_open=True)
    gains = _gain_points(default_gain_points(design.points) if gain_points is None else gain_points)
    if only is not None:
        check_choice(only, "only", PARTS)
    if design.view not in (None, "inputs"):
        raise UserError(
            f"Advice integrates out and freezes single inputs, so it runs over inputs only; `view` {design.view} "
            "is for `netdim audit`."
        )
    setup = prepare(
        model,
        inputs,
        design=design,
        layers="none",
        block=block,
        memory_limit=memory_limit,
        outputs=outputs,
        view="inputs",
    )
    if setup.design.spans is not None:
        blocks = ", ".join(setup.variables.names[i] for i in setup.variables.one_hot) if setup.variables else ""
        raise UserError(
            f"Advice integrates out and freezes one model column at a time, and the one-hot input(s) {blocks} "
            "span several columns. Audit the model with `netdim audit`, which ranks a one-hot input as a whole."
        )
    notices = list(setup.notices)
    if setup.design.d < 2:
        notices.append("The model has a single input: there is nothing to pre-integrate against.")
    skipped: dict[str, str] = {}
    if only is not None:
        skipped = {part: f"not asked for: only {only}" for part in PARTS if part != only}
        if only == "freezing":
            skipped["rqmc gain"] = skipped["pre-integration"]
    if not gains and only != "freezing":
        skipped["rqmc gain"] = "no gain point counts given"
    plan = AdvicePlan(
        setup, plan_top, cands, plan_nodes, tol, cap, floor, plan_pilot, eps, budget, gains, notices, only=only
    )
    plan.skipped = skipped
    plan = fit_plan(plan, max_evaluations)
    estimator, points, replicates = plan.candidate_design()
    if plan.candidates and estimator != setup.estimator.name:
        plan.notices.append(
            f"The pre-integrated candidates were audited with the {estimator} estimator ({replicates} randomizations "
            f"of {points:,} points): ν after and the variance after at a quarter of the Jansen estimator's "
            "evaluations or less; first-order indices are not needed to rank them."
        )
    return plan
