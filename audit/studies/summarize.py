"""From per-randomization sums to result objects: estimates with intervals, and run descriptions.

:class:`GroupStats` collects the per-randomization estimates of one group of
units; :func:`output_results` and :func:`layer_result` turn them into
:mod:`audit.results` objects (ratios such as normalised indices and ν are
formed per randomization, then averaged, with Student-t intervals from
:mod:`audit.estimators.intervals`). :func:`model_info`, :func:`inputs_info` and
:func:`design_info` describe a run the way the JSON report records it.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import Any

import numpy as np

from ..estimators import LEVEL, is_inert, unreliable
from ..estimators.intervals import Interval, t_interval
from ..models.base import LayerInfo, Model, index_names
from ..results import Estimate, FeatureEstimate, LayerResult, OutputResult, UnitResult
from ..results.signature import LayerEntry, ModelSignature, TensorEntry
from .setup import Setup

__all__ = [
    "GroupStats",
    "design_info",
    "estimate",
    "estimates",
    "groups_info",
    "inputs_info",
    "kept_units",
    "layer_result",
    "model_info",
    "model_signature",
    "output_results",
    "run_choices",
]


def estimates(interval: Interval) -> list[Estimate]:
    """One :class:`Estimate` per entry of a 1-d :class:`Interval`."""
    parts = (np.atleast_1d(x) for x in interval)
    return [Estimate(float(a), float(b), float(c), float(s)) for a, b, c, s in zip(*parts, strict=True)]


def estimate(interval: Interval) -> Estimate:
    """The :class:`Estimate` of a scalar :class:`Interval`."""
    return estimates(interval)[0]


def intervals(values: np.ndarray) -> list[Estimate]:
    """Per-column estimates of per-randomization values (randomizations on axis 0)."""
    return estimates(t_interval(values, LEVEL, axis=0))


def per_input(values: np.ndarray | None) -> list[list[Estimate]] | None:
    """Estimates of per-randomization values of shape (R, d, k): one list of k per input (one interval call)."""
    if values is None:
        return None
    iv = t_interval(values, LEVEL, axis=0)
    return [estimates(Interval(*(x[j] for x in iv))) for j in range(values.shape[1])]


@dataclass
class GroupStats:
    """Per-randomization arrays of one group, shape (R, ...)."""

    mean: np.ndarray
    var: np.ndarray
    total: np.ndarray | None
    first: np.ndarray | None
    total_sum: np.ndarray
    inert: np.ndarray
    eps: np.ndarray

    @classmethod
    def of(cls, sums: list[Any], ddof: int, eps: float | np.ndarray = 2.0**-23) -> GroupStats:
        """Per-randomization estimates of a group; ``eps`` is the machine epsilon of its values (per unit)."""
        reps = [s.finish(ddof) for s in sums]
        mean = np.array([r.mean for r in reps])
        var = np.array([r.variance for r in reps])
        total = None if reps[0].total is None else np.array([r.total for r in reps])
        first = None if reps[0].first is None else np.array([r.first for r in reps])
        total_sum = np.array([r.total_sum for r in reps])
        eps = np.broadcast_to(np.asarray(eps, dtype=np.float64), mean.shape[1:]).copy()
        inert = is_inert(mean.mean(axis=0), var.mean(axis=0), eps)
        return cls(mean, var, total, first, total_sum, inert, eps)

    @classmethod
    def from_arrays(
        cls,
        mean: np.ndarray,
        var: np.ndarray,
        total: np.ndarray | None,
        first: np.ndarray | None,
        total_sum: np.ndarray,
        eps: np.ndarray | None = None,
    ) -> GroupStats:
        """Per-randomization arrays kept elsewhere (a saved report), with the inert test redone."""
        eps = np.broadcast_to(np.asarray(2.0**-23 if eps is None else eps, dtype=np.float64), mean.shape[1:]).copy()
        inert = is_inert(mean.mean(axis=0), var.mean(axis=0), eps)
        return cls(mean, var, total, first, total_sum, inert, eps)

    def why_unreliable(self, k: int, nu: Estimate, totals: list[Estimate], d: int) -> str:
        """Why unit ``k``'s ν or a total index cannot be trusted ("" when they can)."""
        mean, var, eps = float(self._unit_means[0][k]), float(self._unit_means[1][k]), float(self.eps[k])
        why = unreliable(nu.ci_low, nu.ci_high, d, mean, var, eps)
        if why:
            return f"{why}: the interval of ν [{nu.ci_low:.3g}, {nu.ci_high:.3g}] says nothing within [1, {d}]"
        for e in totals:
            why = unreliable(e.ci_low, e.ci_high, 1, mean, var, eps, lower=0.0)
            if why:
                return f"{why}: a total index's interval [{e.ci_low:.3g}, {e.ci_high:.3g}] says nothing within [0, 1]"
        return ""

    @cached_property
    def _unit_means(self) -> tuple[np.ndarray, np.ndarray]:
        """Mean and variance of every unit over the randomizations (once for all units)."""
        return self.mean.mean(axis=0), self.var.mean(axis=0)

    def weighted_nu(self, keep: np.ndarray | None = None) -> np.ndarray:
        """Per randomization, Σ total indices / Σ variances over the units kept (live ones by default)."""
        live = ~self.inert if keep is None else keep
        if not live.any():
            return np.full(self.var.shape[0], np.nan)
        return self.total_sum[:, live].sum(axis=1) / self.var[:, live].sum(axis=1)

    def ratio(self, num: np.ndarray) -> np.ndarray:
        """num / variance per randomization, NaN where the variance is 0."""
        var = self.var if num.ndim == self.var.ndim else self.var[:, None, :]
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(var > 0, num / np.where(var > 0, var, 1.0), np.nan)


def _features(per_input: list[list[Estimate]] | None, k: int, features: list[str], inert: bool) -> list:
    if inert or per_input is None:
        return []
    return [FeatureEstimate(f, per_input[j][k]) for j, f in enumerate(features)]


def output_results(
    stats: GroupStats, names: list[str], features: list[str], relations: dict[str, str] | None = None
) -> list[OutputResult]:
    """One :class:`OutputResult` per output unit of the group (``relations``: exact affine relations by name)."""
    means, variances = intervals(stats.mean), intervals(stats.var)
    nus = intervals(stats.ratio(stats.total_sum))
    tot = per_input(stats.ratio(stats.total)) if stats.total is not None else None
    fo = per_input(stats.ratio(stats.first)) if stats.first is not None else None
    results = []
    for k, name in enumerate(names):
        inert = bool(stats.inert[k])
        total_index = _features(tot, k, features, inert)
        why = "" if inert else stats.why_unreliable(k, nus[k], [f.value for f in total_index], len(features))
        results.append(
            OutputResult(
                name=name,
                mean=means[k],
                variance=variances[k],
                mean_dimension=None if inert else nus[k],
                total_index=total_index,
                first_order=_features(fo, k, features, inert),
                inert=inert,
                unreliable=why,
                relation=(relations or {}).get(name, ""),
            )
        )
    return results


def layer_result(info: LayerInfo, stats: GroupStats, features: list[str]) -> LayerResult:
    """The :class:`LayerResult` of one hidden layer: every unit and a summary."""
    unit_names = index_names(info.name, info.shape)
    variances = intervals(stats.var)
    nus = intervals(stats.ratio(stats.total_sum))
    tot = per_input(stats.ratio(stats.total)) if stats.total is not None else None
    units = []
    d = len(features)
    for u, name in enumerate(unit_names):
        inert = bool(stats.inert[u])
        total_index = _features(tot, u, features, inert)
        why = "" if inert else stats.why_unreliable(u, nus[u], [f.value for f in total_index], d)
        units.append(
            UnitResult(
                unit=name,
                variance=variances[u],
                mean_dimension=None if inert else nus[u],
                inert=inert,
                total_index=total_index,
                unreliable=why,
            )
        )
    doubtful = np.array([bool(x.unreliable) for x in units], dtype=bool)
    live = ~stats.inert & ~doubtful
    nu_live = np.array([nus[u].estimate for u in np.flatnonzero(live)])
    # variance-weighted mean of nu = sum of all total indices / sum of variances, per randomization
    w = intervals(stats.weighted_nu(live))[0] if live.any() else None
    q = _quantile(np.sort(nu_live))
    summary: dict[str, Any] = {
        "units": len(unit_names),
        "inert_units": int(stats.inert.sum()),
        "unreliable_units": int(doubtful.sum()),
        "nu_min": q(0.0),
        "nu_median": q(0.5),
        "nu_p90": q(0.9),
        "nu_max": q(1.0),
        "nu_weighted": w.estimate if w else float("nan"),
        "nu_weighted_ci_low": w.ci_low if w else float("nan"),
        "nu_weighted_ci_high": w.ci_high if w else float("nan"),
    }
    return LayerResult(info.name, info.op, tuple(info.shape), summary, units)


def _quantile(ordered: np.ndarray) -> Any:
    """p -> the p-quantile of the sorted values, interpolated linearly (numpy's default ``linear``
    method, without the first call of ``np.quantile``, which costs milliseconds); NaN if none."""
    n = len(ordered)
    if n == 0:
        return lambda p: float("nan")
    return lambda p: float(np.interp(p * (n - 1), np.arange(n), ordered))


def kept_units(layer: LayerResult) -> np.ndarray:
    """Units of a layer that count in its summaries: neither inert nor unreliable."""
    return np.array([not (u.inert or u.unreliable) for u in layer.units], dtype=bool)


def inputs_info(setup: Setup) -> list[dict[str, Any]]:
    """Names, laws and units of the inputs, as the JSON report lists them (a one-hot input: its columns too)."""
    v = setup.variables
    if v is None:
        units = list(setup.spec.units) if setup.spec.units else [""] * len(setup.names)
        return [
            {"name": n, **law.to_dict(), **({"unit": u} if u else {})}
            for n, law, u in zip(setup.names, setup.laws, units, strict=True)
        ]
    out = []
    for name, law, unit, cols in zip(v.names, v.laws, v.units, v.columns, strict=True):
        entry: dict[str, Any] = {"name": name, **law.to_dict(), **({"unit": unit} if unit else {})}
        if len(cols) > 1:
            entry["one_hot"] = [v.column_names[c] for c in cols]
        out.append(entry)
    return out


def groups_info(setup: Setup) -> list[dict[str, Any]]:
    """The groups of a grouped view: name and input names of each (empty for the inputs view)."""
    if setup.view is None or setup.variables is None or setup.view.kind != "groups":
        return []
    return setup.view.describe(setup.variables)


def design_info(setup: Setup, seconds: float) -> dict[str, Any]:
    """The design of a run, as the JSON report records it."""
    return {
        "points": setup.design.points,
        "replicates": setup.design.replicates,
        "seed": setup.design.seed,
        "sampler": setup.design.sampler,
        "estimator": setup.estimator.name,
        "estimator_label": setup.estimator.label,
        "evaluations": setup.job_evaluations,
        "block": setup.block,
        "interval": f"Student-t over {setup.design.replicates} independent randomizations, {LEVEL:.0%}",
        "level": LEVEL,
        "seconds": round(seconds, 3),
        **({"spec": setup.spec.source} if setup.spec.source.endswith(".toml") else {}),
        **({"view": setup.view.kind} if setup.view is not None and setup.view.kind != "inputs" else {}),
        **({"options": options} if (options := run_choices(setup)) else {}),
    }


#: Options a model was opened with that a command line must repeat (the ``open_args`` keys).
_OPEN_CHOICES = ("input_shape", "torch_class", "torch_arguments", "trust")


def run_choices(setup: Setup) -> dict[str, Any]:
    """What a command repeating this run must give beyond the model, inputs and design.

    The model's opening options (``input_shape``, ``torch_class``,
    ``torch_arguments``, ``trust``) and the run's choices (``layers``,
    ``unit_detail``, ``outputs``), each only when it differs from the default;
    the JSON report keeps them as ``design.options`` so that a report's
    suggested commands can be pasted as they are.
    """
    opened = getattr(setup.model, "open_args", None) or {}
    out: dict[str, Any] = {}
    for key in _OPEN_CHOICES:
        value = opened.get(key)
        if not value:
            continue
        if key == "input_shape":
            value = {str(k): list(v) for k, v in value.items()} if isinstance(value, dict) else list(value)
        out[key] = value
    out.update(getattr(setup, "choices", {}) or {})
    return out


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


def model_signature(model: Model) -> ModelSignature:
    """The signature of an opened model, as ``netdim layers`` shows it."""

    def tensor(t: Any) -> TensorEntry:
        return TensorEntry(t.name, tuple(t.shape), t.dtype)

    layers = [LayerEntry(x.name, x.op, tuple(x.shape), x.activation, getattr(x, "tensor", "")) for x in model.layers()]
    return ModelSignature(
        model.source,
        model.format,
        [tensor(t) for t in model.inputs],
        [tensor(t) for t in model.outputs],
        layers,
        list(getattr(model, "notices", []) or []),
    )
