"""Plan an advise run: settings checked and the cost estimated before any evaluation."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from ...errors import UserError, check_int, check_number
from ...estimators import make_estimator
from ...inputs import InputSpec, Law
from ...models.base import Model
from ...quadrature import MAX_NODES
from ..options import DesignOptions
from ..setup import Setup, prepare

__all__ = ["DEFAULT_GAIN_POINTS", "FREEZE_BUDGET", "FREEZE_THRESHOLD", "AdvicePlan", "prepare_advice"]

#: Point counts n of the RQMC gain measurement (prefixes of one sequence per randomization).
DEFAULT_GAIN_POINTS = tuple(2**p for p in range(8, 15))
#: Normalised total index below which (at the interval's upper end) an input may be frozen.
FREEZE_THRESHOLD = 1e-3
#: Largest bound 2 Σ τ̄²_j / σ² (upper interval end) on the mean squared error of a frozen group.
FREEZE_BUDGET = 0.01


@dataclass
class AdvicePlan:
    """A prepared advise run: the audit's :class:`~audit.studies.setup.Setup` and the advice settings.

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
        per = make_estimator(s.estimator.name, d=d - 1, points=n).rows_per_point()
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
    gain_points: Sequence[int] = DEFAULT_GAIN_POINTS,
    block: int | None = None,
    memory_limit: int | None = None,
    outputs: Sequence[str] | None = None,
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
    gain_points : sequence of int
        Increasing powers of two n for the RQMC gain (empty: skip it).
    block, memory_limit : int, optional
        Points per task and the memory the run may use (bytes).
    outputs : list of str, optional
        Output units or tensors to advise on (default: the spec's ``[outputs] keep``, else all).

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
    gains = _gain_points(gain_points)
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
    return AdvicePlan(setup, plan_top, cands, plan_nodes, tol, cap, floor, plan_pilot, eps, budget, gains, notices)
