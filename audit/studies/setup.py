"""Resolve a study before any evaluation: model, inputs, outputs, layers, design, estimator, memory.

:func:`prepare` turns a model, an input spec and :class:`~audit.studies.options.DesignOptions`
into a :class:`Setup`: names and laws of the inputs, output names, the hidden
layers to capture, the design and the estimator, the groups of units the
engine measures and the block size -- and refuses, before any work, a run
whose memory would not fit. Every workflow (audit, compare, advise) starts here.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .. import engine, memory
from ..design import Design
from ..errors import UserError, suggest
from ..estimators import machine_eps, make_estimator
from ..estimators.base import Estimator
from ..inputs import InputSpec, Law
from ..inputs.spec import ASSUMED_NOTICE
from ..inputs.variables import Variables
from ..models.base import LayerInfo, Model, feature_count, row_dtype
from .evaluators import ModelEvaluator
from .integers import integer_laws
from .options import DesignOptions
from .outputs import find_redundant, select_outputs
from .resolve import inputs_spec, model_identity, resolve_model
from .views import View, group_view, input_view, resolve_view

__all__ = [
    "LAYER_CHOICES",
    "OUTPUTS",
    "Setup",
    "check_memory",
    "check_time",
    "inputs_spec",
    "model_identity",
    "prepare",
    "probe_rate",
    "resolve_model",
    "select_layers",
    "value_eps",
]

#: Special values of ``layers``.
LAYER_CHOICES = ("activations", "all", "none")
#: Group name of a model's outputs (hidden layers are ``layer:NAME``).
OUTPUTS = "outputs"


def select_layers(model: Model, layers: str | Sequence[str]) -> list[LayerInfo]:
    """Hidden layers to capture: ``"activations"`` (default), ``"all"``, ``"none"`` or names."""
    if isinstance(layers, str) and layers == "none":
        return []
    available = model.layers()
    if isinstance(layers, str):
        if layers == "activations":
            return [x for x in available if x.activation]
        if layers == "all":
            return list(available)
        layers = [s.strip() for s in layers.split(",") if s.strip()]
    by_name = {x.name: x for x in available}
    chosen = []
    for name in layers:
        if name not in by_name:
            if not available:
                raise UserError(f"The model has no hidden layers to capture, so '{name}' cannot be chosen.")
            raise UserError(
                f"The model has no layer named '{name}'."
                + suggest(name, by_name)
                + " List them with `netdim layers MODEL`, or set `layers` to all, none or activations."
            )
        chosen.append(by_name[name])
    return chosen


def _choices(layers: str | Sequence[str], unit_detail: Sequence[str], outputs: Sequence[str] | None) -> dict[str, Any]:
    """The choices of a run that differ from the defaults, as a command line would give them."""
    out: dict[str, Any] = {}
    if layers != "activations":
        out["layers"] = layers if isinstance(layers, str) else ",".join(layers)
    if unit_detail:
        out["unit_detail"] = list(unit_detail)
    if outputs is not None and len(outputs) and all(isinstance(x, str) for x in outputs):
        out["outputs"] = list(outputs)  # names the user gave (a workflow's own index selections are not choices)
    return out


@dataclass
class Setup:
    """Everything a run needs, resolved and checked before any evaluation."""

    model: Model
    names: list[str]
    laws: list[Law]
    output_names: list[str]
    layers: list[LayerInfo]
    design: Design
    estimator: Estimator
    groups: list[engine.Group]
    block: int
    spec: InputSpec
    options: DesignOptions
    notices: list[str] = field(default_factory=list)
    identity: dict[str, Any] = field(default_factory=dict)
    keep: np.ndarray | None = None
    redundant: dict[str, str] = field(default_factory=dict)
    variables: Variables | None = None
    view: View | None = None
    companion: Setup | None = None

    @property
    def column_names(self) -> list[str]:
        """Names of the model columns (the inputs' names when every input is one column)."""
        return list(self.variables.column_names) if self.variables is not None else list(self.names)

    @property
    def evaluations(self) -> int:
        """Model evaluations of the whole run: this job's, and the grouped view's job in a "both" run."""
        own = self.job_evaluations
        return own + (self.companion.job_evaluations if self.companion is not None else 0)

    @property
    def job_evaluations(self) -> int:
        """Model evaluations of this setup's own job."""
        return self.design.points * self.design.replicates * self.estimator.rows_per_point()
    #: What the user chose beyond the defaults (layers, unit detail, outputs): reports repeat it in commands.
    choices: dict[str, Any] = field(default_factory=dict)

    @property
    def dtype(self) -> type:
        """Row type for the evaluator: float32 for networks stored in float32."""
        return row_dtype(self.model)

    def evaluator(self) -> ModelEvaluator:
        return ModelEvaluator(self.model, [x.name for x in self.layers], self.keep)

    def find_relations(self) -> list[str]:
        """Evaluate a small probe and note outputs that are exact affine functions of one earlier output.

        Returns the notices added (they are also appended to :attr:`notices`).
        """
        self.redundant = find_redundant(self.model, self.design, self.keep, self.output_names, self.dtype)
        added = [
            f"{name} {relation} exactly (on a probe of the design): its indices and ν are that output's, "
            "so the report details that one only."
            for name, relation in self.redundant.items()
        ]
        self.notices.extend(added)
        return added

    def eps(self, group: str = OUTPUTS) -> np.ndarray | float:
        """Machine epsilon of the values of a group: per output unit kept, or the model's coarsest for a layer."""
        eps = value_eps(self.model, group)
        return eps[self.keep] if group == OUTPUTS and self.keep is not None else eps

    def job(self, name: str = "audit") -> engine.Job:
        """The engine job of this setup."""
        return engine.Job(
            name,
            self.evaluator(),
            self.design,
            self.estimator,
            self.groups,
            self.column_names,
            self.dtype,
            identity=self.identity,
        )


def value_eps(model: Model, group: str = OUTPUTS) -> np.ndarray | float:
    """Machine epsilon of a model's outputs (one per output unit) or, for ``layer:NAME``, of its hidden values."""
    per_unit = np.concatenate([np.full(t.units, machine_eps(t.dtype)) for t in model.outputs])
    return per_unit if group == OUTPUTS else float(per_unit.max())


def check_memory(jobs: Sequence[tuple[engine.Job, int]], memory_limit: int | None) -> None:
    """Refuse, before any work, jobs whose largest memory need does not fit (each job runs alone)."""
    need = max((memory.estimate_memory(job, block) for job, block in jobs), default=0)
    have = memory_limit if memory_limit is not None else memory.available_memory()
    if need > 0.8 * have:
        raise UserError(
            f"This run would need about {need / 2**30:.1f} GiB of memory but {have / 2**30:.1f} GiB is "
            f"available. Capture fewer layers (`layers` NAME,... or none), drop `unit_detail`, or use "
            f"fewer replicates."
        )


#: Below this many evaluations no run is timed against the budget (even at 100 rows a second it ends within a day).
UNTIMED_EVALUATIONS = 10_000_000
#: Most evaluations a timing probe of the time check takes (a block of the run's own size).
LARGEST_PROBE = 1 << 16


def probe_rate(job: engine.Job, block: int | None = None, evaluations: int = 4096) -> float:
    """Model evaluations a second, timed on one task of ``job`` of at most ``evaluations``
    evaluations and ``block`` points (the second of two, so that a runtime's first-call cost
    does not count)."""
    import time

    per = job.estimator.rows_per_point() * job.cost
    n = max(1, min(job.design.points, block or job.design.points, evaluations // per))
    n = 1 << (n.bit_length() - 1)  # a power of two, as scrambled Sobol' points like
    seconds = 0.0
    for _ in range(2):
        t0 = time.perf_counter()
        engine.run_task(job, engine.Task(0, 0, n))
        seconds = time.perf_counter() - t0
    return n * per / max(seconds, 1e-9)


def check_time(
    job: engine.Job, evaluations: int, budget: float | None, block: int | None = None, rate: float | None = None
) -> None:
    """Refuse, before any work, a run whose estimated time exceeds ``budget`` seconds.

    The rate (evaluations a second) is ``rate`` when given, else :func:`probe_rate` of
    ``job``; ``evaluations`` is the whole run's.
    """
    if budget is None or evaluations <= UNTIMED_EVALUATIONS:
        return
    if rate is None:
        # a small probe overstates the time of fast models (a runtime's cost per call dominates it), so
        # before refusing, time larger blocks, up to what the run itself uses, while a probe stays short
        probe = 4096
        rate = probe_rate(job, block, probe)
        while evaluations / rate > budget and probe < LARGEST_PROBE and probe / rate < 1.0:
            probe *= 4
            rate = max(rate, probe_rate(job, block, probe))
    need = evaluations / rate
    if need > budget:
        raise UserError(
            f"This run would take about {need / 3600:.3g} hours ({evaluations:,} model evaluations at about "
            f"{rate:,.0f} a second, timed on this machine), beyond the time budget of {budget / 3600:.3g} hours. "
            "Use fewer `points` or `replicates`, fewer layers, or raise `time_budget`."
        )


def prepare(
    model: Model,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    design: DesignOptions | None = None,
    layers: str | Sequence[str] = "activations",
    unit_detail: Sequence[str] = (),
    block: int | None = None,
    memory_limit: int | None = None,
    seed: int | None = None,
    outputs: Sequence[str] | None = None,
    view: str | None = None,
) -> Setup:
    """Resolve inputs, outputs, layers and design for ``model``; check memory. Nothing is evaluated.

    Parameters
    ----------
    model : Model
        An opened model.
    inputs : InputSpec, spec path, {"normal", "uniform"}, sequence of Law, optional
    design : DesignOptions, optional
        Points, replicates, seed, sampler, estimator (defaults as documented there).
    layers : {"activations", "all", "none"} or list of str
    unit_detail : list of str
        Layers whose units also get per-input total indices.
    block : int, optional
        Points per task (default from the memory budget).
    memory_limit : int, optional
        Bytes the run may use (default what is available).
    seed : int, optional
        Use this root seed instead of ``design.seed`` (the second model of a comparison on
        independent points).
    outputs : list of str, optional
        Output units (or output tensors) to measure; default the spec's ``[outputs] keep``,
        else every float output.
    view : {"inputs", "groups", "both"}, optional
        Overrides ``design.view`` (:mod:`audit.studies.views`); with ``"both"`` the
        setup is the inputs view and :attr:`Setup.companion` the groups view, on the same design.

    Raises
    ------
    UserError
        For any choice that cannot work (listing the valid ones).
    """
    options = design or DesignOptions()
    spec = inputs_spec(inputs)
    notices: list[str] = list(options.notices)
    if spec.assumed:
        notices.insert(0, ASSUMED_NOTICE + ASSUMED_ADVICE)
    d = feature_count(model)
    python = getattr(model, "format", "") == "python"
    variables, integers = integer_laws(model, spec.variables(d, None if python else model.feature_names()))
    notices += [integers] if integers else []
    out_names = model.output_names()
    if spec.outputs is not None:
        if len(spec.outputs) != len(out_names):
            raise UserError(
                f"The input spec {spec.source} names {len(spec.outputs)} outputs but the model has "
                f"{len(out_names)} output units. Fix [outputs] names in the spec."
            )
        out_names = list(spec.outputs)
    keep, out_names = select_outputs(model, out_names, spec.keep_outputs if outputs is None else outputs)
    chosen = select_layers(model, layers)
    for name in unit_detail:
        if name not in {x.name for x in chosen}:
            raise UserError(f"`unit_detail` names layer '{name}', which is not captured; add it to `layers`.")
    root = options.seed if seed is None else seed
    kind = resolve_view(view or options.view, spec)
    shape = tuple(spec.model["input_shape"]) if "input_shape" in spec.model else _input_shape(model)
    chosen_view = input_view(variables) if kind != "groups" else group_view(variables, spec, shape)
    estimator = _estimator(options, d, chosen_view, variables)
    names, laws = chosen_view.names, variables.laws
    copies = int(getattr(estimator, "copies", 2))  # blocks of d uniform columns the estimator needs per point
    dsg = Design(
        variables.laws, options.points, options.replicates, root, options.sampler,  # type: ignore[arg-type]
        copies=copies, columns=variables.spans,
    )  # fmt: skip
    estimator.check(options.points)
    groups = [engine.Group(OUTPUTS, len(out_names), True)]
    groups += [engine.Group("layer:" + x.name, x.units, x.name in unit_detail) for x in chosen]
    units = sum(g.units for g in groups)
    budget = None if memory_limit is None else memory_limit // (2 * memory.IN_FLIGHT)
    native = memory.native_outputs(estimator)
    blk = block or memory.plan_block(options.points, d, units, estimator.rows_per_point(), budget, native)
    notices.extend(getattr(model, "notices", []) or [])
    identity = model_identity(model)
    setup = Setup(model, names, laws, out_names, chosen, dsg, estimator, groups, blk, spec, options, notices, identity)
    setup.keep, setup.variables, setup.view = keep, variables, chosen_view
    setup.choices = _choices(layers, unit_detail, outputs)
    jobs = [(setup.job(), blk)]
    if kind == "both":
        grouped = group_view(variables, spec, shape)
        est = _estimator(options, d, grouped, variables)
        rows = est.rows_per_point()
        gblk = block or memory.plan_block(options.points, d, units, rows, budget, memory.native_outputs(est))
        setup.companion = Setup(
            model, grouped.names, laws, out_names, chosen, dsg, est, list(groups), gblk, spec, options, [], identity
        )
        setup.companion.keep, setup.companion.variables, setup.companion.view = keep, variables, grouped
        setup.companion.choices = setup.choices
        jobs.append((setup.companion.job("audit by group"), gblk))
    check_memory(jobs, memory_limit)
    return setup


#: How to give the real laws, after :data:`~audit.inputs.spec.ASSUMED_NOTICE`.
ASSUMED_ADVICE = (
    ": no input spec and no law was given, and the indices and ν change with the law. Give the real laws in an "
    "input spec (--inputs SPEC.toml, inputs= in Python; netdim inputs-from-data TABLE writes one from a table of "
    "training inputs), or --law uniform."
)


def _input_shape(model: Model) -> tuple[int, ...] | None:
    """The non-batch shape of a model's one input tensor (None with several)."""
    tensors = list(getattr(model, "inputs", []) or [])
    return tuple(tensors[0].shape) if len(tensors) == 1 else None


def _estimator(options: DesignOptions, d: int, view: View, variables: Variables) -> Estimator:
    """The estimator of a view: its units' columns swapped as a whole."""
    if view.columns is not None and options.estimator != "jansen":
        one_hot = variables.names[variables.one_hot[0]] if variables.one_hot else ""
        what = "groups of inputs" if view.kind == "groups" else f"the one-hot input '{one_hot}'"
        raise UserError(
            f"The {options.estimator} estimator resamples one model column at a time, which cannot serve {what}. "
            "Use `estimator` jansen."
        )
    return make_estimator(options.estimator, d=d, points=options.points, groups=view.columns)
