"""Workflows: audit a model or a Python function, from inputs to result objects.

This layer ties a model, an input spec and a design to the engine, and turns
per-randomization accumulators into :mod:`audit.results` objects with
intervals. It prints nothing.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from . import engine
from .design import SAMPLERS, Design, resolve_seed, round_points
from .errors import UserError, suggest
from .estimators import ESTIMATORS, Accumulator, is_inert, t_interval
from .inputs import InputSpec, Law, uniform_spec
from .models.base import LayerInfo, Model, feature_count, index_names, row_dtype
from .models.python import PythonModel
from .results import AuditResult, Estimate, FeatureEstimate, LayerResult, OutputResult, UnitResult
from .results.signature import LayerEntry, ModelSignature, TensorEntry

__all__ = ["LAYER_CHOICES", "Setup", "audit_function", "audit_model", "model_signature", "prepare", "select_layers"]

#: Special values of ``layers``.
LAYER_CHOICES = ("activations", "all", "none")

OUTPUTS = "outputs"
LEVEL = 0.95


def _inputs_spec(inputs: InputSpec | str | Sequence[Law] | None) -> InputSpec:
    if inputs is None:
        return uniform_spec("normal")
    if isinstance(inputs, InputSpec):
        return inputs
    if isinstance(inputs, str):
        return uniform_spec(inputs)
    laws = list(inputs)
    if not all(isinstance(x, Law) for x in laws):
        raise TypeError("inputs must be an InputSpec, 'normal', 'uniform' or a sequence of Law.")
    return InputSpec(laws=laws, source="laws given in Python")


def select_layers(model: Model, layers: str | Sequence[str]) -> list[LayerInfo]:
    """Hidden layers to capture: ``"activations"`` (default), ``"all"``, ``"none"`` or names."""
    available = model.layers()
    if isinstance(layers, str):
        if layers == "activations":
            return [x for x in available if x.activation]
        if layers == "all":
            return list(available)
        if layers == "none":
            return []
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
                + " Run `netdim layers MODEL` to list them, or use --layers all|none|activations."
            )
        chosen.append(by_name[name])
    return chosen


@dataclass
class Setup:
    """Everything a run needs, resolved and checked before any evaluation."""

    model: Model
    names: list[str]
    laws: list[Law]
    output_names: list[str]
    layers: list[LayerInfo]
    design: Design
    estimator: str
    groups: list[engine.Group]
    block: int
    notices: list[str]
    spec: InputSpec

    @property
    def dtype(self) -> type:
        """Row type for the evaluator: float32 for networks stored in float32."""
        return row_dtype(self.model)

    @property
    def evaluations(self) -> int:
        per = self.design.d + 2 if self.estimator == "jansen" else 2
        return self.design.points * self.design.replicates * per

    def evaluator(self) -> engine.Evaluator:
        return ModelEvaluator(self.model, [x.name for x in self.layers])


class ModelEvaluator:
    """The engine's view of a model: rows -> ``{"outputs": ..., "layer:NAME": ...}``.

    A plain class (not a closure) so that it pickles for other processes.
    """

    def __init__(self, model: Model, capture: Sequence[str]) -> None:
        self.model, self.capture = model, list(capture)

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        ev = self.model.evaluate(x, self.capture)
        out = {OUTPUTS: ev.outputs}
        for name in self.capture:
            out["layer:" + name] = ev.hidden[name]
        return out


def prepare(
    model: Model,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    points: int = 1024,
    replicates: int = 8,
    seed: int | np.random.Generator | None = None,
    sampler: str = "sobol",
    estimator: str = "jansen",
    layers: str | Sequence[str] = "activations",
    unit_detail: Sequence[str] = (),
    block: int | None = None,
    memory_limit: int | None = None,
) -> Setup:
    """Resolve inputs, outputs, layers and design for ``model``; check memory.

    Raises
    ------
    UserError
        For any choice that cannot work (listing the valid ones).
    """
    if sampler not in SAMPLERS:
        raise UserError(
            f"Unknown sampler '{sampler}'; valid choices: {', '.join(SAMPLERS)}." + suggest(sampler, SAMPLERS)
        )
    if estimator not in ESTIMATORS:
        raise UserError(
            f"Unknown estimator '{estimator}'; valid choices: {', '.join(ESTIMATORS)}." + suggest(estimator, ESTIMATORS)
        )
    if isinstance(points, bool) or int(points) < 1:
        raise UserError(f"The number of points must be a whole number ≥ 1 (a power of two is best), got {points}.")
    if int(replicates) < 2:
        raise UserError(
            f"At least 2 replicates (independent randomizations) are needed for a confidence interval; "
            f"got {replicates}. Use --replicates 8 or more for stable intervals."
        )
    spec = _inputs_spec(inputs)
    notices: list[str] = []
    d = feature_count(model)
    names, laws = spec.resolve(d, model.feature_names())
    if spec.names is None and isinstance(model, PythonModel):
        names = [f"x{i}" for i in range(d)]
    out_names = model.output_names()
    if spec.outputs is not None:
        if len(spec.outputs) != len(out_names):
            raise UserError(
                f"The input spec {spec.source} names {len(spec.outputs)} outputs but the model has "
                f"{len(out_names)} output units. Fix [outputs] names in the spec."
            )
        out_names = list(spec.outputs)
    n_points = int(points)
    if sampler == "sobol":
        n_points = round_points(n_points)
        if n_points != int(points):
            notices.append(
                f"points rounded up from {points} to {n_points}, a power of two, as scrambled Sobol' points need."
            )
    chosen = select_layers(model, layers)
    for name in unit_detail:
        if name not in {x.name for x in chosen}:
            raise UserError(f"--unit-detail names layer '{name}', which is not captured; add it to --layers.")
    design = Design(laws, n_points, int(replicates), resolve_seed(seed), sampler)
    k = len(out_names)
    groups = [engine.Group(OUTPUTS, k, True)]
    groups += [engine.Group("layer:" + x.name, x.units, x.name in unit_detail) for x in chosen]
    units = sum(g.units for g in groups)
    budget = None if memory_limit is None else memory_limit // 2
    blk = block or engine.plan_block(n_points, d, units, estimator, budget)
    need = engine.estimate_memory(design, groups, estimator, blk)
    have = memory_limit if memory_limit is not None else engine.available_memory()
    if need > 0.8 * have:
        raise UserError(
            f"This run would need about {need / 2**30:.1f} GiB of memory but {have / 2**30:.1f} GiB is "
            f"available. Capture fewer layers (--layers NAME,... or none), drop --unit-detail, or use "
            f"fewer replicates."
        )
    notices.extend(getattr(model, "notices", []) or [])
    return Setup(model, names, laws, out_names, chosen, design, estimator, groups, blk, notices, spec)


def intervals(v: np.ndarray) -> list[Estimate]:
    est, lo, hi, se = t_interval(v, LEVEL, axis=0)
    return [
        Estimate(float(a), float(b), float(c), float(s))
        for a, b, c, s in zip(np.atleast_1d(est), np.atleast_1d(lo), np.atleast_1d(hi), np.atleast_1d(se), strict=True)
    ]


@dataclass
class GroupStats:
    """Per-randomization arrays of one group, shape (R, ...)."""

    mean: np.ndarray
    var: np.ndarray
    total: np.ndarray | None
    first: np.ndarray | None
    total_sum: np.ndarray
    inert: np.ndarray

    @classmethod
    def of(cls, accs: list[Accumulator], sampler: str) -> GroupStats:
        reps = [a.estimates(ddof=0 if sampler == "sobol" else 1) for a in accs]
        mean = np.array([r.mean for r in reps])
        var = np.array([r.variance for r in reps])
        total = None if reps[0].total is None else np.array([r.total for r in reps])
        first = None if reps[0].first is None else np.array([r.first for r in reps])
        total_sum = np.array([r.total_sum for r in reps])
        inert = is_inert(mean.mean(axis=0), var.mean(axis=0))
        return cls(mean, var, total, first, total_sum, inert)

    def ratio(self, num: np.ndarray) -> np.ndarray:
        """num / variance per randomization, NaN where the variance is 0."""
        var = self.var if num.ndim == self.var.ndim else self.var[:, None, :]
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(var > 0, num / np.where(var > 0, var, 1.0), np.nan)


def output_results(stats: GroupStats, names: list[str], features: list[str]) -> list[OutputResult]:
    means, variances = intervals(stats.mean), intervals(stats.var)
    nus = intervals(stats.ratio(stats.total_sum))
    tot = [intervals(x) for x in stats.ratio(stats.total).transpose(1, 0, 2)] if stats.total is not None else None
    fo = [intervals(x) for x in stats.ratio(stats.first).transpose(1, 0, 2)] if stats.first is not None else None
    results = []
    for k, name in enumerate(names):
        inert = bool(stats.inert[k])
        results.append(
            OutputResult(
                name=name,
                mean=means[k],
                variance=variances[k],
                mean_dimension=None if inert else nus[k],
                total_index=[]
                if inert or tot is None
                else [FeatureEstimate(f, tot[j][k]) for j, f in enumerate(features)],
                first_order=[]
                if inert or fo is None
                else [FeatureEstimate(f, fo[j][k]) for j, f in enumerate(features)],
                inert=inert,
            )
        )
    return results


def layer_result(info: LayerInfo, stats: GroupStats, features: list[str]) -> LayerResult:
    unit_names = index_names(info.name, info.shape)
    variances = intervals(stats.var)
    nus = intervals(stats.ratio(stats.total_sum))
    tot = [intervals(x) for x in stats.ratio(stats.total).transpose(1, 0, 2)] if stats.total is not None else None
    units = []
    for u, name in enumerate(unit_names):
        inert = bool(stats.inert[u])
        units.append(
            UnitResult(
                unit=name,
                variance=variances[u],
                mean_dimension=None if inert else nus[u],
                inert=inert,
                total_index=[]
                if inert or tot is None
                else [FeatureEstimate(f, tot[j][u]) for j, f in enumerate(features)],
            )
        )
    live = ~stats.inert
    nu_live = np.array([nus[u].estimate for u in np.flatnonzero(live)])
    # variance-weighted mean of nu = sum of all total indices / sum of variances, per randomization
    weighted = stats.total_sum[:, live].sum(axis=1) / stats.var[:, live].sum(axis=1) if live.any() else None
    w = intervals(weighted)[0] if weighted is not None else None
    q = (lambda p: float(np.quantile(nu_live, p))) if len(nu_live) else (lambda p: float("nan"))
    summary: dict[str, Any] = {
        "units": len(unit_names),
        "inert_units": int(stats.inert.sum()),
        "nu_min": q(0.0),
        "nu_median": q(0.5),
        "nu_p90": q(0.9),
        "nu_max": q(1.0),
        "nu_weighted": w.estimate if w else float("nan"),
        "nu_weighted_ci_low": w.ci_low if w else float("nan"),
        "nu_weighted_ci_high": w.ci_high if w else float("nan"),
    }
    return LayerResult(info.name, info.op, tuple(info.shape), summary, units)


def inputs_info(setup: Setup) -> list[dict[str, Any]]:
    """Names, laws and units of the inputs, as the JSON report lists them."""
    units = list(setup.spec.units) if setup.spec.units else [""] * len(setup.names)
    return [
        {"name": n, **law.to_dict(), **({"unit": u} if u else {})}
        for n, law, u in zip(setup.names, setup.laws, units, strict=True)
    ]


def design_info(setup: Setup, seconds: float) -> dict[str, Any]:
    """The design of a run, as the JSON report records it."""
    return {
        "points": setup.design.points,
        "replicates": setup.design.replicates,
        "seed": setup.design.seed,
        "sampler": setup.design.sampler,
        "estimator": setup.estimator,
        "evaluations": setup.evaluations,
        "block": setup.block,
        "interval": f"Student-t over {setup.design.replicates} independent randomizations, {LEVEL:.0%}",
        "level": LEVEL,
        "seconds": round(seconds, 3),
        **({"spec": setup.spec.source} if setup.spec.source.endswith(".toml") else {}),
    }


def _inputs_entry(model: Model) -> dict[str, Any]:
    """``input`` for a model with one input tensor (as reports always had), else ``inputs``."""
    entries = [{"name": t.name, "shape": list(t.shape)} for t in model.inputs]
    return {"input": entries[0]} if len(entries) == 1 else {"inputs": entries}


def model_info(setup: Setup) -> dict[str, Any]:
    """Where the model came from and its signature, as the JSON report records it."""
    model = setup.model
    info: dict[str, Any] = {
        "source": model.source,
        "format": model.format,
        **_inputs_entry(model),
        "outputs": [{"name": t.name, "shape": list(t.shape)} for t in model.outputs],
    }
    if setup.spec.title:
        info["title"] = setup.spec.title
    if setup.spec.output_units:
        info["output_units"] = list(setup.spec.output_units)
    return info


def execute(
    setup: Setup,
    *,
    progress: Callable[[int, str], None] | None = None,
    checkpoint: str | None = None,
    executor: Any = None,
) -> AuditResult:
    """Run a prepared audit and build its result.

    ``executor`` runs the engine's tasks elsewhere: pass a ``dask.distributed.Client``
    (see :mod:`audit.cluster`) or a callable as for :func:`audit.engine.run`.
    """
    if executor is not None and not callable(executor):
        from .cluster import dask_executor

        executor = dask_executor(
            executor, setup.evaluator(), setup.design, setup.groups, setup.estimator, setup.names, setup.dtype
        )
    t0 = time.perf_counter()
    accs = engine.run(
        setup.evaluator(),
        setup.design,
        setup.groups,
        setup.estimator,
        block=setup.block,
        progress=progress,
        checkpoint=checkpoint,
        feature_names=setup.names,
        executor=executor,
        dtype=setup.dtype,
    )
    seconds = time.perf_counter() - t0
    outputs = output_results(GroupStats.of(accs[OUTPUTS], setup.design.sampler), setup.output_names, setup.names)
    layers = [
        layer_result(x, GroupStats.of(accs["layer:" + x.name], setup.design.sampler), setup.names) for x in setup.layers
    ]
    design = design_info(setup, seconds)
    return AuditResult(model_info(setup), inputs_info(setup), design, outputs, layers, list(setup.notices))


def audit_model(
    model: Model,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    points: int = 1024,
    replicates: int = 8,
    seed: int | np.random.Generator | None = None,
    sampler: str = "sobol",
    estimator: str = "jansen",
    layers: str | Sequence[str] = "activations",
    unit_detail: Sequence[str] = (),
    progress: Callable[[int, str], None] | None = None,
    checkpoint: str | None = None,
    block: int | None = None,
    executor: Any = None,
) -> AuditResult:
    """Audit a model: variance, mean dimension and Sobol' indices of every output and hidden unit.

    Parameters
    ----------
    model : Model or str
        An opened model (:func:`audit.models.open.open_model`) or a path / reference to open.
    inputs : InputSpec, {"normal", "uniform"}, sequence of Law, optional
        Input laws (default: every input N(0, 1)).
    points : int
        N per randomization (rounded up to a power of two for Sobol' points).
    replicates : int
        R independent randomizations (at least 2).
    seed : int or numpy.random.Generator, optional
    sampler : {"sobol", "mc"}
    estimator : {"jansen", "fast"}
    layers : {"activations", "all", "none"} or list of str
    unit_detail : list of str
        Layers whose units also get per-input total indices.
    progress : callable, optional
        ``progress(evaluations, phase)`` after each task.
    checkpoint : str, optional
        File that keeps finished work; a rerun with the same arguments resumes from it.
    block : int, optional
        Points per task (default: from the memory budget).
    executor : dask.distributed.Client, optional
        Run the tasks on a cluster (:mod:`audit.cluster`); same answer up to rounding.

    Returns
    -------
    AuditResult
    """
    if isinstance(model, str):
        from .models.open import open_model

        spec = _inputs_spec(inputs)
        model = open_model(model, dim=spec.dim, **_model_options(spec))
    setup = prepare(
        model,
        inputs,
        points=points,
        replicates=replicates,
        seed=seed,
        sampler=sampler,
        estimator=estimator,
        layers=layers,
        unit_detail=unit_detail,
        block=block,
    )
    return execute(setup, progress=progress, checkpoint=checkpoint, executor=executor)


def _model_options(spec: InputSpec) -> dict[str, Any]:
    opts: dict[str, Any] = {}
    if "class" in spec.model:
        opts["torch_class"] = spec.model["class"]
        opts["torch_arguments"] = spec.model.get("arguments", {})
    return opts


def function_model(
    func: Callable[[np.ndarray], np.ndarray],
    inputs: InputSpec | str | Sequence[Law] | None,
    dim: int | None,
) -> tuple[PythonModel, InputSpec]:
    """A Python function as a model, with its input spec; d from ``dim`` or the spec."""
    spec = _inputs_spec(inputs)
    d = dim if dim is not None else spec.dim
    if d is None:
        raise UserError("The number of inputs is unknown: pass dim=D or an InputSpec that lists the features.")
    source = getattr(func, "__module__", "") + ":" + getattr(func, "__qualname__", repr(func))
    return PythonModel(func, d, source=source), spec


def audit_function(
    func: Callable[[np.ndarray], np.ndarray],
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    dim: int | None = None,
    **options: Any,
) -> AuditResult:
    """Audit a Python function of d independent inputs.

    Parameters
    ----------
    func : callable
        Maps an (n, d) float64 array to (n,) or (n, k).
    inputs : InputSpec, {"normal", "uniform"}, sequence of Law, optional
        Input laws; with a law name, ``dim`` gives d.
    dim : int, optional
        Number of inputs when ``inputs`` does not fix it.
    **options
        As for :func:`audit_model` (``points``, ``replicates``, ``seed``, ``sampler``, ``estimator``).

    Returns
    -------
    AuditResult

    Examples
    --------
    >>> import numpy as np, audit
    >>> r = audit.audit_function(lambda x: x.sum(axis=1), "uniform", dim=3, seed=1)
    >>> r.outputs[0].mean_dimension.covers(1.0)
    True
    """
    model, spec = function_model(func, inputs, dim)
    options.setdefault("layers", "none")
    return audit_model(model, spec, **options)


def model_signature(model: Model) -> ModelSignature:
    """The signature of an opened model, as ``netdim layers`` shows it."""
    tensor = lambda t: TensorEntry(t.name, tuple(t.shape), t.dtype)  # noqa: E731
    layers = [LayerEntry(x.name, x.op, tuple(x.shape), x.activation) for x in model.layers()]
    return ModelSignature(
        model.source,
        model.format,
        [tensor(t) for t in model.inputs],
        [tensor(t) for t in model.outputs],
        layers,
        list(getattr(model, "notices", []) or []),
    )
