"""Plain-language descriptions shared by every report: input laws, the run, one output.

The header of an audit, a comparison and an advise report is a list of
labelled rows (:class:`~audit.report.document.Field`): the model, the input
laws (:func:`describe_inputs`), the design and the run (:func:`describe_design`),
and every notice of the run. :func:`describe_output` is the one line under an
output's title. Numbers come from :mod:`audit.report.text`; numbers are joined
to their labels and units by :data:`~audit.report.text.GLUE` so that wrapping
never separates them.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from ..results import LayerResult, OutputResult
from .document import Field
from .text import finite, fmt, fmt_count, fmt_duration, fmt_interval, fmt_setting, glue

__all__ = [
    "describe_comparison_run",
    "describe_design",
    "describe_groups",
    "describe_inputs",
    "describe_law",
    "describe_model",
    "describe_output",
    "describe_run",
    "layer_inert",
    "layer_units",
    "output_units",
]

# Parameter order of the known marginal laws; other laws list their keys as given.
_LAW_PARAMETERS = {
    "normal": ("mean", "sd"),
    "uniform": ("low", "high"),
    "lognormal": ("log_mean", "log_sd"),
    "triangular": ("low", "mode", "high"),
    "truncated_normal": ("mean", "sd", "low", "high"),
    "log_uniform": ("low", "high"),
}
_NOT_PARAMETERS = {"name", "law", "unit", "note", "one_hot"}
_LISTED_VALUES = 6
#: The notice of a run whose laws were assumed starts so (:data:`audit.inputs.spec.ASSUMED_NOTICE`).
ASSUMED = "Every input was taken as N(0, 1)"
_LISTED_INPUTS = 8
_LISTED_LAWS = 3

_SAMPLERS = {"sobol": "scrambled Sobol' points (RQMC)", "mc": "plain Monte Carlo"}
_ESTIMATORS = {
    "jansen": "Jansen estimator (total and first-order indices)",
    "fast": "one-coordinate estimator (mean dimension only)",  # reports saved before the label was recorded
}


def _special_law(entry: Mapping[str, Any]) -> str | None:
    """Discrete and empirical laws, and one-hot inputs, in a few words."""
    law = entry.get("law")
    if law == "discrete":
        names = [str(x) for x in entry.get("labels") or []] or [fmt_setting(v) for v in entry.get("values", [])]
        text = (
            f"discrete({', '.join(names)})"
            if len(names) <= _LISTED_VALUES
            else (f"discrete({len(names)} values, {names[0]}..{names[-1]})" if names else "discrete")
        )
        cols = entry.get("one_hot")
        return f"one-hot over {len(cols)} columns, {text}" if cols else text
    if law == "empirical":
        where = f"{entry['source']}, " if entry.get("source") else ""
        span = f"{fmt_setting(entry.get('low'))} to {fmt_setting(entry.get('high'))}"
        return f"empirical({where}{entry.get('knots', '?')} knots, {span})"
    return None


def describe_law(entry: Mapping[str, Any]) -> str:
    """One input's law: ``uniform(0, 16) W/m²``, ``triangular(0, 0.2, 1)``, ``empirical(178 knots, 11 to 14.8)``."""
    special = _special_law(entry)
    if special is not None:
        unit = entry.get("unit")
        return f"{special} {unit}" if unit else special
    law = str(entry.get("law", "?"))
    keys = _LAW_PARAMETERS.get(law) or tuple(k for k in entry if k not in _NOT_PARAMETERS)
    params = ", ".join(fmt_setting(entry[k]) for k in keys if k in entry)
    text = f"{law}({params})" if params else law
    unit = entry.get("unit")
    return f"{text} {unit}" if unit else text


def describe_inputs(inputs: Sequence[Mapping[str, Any]]) -> tuple[str, ...]:
    """The input laws in a few lines.

    Parameters
    ----------
    inputs : sequence of dict
        ``AuditResult.inputs``: ``name``, ``law`` and the law's parameters.

    Returns
    -------
    tuple of str
        One line ``"64 inputs, all uniform(0, 16)"`` when one law serves every
        input; otherwise, with at most 8 inputs, a first line ``"8 inputs:"``
        and one line per input (``"wind_speed uniform(0, 12) m/s"``); with more,
        one line counting the inputs per distinct law when there are at most 3,
        else per law family (``"100 inputs: uniform (60), normal (40)"``).
    """
    n = len(inputs)
    if n == 0:
        return ("no inputs recorded",)
    noun = "input" if n == 1 else "inputs"
    laws: dict[str, int] = {}
    for entry in inputs:
        key = describe_law(entry)
        laws[key] = laws.get(key, 0) + 1
    if len(laws) == 1:
        return (f"{n} {noun}, all {next(iter(laws))}",)
    if n <= _LISTED_INPUTS:
        return (f"{n} {noun}:", *(f"{e.get('name', i)} {describe_law(e)}" for i, e in enumerate(inputs)))
    if len(laws) > _LISTED_LAWS:
        laws = {}
        for entry in inputs:
            family = str(entry.get("law", "?"))
            laws[family] = laws.get(family, 0) + 1
    return (f"{n} {noun}: " + ", ".join(f"{law} ({count})" for law, count in laws.items()),)


def describe_model(model: Mapping[str, Any] | None) -> str:
    """``model_zoo/greenhouse_v1.onnx (onnx)``: where a model came from and its format."""
    model = model or {}
    source = str(model.get("source", "unknown model"))
    form = model.get("format")
    return f"{source} ({form})" if form else source


def describe_design(design: Mapping[str, Any]) -> list[Field]:
    """The ``design``, ``run`` and ``intervals`` rows of a report header.

    Parameters
    ----------
    design : dict
        A result's ``design``: ``points``, ``replicates``, ``sampler``,
        ``estimator``, ``seed``, ``paired`` (comparisons), ``evaluations``,
        ``seconds`` and ``interval``; missing keys are left out.

    Returns
    -------
    list of Field
        The rows that have something to say, in that order; the run time is
        formatted by :func:`~audit.report.text.fmt_duration`.
    """
    rows = []
    parts = []
    if "points" in design:
        parts.append(glue(f"N = {fmt_count(design['points'])} points"))
    if "replicates" in design:
        r = design["replicates"]
        parts.append(glue(f"R = {fmt_count(r)} randomization{'' if r == 1 else 's'}"))
    if "sampler" in design:
        parts.append(_SAMPLERS.get(str(design["sampler"]), str(design["sampler"])))
    if design.get("estimator_label"):
        parts.append(str(design["estimator_label"]))
    elif "estimator" in design:
        parts.append(_ESTIMATORS.get(str(design["estimator"]), str(design["estimator"])))
    if "paired" in design:
        parts.append("same points for both (paired)" if design["paired"] else "independent points")
    if design.get("seed") is not None:
        parts.append(glue(f"seed {design['seed']}"))
    if parts:
        rows.append(Field("design", ", ".join(parts)))
    run = []
    if "evaluations" in design:
        run.append(f"{fmt_count(design['evaluations'])} model evaluations")
    if finite(design.get("seconds")):
        run.append(f"in {glue(fmt_duration(design['seconds']))}")
    if run:
        rows.append(Field("run", " ".join(run)))
    if design.get("interval"):
        rows.append(Field("intervals", str(design["interval"])))
    return rows


def _inputs_field(inputs: Sequence[Mapping[str, Any]]) -> Field:
    first, *rest = describe_inputs(inputs)
    return Field("inputs", first, tuple(rest))


def describe_run(result: Any) -> list[Field]:
    """The header rows of an audit or an advise run: model, inputs, design, run, notices.

    Parameters
    ----------
    result : AuditResult or AdviceResult
        Anything with ``model``, ``inputs``, ``design`` and ``notices``.

    Returns
    -------
    list of Field
        Rows in display order; every notice gets its own ``"notice"`` row
        (in the ``"warning"`` tone).
    """
    rows = [Field("model", describe_model(result.model)), _inputs_field(result.inputs)]
    rows += _assumed(result.notices)
    groups = getattr(result, "groups", None) or []
    if groups:
        rows.append(_groups_field(groups))
    rows += describe_design(result.design or {})
    rows += [Field("notice", str(n), tone="warning") for n in result.notices if not str(n).startswith(ASSUMED)]
    return rows


def _assumed(notices: Sequence[Any]) -> list[Field]:
    """The notice that the laws were assumed, shown right under the inputs (the report's first lines)."""
    return [Field("notice", str(n), tone="alert") for n in notices if str(n).startswith(ASSUMED)]


def _groups_field(groups: Sequence[Mapping[str, Any]]) -> Field:
    """``16 groups of 4 inputs; indices and ν count groups`` and, for a few groups, their members."""
    sizes = sorted({len(g.get("inputs", [])) for g in groups})
    size = (
        f"of {sizes[0]} input{'s' if sizes[0] != 1 else ''}"
        if len(sizes) == 1
        else f"of {sizes[0]} to {sizes[-1]} inputs"
    )
    first = f"{len(groups)} groups {size}: every index is a group's, ν counts groups (1 ≤ ν ≤ {len(groups)})"
    rest = ()
    if len(groups) <= _LISTED_INPUTS:
        rest = tuple(f"{g.get('name')}: {', '.join(map(str, g.get('inputs', [])))}" for g in groups)
    return Field("groups", first, rest)


def describe_groups(result: Any) -> list[Field]:
    """The header rows of a grouped view: its groups and its own run."""
    rows = [_groups_field(result.groups)] if result.groups else []
    run = describe_design({k: v for k, v in (result.design or {}).items() if k in ("evaluations", "seconds")})
    return rows + run


def describe_comparison_run(result: Any) -> list[Field]:
    """The header rows of a comparison: old and new model, inputs, design, run, notices."""
    rows = [
        Field("old", describe_model(result.old_model)),
        Field("new", describe_model(result.new_model)),
        _inputs_field(result.inputs),
    ]
    rows += _assumed(result.notices)
    rows += describe_design(result.design or {})
    rows += [Field("notice", str(n), tone="warning") for n in result.notices if not str(n).startswith(ASSUMED)]
    return rows


def output_units(result: Any) -> dict[str, str]:
    """The unit of each output by name, from the spec's ``[outputs] units`` recorded in ``model.output_units``.

    Units are matched to the outputs in order when there is one per output
    recorded; otherwise (some outputs left out of the run) none is shown.
    """
    model = getattr(result, "model", None) or {}
    units = model.get("output_units") or []
    outputs = getattr(result, "outputs", [])
    if len(units) != len(outputs):
        return {}
    return {o.name: str(u) for o, u in zip(outputs, units, strict=True) if u and str(u) != "1"}


def describe_output(output: OutputResult, unit: str = "") -> str:
    """One line under an output's title: mean and variance (in ``unit``), ν with interval, additive share."""
    squared = f" ({unit})²" if unit else ""
    mean = f"mean {glue(f'{fmt(output.mean.estimate)} {unit}'.strip())}"
    variance = f"variance {glue(fmt(output.variance.estimate) + squared)}"
    if output.inert or output.mean_dimension is None:
        return f"{mean}, {variance}: constant under these input laws"
    nu = output.mean_dimension
    text = f"{mean}, {variance}, mean dimension ν {fmt(nu.estimate)} {fmt_interval(nu.ci_low, nu.ci_high)}"
    if output.first_order:
        text += f", additive share {fmt(output.additive_share)}"
    return text


def layer_units(layer: LayerResult) -> Any:
    """Units of a hidden layer: the summary's count, else the units recorded, else its shape's size."""
    if "units" in layer.summary:
        return layer.summary["units"]
    return len(layer.units) if layer.units else math.prod(layer.shape)


def layer_inert(layer: LayerResult) -> Any:
    """Constant units of a hidden layer: the summary's count, else those recorded as inert."""
    if "inert_units" in layer.summary:
        return layer.summary["inert_units"]
    return sum(u.inert for u in layer.units)
