"""What an audit report says: formatted numbers, summaries and plain-language findings.

This module decides the *content* of a report; :mod:`audit.report.terminal`
and :mod:`audit.report.markdown` only lay it out. Both renderers take every
number, row and sentence from here, so the terminal and the Markdown export
show identical figures with identical rounding.

Numbers are shown with :data:`SIGNIFICANT_DIGITS` significant digits
(:func:`fmt`), in fixed notation between 0.001 and 100 000 and in scientific
notation outside that range.

Findings are derived from the numbers with the rules of thumb below. They are
common practice, no source: they are reading aids, not statistical tests.

``NEARLY_ADDITIVE_NU = 1.1``
    An output whose mean dimension ν stays below 1.1 even at the upper end of
    its 95 % interval is nearly additive: almost all of its variance comes from
    inputs acting one at a time. Such functions suit quasi-Monte Carlo
    integration well and one-input-at-a-time explanations miss little.
``INTERACTION_NU = 1.5`` and ``ADDITIVE_SHARE_FLOOR = 0.7``
    An output with ν above 1.5, or whose first-order indices add up to less
    than 0.7 of its variance, is dominated by interactions: its inputs cannot
    be read one at a time.
``threshold`` (default ``DEFAULT_THRESHOLD = 0.001``)
    An input whose normalised total index stays below the threshold even at
    the upper end of its interval, for every output that varies, looks
    freezable: fixing it at a nominal value should change the outputs little.
``WIDE_INTERVAL = 0.10``
    When the half-width of ν's interval exceeds 10 % of the estimate, the
    run is too short for a conclusion. Randomized quasi-Monte Carlo error falls
    at least like 1/√N, so four times the points halve the interval.
``MIN_REPLICATES = 2``, ``GOOD_REPLICATES = 8``
    An interval needs at least two independent randomizations; with fewer than
    about eight the Student-t interval is wide and itself unreliable.
``DEPTH_GROWTH = 0.05``
    A hidden layer whose variance-weighted mean ν exceeds that of the layer
    before it by more than 5 % marks growth of interaction order with depth;
    when no layer does, the report says that ν does not grow with depth.
ν below 1
    Any unit that varies has ν >= 1 (ν = Σ_u |u| σ²_u / σ² with |u| >= 1), so
    an estimate below 1, or an interval lying entirely below 1, is sampling
    noise at the current N. It is reported as estimated (never clamped) and
    flagged.
Next steps
    Outputs dominated by interactions, and inputs that look freezable, lead to
    a suggested ``netdim advise`` command (which inputs to pre-integrate, what
    freezing costs); intervals too wide lead to a suggested rerun with four
    times the points.

Lists inside findings are capped at :data:`LIST_LIMIT` items (``"and N
more"``), so the findings stay short however many outputs and inputs a model
has.
"""

from __future__ import annotations

import itertools
import math
import shlex
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from ..results import AuditResult, LayerResult, OutputResult

__all__ = [
    "ADDITIVE_SHARE_FLOOR",
    "CAUTION",
    "DEFAULT_THRESHOLD",
    "DEPTH_GROWTH",
    "GLUE",
    "GOOD_REPLICATES",
    "INTERACTION_NU",
    "LIST_LIMIT",
    "MIN_REPLICATES",
    "NEARLY_ADDITIVE_NU",
    "SECTION_TITLES",
    "SIGNIFICANT_DIGITS",
    "WIDE_INTERVAL",
    "Finding",
    "InputRow",
    "LayerRow",
    "OutputRow",
    "derive_findings",
    "describe_inputs",
    "describe_run",
    "fmt",
    "fmt_count",
    "fmt_duration",
    "fmt_interval",
    "fmt_setting",
    "input_rows",
    "layer_rows",
    "output_heading",
    "output_rows",
    "share_bar",
]

SIGNIFICANT_DIGITS = 4
DEFAULT_THRESHOLD = 0.001
NEARLY_ADDITIVE_NU = 1.1
INTERACTION_NU = 1.5
ADDITIVE_SHARE_FLOOR = 0.7
WIDE_INTERVAL = 0.10
DEPTH_GROWTH = 0.05
MIN_REPLICATES = 2
GOOD_REPLICATES = 8
BAR_WIDTH = 10

CAUTION = (
    "An audit of a model's sensitivity is not a safety validation. Where a model informs or "
    "controls equipment, defer to the applicable codes and to qualified engineers."
)

GLUE = "\u00a0"  # a non-breaking space: renderers show it as a plain space

SECTION_TITLES = {
    "header": "Model and run",
    "outputs": "Outputs at a glance",
    "inputs": "Inputs of {name}, ranked by total index",
    "layers": "Hidden layers, input to output",
    "findings": "What the numbers suggest",
}

# Parameter order of the known marginal laws; other laws list their keys as given.
_LAW_PARAMETERS = {
    "normal": ("mean", "sd"),
    "uniform": ("low", "high"),
    "lognormal": ("log_mean", "log_sd"),
    "triangular": ("low", "mode", "high"),
}
_NOT_PARAMETERS = {"name", "law", "unit", "note"}
LIST_LIMIT = 5
_CHAIN_LIMIT = 6


# ----------------------------------------------------------------------------- numbers


def _finite(x: Any) -> bool:
    return isinstance(x, int | float) and not isinstance(x, bool) and math.isfinite(x)


def fmt(x: float | None, digits: int = SIGNIFICANT_DIGITS) -> str:
    """Format a number with a fixed count of significant digits.

    Parameters
    ----------
    x : float or None
        The number. ``None``, NaN and infinities give ``"n/a"``.
    digits : int, optional
        Significant digits (default :data:`SIGNIFICANT_DIGITS`).

    Returns
    -------
    str
        Fixed notation for 0.001 <= |x| < 100 000 (trailing zeros kept, so
        every value shows the same number of digits), scientific otherwise;
        exact zero is ``"0"``.
    """
    if not _finite(x):
        return "n/a"
    x = float(x)  # type: ignore[arg-type]
    if x == 0.0:
        return "0"
    if 1e-3 <= abs(x) < 1e5:
        text = f"{x:#.{digits}g}"
        if "e" not in text:
            return text.rstrip(".")
    return f"{x:.{digits - 1}e}"


def fmt_interval(low: float | None, high: float | None) -> str:
    """Format an interval as ``[low, high]`` with :func:`fmt`."""
    if not (_finite(low) and _finite(high)):
        return "n/a"
    return f"[{fmt(low)}, {fmt(high)}]"


def fmt_count(n: Any) -> str:
    """Format a count with thousands separators (``81,920``); other values as text."""
    if isinstance(n, bool):
        return str(n)
    if isinstance(n, int):
        return f"{n:,}"
    if isinstance(n, float) and n.is_integer():
        return f"{int(n):,}"
    if n is None:
        return "n/a"
    return fmt(n) if _finite(n) else str(n)


def fmt_setting(x: Any) -> str:
    """Format a setting or law parameter compactly (``0.001``, ``16``, ``-5``), up to 4 digits."""
    if _finite(x):
        return f"{float(x):.4g}"
    return str(x)


def fmt_duration(seconds: Any) -> str:
    """Format a duration for people: ``0.026 s``, ``2.4 s``, ``1 min 12 s``, ``2 h 05 min``.

    Parameters
    ----------
    seconds : float
        Wall-clock seconds; ``None``, NaN, infinities and negative values give ``"n/a"``.

    Returns
    -------
    str
        Two significant digits below ten seconds (``"under 0.001 s"`` below a
        millisecond), whole seconds below a minute, minutes and seconds below an
        hour, hours and minutes beyond.
    """
    if not _finite(seconds) or seconds < 0:
        return "n/a"
    x = float(seconds)
    if x < 1e-3:
        return "under 0.001 s"
    if x < 9.95:
        return f"{x:.2g} s"
    whole = round(x)
    if whole < 60:
        return f"{whole} s"
    if whole < 3600:
        minutes, rest = divmod(whole, 60)
        return f"{minutes} min {rest} s"
    minutes = round(x / 60)
    hours, rest = divmod(minutes, 60)
    return f"{hours} h {rest:02d} min"


def share_bar(fraction: float, width: int = BAR_WIDTH) -> str:
    """A proportional bar of block characters, ``width`` cells for a fraction of 1.

    Parameters
    ----------
    fraction : float
        Value in [0, 1]; values outside are clipped, NaN gives an empty bar.
    width : int, optional
        Cells for a full bar.

    Returns
    -------
    str
        Full blocks and one partial block (eighths of a cell).
    """
    if not _finite(fraction):
        return ""
    eighths = round(min(max(float(fraction), 0.0), 1.0) * width * 8)
    full, rest = divmod(eighths, 8)
    partial = " ▏▎▍▌▋▊▉"[rest].strip()
    return "█" * full + partial


# ----------------------------------------------------------------------------- header


def _describe_law(entry: dict[str, Any]) -> str:
    law = str(entry.get("law", "?"))
    keys = _LAW_PARAMETERS.get(law) or tuple(k for k in entry if k not in _NOT_PARAMETERS)
    params = ", ".join(fmt_setting(entry[k]) for k in keys if k in entry)
    text = f"{law}({params})" if params else law
    unit = entry.get("unit")
    return f"{text} {unit}" if unit else text


def describe_inputs(inputs: Sequence[dict[str, Any]]) -> str:
    """One line summarising the input laws.

    Parameters
    ----------
    inputs : sequence of dict
        ``AuditResult.inputs``: ``name``, ``law`` and the law's parameters.

    Returns
    -------
    str
        ``"64 inputs, all uniform(0, 16)"`` when one law serves every input;
        otherwise, with at most 8 inputs, a first line ``"8 inputs:"`` and one
        line per input (``"wind_speed uniform(0, 12) m/s"``); with more, counts
        per distinct law when there are at most 3, else per law family
        (``"100 inputs: uniform (60), normal (40)"``).
    """
    n = len(inputs)
    if n == 0:
        return "no inputs recorded"
    noun = "input" if n == 1 else "inputs"
    laws: dict[str, int] = {}
    for entry in inputs:
        key = _describe_law(entry)
        laws[key] = laws.get(key, 0) + 1
    if len(laws) == 1:
        return f"{n} {noun}, all {next(iter(laws))}"
    if n <= 8:
        listed = "\n".join(f"{e.get('name', i)} {_describe_law(e)}" for i, e in enumerate(inputs))
        return f"{n} {noun}:\n{listed}"
    if len(laws) <= 3:
        return f"{n} {noun}: " + ", ".join(f"{law} ({count})" for law, count in laws.items())
    families: dict[str, int] = {}
    for entry in inputs:
        family = str(entry.get("law", "?"))
        families[family] = families.get(family, 0) + 1
    return f"{n} {noun}: " + ", ".join(f"{law} ({count})" for law, count in families.items())


_SAMPLERS = {"sobol": "scrambled Sobol' points (RQMC)", "mc": "plain Monte Carlo"}
_ESTIMATORS = {
    "jansen": "Jansen estimator (total and first-order indices)",
    "fast": "one-coordinate estimator (mean dimension only)",
}


def describe_run(result: AuditResult) -> list[tuple[str, str]]:
    """Label/text pairs for the report header: model, inputs, design, run, notices.

    Parameters
    ----------
    result : AuditResult
        The audit.

    Returns
    -------
    list of (str, str)
        Rows in display order; every notice gets its own ``"notice"`` row.
        Numbers are joined to their labels and units by :data:`GLUE`
        (a non-breaking space) so that wrapping never separates them; the
        run time is formatted by :func:`fmt_duration`.
    """
    model = result.model or {}
    design = result.design or {}
    source = str(model.get("source", "unknown model"))
    form = model.get("format")
    rows = [("model", f"{source} ({form})" if form else source)]
    rows.append(("inputs", describe_inputs(result.inputs)))

    # Non-breaking spaces (GLUE) keep a number with its label and unit when a line wraps;
    # renderers turn them into plain spaces.
    parts = []
    if "points" in design:
        parts.append(f"N = {fmt_count(design['points'])} points".replace(" ", GLUE))
    if "replicates" in design:
        r = design["replicates"]
        parts.append(f"R = {fmt_count(r)} randomization{'' if r == 1 else 's'}".replace(" ", GLUE))
    if "sampler" in design:
        parts.append(_SAMPLERS.get(str(design["sampler"]), str(design["sampler"])))
    if "estimator" in design:
        parts.append(_ESTIMATORS.get(str(design["estimator"]), str(design["estimator"])))
    if design.get("seed") is not None:
        parts.append(f"seed{GLUE}{design['seed']}")
    if parts:
        rows.append(("design", ", ".join(parts)))

    run = []
    if "evaluations" in design:
        run.append(f"{fmt_count(design['evaluations'])} model evaluations")
    if _finite(design.get("seconds")):
        run.append(f"in {fmt_duration(design['seconds']).replace(' ', GLUE)}")
    if run:
        rows.append(("run", " ".join(run)))
    if design.get("interval"):
        rows.append(("intervals", str(design["interval"])))
    rows.extend(("notice", str(n)) for n in result.notices)
    return rows


# ----------------------------------------------------------------------------- tables


@dataclass(frozen=True)
class OutputRow:
    """One row of the outputs overview, every cell already formatted."""

    name: str
    variance: str
    nu: str
    nu_interval: str
    additive_share: str
    leading: str


def _leading(output: OutputResult, k: int = 3) -> str:
    return ", ".join(f.feature for f in output.ranked()[:k])


def output_rows(result: AuditResult) -> list[OutputRow]:
    """Rows of the outputs overview, one per output in result order.

    Inert outputs show ``"inert (constant)"`` in place of ν; the additive
    share is blank when the estimator gave no first-order indices.
    """
    rows = []
    for o in result.outputs:
        if o.inert or o.mean_dimension is None:
            nu, interval = "inert (constant)", ""
        else:
            nu = fmt(o.mean_dimension.estimate)
            interval = fmt_interval(o.mean_dimension.ci_low, o.mean_dimension.ci_high)
        additive = fmt(o.additive_share) if (o.first_order and not o.inert) else ""
        leading = "" if o.inert else _leading(o)
        rows.append(OutputRow(o.name, fmt(o.variance.estimate), nu, interval, additive, leading))
    return rows


def output_heading(output: OutputResult) -> str:
    """One line under an output's title: variance, ν with interval, additive share."""
    if output.inert or output.mean_dimension is None:
        return f"variance {fmt(output.variance.estimate)}: constant under these input laws"
    nu = output.mean_dimension
    text = (
        f"variance {fmt(output.variance.estimate)}, "
        f"ν {fmt(nu.estimate)} {fmt_interval(nu.ci_low, nu.ci_high)}"
    )
    if output.first_order:
        text += f", additive share {fmt(output.additive_share)}"
    return text


@dataclass(frozen=True)
class InputRow:
    """One ranked input of one output, every cell already formatted."""

    name: str
    total: str
    interval: str
    bar: str
    first_order: str


def input_rows(
    output: OutputResult, threshold: float = DEFAULT_THRESHOLD
) -> tuple[list[InputRow], int]:
    """Inputs of one output ranked by normalised total index.

    Parameters
    ----------
    output : OutputResult
        The output.
    threshold : float, optional
        Inputs whose total index estimate is below this are not listed.

    Returns
    -------
    rows : list of InputRow
        Inputs at or above ``threshold``, largest total index first.
    folded : int
        How many inputs were left out for being below ``threshold``.
    """
    first = {f.feature: f for f in output.first_order}
    rows, folded = [], 0
    for f in output.ranked():
        if not (f.value.estimate >= threshold):
            folded += 1
            continue
        fo = first.get(f.feature)
        rows.append(
            InputRow(
                name=f.feature,
                total=fmt(f.value.estimate),
                interval=fmt_interval(f.value.ci_low, f.value.ci_high),
                bar=share_bar(f.value.estimate),
                first_order="" if fo is None else fmt(fo.value.estimate),
            )
        )
    return rows, folded


@dataclass(frozen=True)
class LayerRow:
    """One hidden layer's summary, every cell already formatted."""

    name: str
    op: str
    units: str
    inert: str
    quantiles: str
    weighted: str


def _layer_units(layer: LayerResult) -> Any:
    if "units" in layer.summary:
        return layer.summary["units"]
    return len(layer.units) if layer.units else math.prod(layer.shape)


def _layer_inert(layer: LayerResult) -> Any:
    if "inert_units" in layer.summary:
        return layer.summary["inert_units"]
    return sum(u.inert for u in layer.units)


def layer_rows(result: AuditResult) -> list[LayerRow]:
    """One row per hidden layer, in result order (input side first).

    ``quantiles`` reads ``min / median / p90 / max`` of the unit mean dimensions.
    """
    rows = []
    for layer in result.layers:
        s = layer.summary
        quantiles = " / ".join(fmt(s.get(k)) for k in ("nu_min", "nu_median", "nu_p90", "nu_max"))
        rows.append(
            LayerRow(
                name=layer.name,
                op=layer.op,
                units=fmt_count(_layer_units(layer)),
                inert=fmt_count(_layer_inert(layer)),
                quantiles=quantiles,
                weighted=fmt(s.get("nu_weighted")),
            )
        )
    return rows


# ----------------------------------------------------------------------------- findings


@dataclass(frozen=True)
class Finding:
    """One plain-language observation.

    Attributes
    ----------
    kind : str
        One of ``"inert"``, ``"additive"``, ``"interactions"``, ``"freezable"``,
        ``"freezable_some"``, ``"uncertain"``, ``"no_interval"``, ``"below_one"``,
        ``"depth"``, ``"depth_flat"``, ``"dead_units"``, ``"next"``.
    text : str
        The sentence(s) shown to the user.
    subjects : tuple of str
        Outputs, inputs or layers the finding is about.
    commands : tuple of str
        Command lines suggested as the next step (shown on lines of their own).
    """

    kind: str
    text: str
    subjects: tuple[str, ...] = ()
    commands: tuple[str, ...] = ()


def _listing(items: Sequence[str], limit: int = LIST_LIMIT) -> str:
    if len(items) <= limit:
        return ", ".join(items)
    return ", ".join(items[:limit]) + f" and {len(items) - limit} more"


def _active(result: AuditResult) -> list[OutputResult]:
    return [o for o in result.outputs if not o.inert and o.mean_dimension is not None]


def _relative_half_width(e: Any) -> float:
    if not (_finite(e.ci_low) and _finite(e.ci_high) and _finite(e.estimate)) or e.estimate == 0:
        return math.nan
    return 0.5 * (e.ci_high - e.ci_low) / abs(e.estimate)


def _freezable(result: AuditResult, threshold: float) -> tuple[list[str], dict[str, list[str]]]:
    """Inputs freezable for every varying output, and those freezable for some only."""
    per_output: dict[str, list[str]] = {}
    judged = [o for o in _active(result) if o.total_index]
    for o in judged:
        per_output[o.name] = [f.feature for f in o.total_index if f.value.ci_high < threshold]
    if not judged:
        return [], {}
    everywhere = [
        f.feature
        for f in judged[0].total_index
        if all(f.feature in per_output[o.name] for o in judged)
    ]
    some = {
        name: [x for x in feats if x not in everywhere]
        for name, feats in per_output.items()
        if any(x not in everywhere for x in feats)
    }
    return everywhere, some


def _freezable_some_text(some: dict[str, list[str]], n_outputs: int, threshold: float) -> str:
    """Inputs freezable for some outputs only, grouped by input, most outputs first."""
    by_input: dict[str, list[str]] = {}
    for name, feats in some.items():
        for x in feats:
            by_input.setdefault(x, []).append(name)
    order = sorted(by_input, key=lambda x: -len(by_input[x]))  # stable: input order on ties
    items = []
    for x in order[:LIST_LIMIT]:
        outs = by_input[x]
        where = ", ".join(outs) if len(outs) <= 2 else f"{len(outs)} of {n_outputs} outputs"
        items.append(f"{x} for {where}")
    rest = len(order) - len(items)
    listed = "; ".join(items)
    if rest:
        listed += f"; and {rest} more input{'' if rest == 1 else 's'}"
    noun = "input looks" if len(order) == 1 else "inputs look"
    return (
        f"{len(order)} {noun} freezable for some outputs only (total index below "
        f"{fmt_setting(threshold)} for them, still needed by others): {listed}."
    )


def _input_option(result: AuditResult) -> str:
    """The input options that reproduce this audit's laws, or a placeholder."""
    spec = result.design.get("spec")
    if spec:
        return f"--inputs {shlex.quote(str(spec))}"
    laws = {_describe_law(e) for e in result.inputs}
    law = {"normal(0, 1)": "normal", "uniform(0, 1)": "uniform"}.get(next(iter(laws), ""))
    if len(laws) == 1 and law:
        dim = f" --dim {len(result.inputs)}" if result.model.get("format") == "python" else ""
        return f"--law {law}{dim}"
    return "--inputs SPEC.toml"


def _command(result: AuditResult, verb: str, *extra: str) -> tuple[str, ...]:
    """``netdim VERB MODEL INPUT-OPTIONS EXTRA...`` for this audit's model, if it has a source."""
    source = (result.model or {}).get("source")
    if not source:
        return ()
    return (" ".join(["netdim", verb, shlex.quote(str(source)), _input_option(result), *extra]),)


def _chain(items: Sequence[tuple[str, float]]) -> str:
    """``a 1.0 → b 1.2 → …``; long chains keep their ends."""
    shown = [f"{n} {fmt(v)}" for n, v in items]
    if len(shown) > _CHAIN_LIMIT:
        cut = len(shown) - _CHAIN_LIMIT + 1
        shown = [*shown[:3], f"… ({cut} more)", *shown[3 + cut :]]
    return " → ".join(shown)


def _below_one(result: AuditResult) -> Finding | None:
    """Units (outputs or hidden units) whose ν estimate, or whole interval, is below 1."""
    count, below_ci, total = 0, 0, 0
    lowest: tuple[float, str] | None = None
    where: list[str] = []
    for o in _active(result):
        nu = o.mean_dimension
        total += 1
        if _finite(nu.estimate) and nu.estimate < 1.0:
            count += 1
            below_ci += bool(_finite(nu.ci_high) and nu.ci_high < 1.0)
            where.append(o.name)
            if lowest is None or nu.estimate < lowest[0]:
                lowest = (nu.estimate, o.name)
    for layer in result.layers:
        in_layer = 0
        if layer.units:
            for u in layer.units:
                if u.inert or u.mean_dimension is None:
                    continue
                total += 1
                e = u.mean_dimension
                if _finite(e.estimate) and e.estimate < 1.0:
                    in_layer += 1
                    below_ci += bool(_finite(e.ci_high) and e.ci_high < 1.0)
                    if lowest is None or e.estimate < lowest[0]:
                        lowest = (e.estimate, layer.name)
        else:  # summary only: the minimum tells whether any unit went below 1
            low = layer.summary.get("nu_min")
            if _finite(low) and low < 1.0:
                in_layer = 1
                if lowest is None or low < lowest[0]:
                    lowest = (low, layer.name)
        count += in_layer
        if in_layer:
            where.append(layer.name)
    if lowest is None:
        return None
    points = result.design.get("points")
    at = f"N = {fmt_count(points)} points" if _finite(points) else "this N"
    units = f"{count} of {fmt_count(total)} units" if total else "some units"
    place = f"all in {where[0]}" if len(where) == 1 else f"in {_listing(where)}"
    lowest_at = "" if len(where) == 1 else f" in {lowest[1]}"
    intervals = (
        f"; {below_ci} interval{'s lie' if below_ci != 1 else ' lies'} entirely below 1"
        if below_ci
        else ""
    )
    return Finding(
        "below_one",
        f"ν estimated below 1 for {units}, {place} (lowest {fmt(lowest[0])}{lowest_at}"
        f"{intervals}). A unit that varies has ν ≥ 1 by definition, so this is sampling noise "
        f"at {at}; the numbers are shown as estimated. More points narrow it.",
        tuple(where),
    )


def _depth(result: AuditResult) -> Finding | None:
    layers = [(ly.name, ly.summary.get("nu_weighted")) for ly in result.layers]
    layers = [(n, float(v)) for n, v in layers if _finite(v)]
    if len(layers) < 2:
        return None
    steps = [(a, b) for a, b in itertools.pairwise(layers) if b[1] > a[1] * (1.0 + DEPTH_GROWTH)]
    if not steps:
        return Finding(
            "depth_flat",
            f"Interaction order does not grow with depth (no layer more than "
            f"{fmt_setting(100 * DEPTH_GROWTH)} % above the one before): ν (variance-weighted) "
            f"{_chain(layers)}.",
            tuple(n for n, _ in layers),
        )
    if len(steps) == len(layers) - 1:
        text = f"Interaction order grows with depth: ν (variance-weighted) {_chain(layers)}."
    else:
        pairs = "; ".join(f"{a[0]} {fmt(a[1])} → {b[0]} {fmt(b[1])}" for a, b in steps[:3])
        more = f"; and {len(steps) - 3} more" if len(steps) > 3 else ""
        text = f"Interaction order grows between some layers: ν (variance-weighted) {pairs}{more}."
    subjects = tuple(dict.fromkeys(n for step in steps for n, _ in step))
    return Finding("depth", text, subjects)


def derive_findings(result: AuditResult, *, threshold: float = DEFAULT_THRESHOLD) -> list[Finding]:
    """Plain-language findings derived from an audit's numbers.

    Parameters
    ----------
    result : AuditResult
        The audit.
    threshold : float, optional
        Total-index level below which an input looks freezable.

    Returns
    -------
    list of Finding
        In a fixed order: inert outputs, nearly additive outputs, outputs
        dominated by interactions, freezable inputs, intervals too wide for a
        conclusion or missing, ν below 1 (sampling noise), ν against depth,
        constant hidden units, and a suggested next step. The rules are listed
        in the module docstring (common practice, no source). Lists are capped
        at :data:`LIST_LIMIT` items.
    """
    out: list[Finding] = []
    active = _active(result)

    inert = [o.name for o in result.outputs if o.inert or o.mean_dimension is None]
    if inert:
        out.append(
            Finding(
                "inert",
                f"Constant under these input laws: {_listing(inert)}. "
                "There is nothing to rank for them; check the input ranges if they should vary.",
                tuple(inert),
            )
        )

    additive = [o for o in active if o.mean_dimension.ci_high < NEARLY_ADDITIVE_NU]
    if additive:
        names = [f"{o.name} (ν {fmt(o.mean_dimension.estimate)})" for o in additive]
        out.append(
            Finding(
                "additive",
                f"Nearly additive (ν below {fmt_setting(NEARLY_ADDITIVE_NU)} even at the upper "
                f"end of its interval): {_listing(names)}. Favourable for quasi-Monte Carlo, and "
                "one-input-at-a-time views miss little.",
                tuple(o.name for o in additive),
            )
        )

    interacting = []
    for o in active:
        share_low = bool(o.first_order) and o.additive_share < ADDITIVE_SHARE_FLOOR
        if o.mean_dimension.estimate > INTERACTION_NU or share_low:
            text = f"{o.name} (ν {fmt(o.mean_dimension.estimate)}"
            if o.first_order:
                text += f", additive share {fmt(o.additive_share)}"
            interacting.append((o.name, text + ")"))
    if interacting:
        out.append(
            Finding(
                "interactions",
                f"Dominated by interactions (ν above {fmt_setting(INTERACTION_NU)} or additive "
                f"share below {fmt_setting(ADDITIVE_SHARE_FLOOR)}): "
                f"{_listing([t for _, t in interacting])}. "
                "The effect of one input depends on the others; do not read inputs one at a time.",
                tuple(n for n, _ in interacting),
            )
        )

    everywhere, some = _freezable(result, threshold)
    if everywhere:
        out.append(
            Finding(
                "freezable",
                f"Inputs that look freezable (total index below {fmt_setting(threshold)} even at "
                f"the upper end of its interval, for every output): {_listing(everywhere)} "
                f"({len(everywhere)} in all). Fixing them at a nominal value should change the "
                "outputs little.",
                tuple(everywhere),
            )
        )
    if some:
        n_judged = sum(1 for o in active if o.total_index)
        out.append(
            Finding(
                "freezable_some",
                _freezable_some_text(some, n_judged, threshold),
                tuple(dict.fromkeys(x for feats in some.values() for x in feats)),
            )
        )

    wide = [(o, _relative_half_width(o.mean_dimension)) for o in active]
    wide = [(o, h) for o, h in wide if h > WIDE_INTERVAL]
    if wide:
        names = [f"{o.name} (±{fmt(100 * h, 3)} %)" for o, h in wide]
        points = result.design.get("points")
        kind = "plain Monte Carlo" if result.design.get("sampler") == "mc" else None
        rate = (
            f"the {kind} error falls like 1/√N"
            if kind
            else "the randomized quasi-Monte Carlo error falls at least like 1/√N"
        )
        rerun: tuple[str, ...] = ()
        if isinstance(points, int | float) and not isinstance(points, bool) and points > 0:
            more = f"N = {fmt_count(4 * int(points))} points instead of {fmt_count(int(points))}"
            rerun = _command(result, "audit", f"--points {4 * int(points)}")
        else:
            more = "four times the current points"
        out.append(
            Finding(
                "uncertain",
                f"Interval of ν too wide for a conclusion (half-width above "
                f"{fmt_setting(100 * WIDE_INTERVAL)} % of the estimate): {_listing(names)}. "
                f"Run with {more} to halve it: {rate}.",
                tuple(o.name for o, _ in wide),
                rerun,
            )
        )

    lone = [o.name for o in active if not _finite(_relative_half_width(o.mean_dimension))]
    if lone:
        out.append(
            Finding(
                "no_interval",
                f"No interval for ν of {_listing(lone)}: intervals need at least "
                f"{MIN_REPLICATES} independent randomizations; use {GOOD_REPLICATES} or more "
                "before drawing conclusions.",
                tuple(lone),
            )
        )

    below = _below_one(result)
    if below is not None:
        out.append(below)

    depth = _depth(result)
    if depth is not None:
        out.append(depth)

    dead = []
    for layer in result.layers:
        n_inert, n_units = _layer_inert(layer), _layer_units(layer)
        if isinstance(n_inert, int | float) and n_inert > 0:
            dead.append((layer.name, f"{layer.name} {fmt_count(n_inert)} of {fmt_count(n_units)}"))
    if dead:
        out.append(
            Finding(
                "dead_units",
                f"Hidden units constant under these input laws: {_listing([t for _, t in dead])}. "
                "They carry no information for inputs in these ranges.",
                tuple(n for n, _ in dead),
            )
        )

    reasons = []
    if interacting:
        reasons.append("which input to pre-integrate to lower ν of the interacting outputs")
    if everywhere or some:
        reasons.append("what freezing the inputs above would cost")
    advise = _command(result, "advise")
    if reasons and advise:
        out.append(
            Finding(
                "next",
                f"Next step: netdim advise shows {' and '.join(reasons)}; after retraining, "
                "netdim compare OLD NEW (same input options) tells whether ν or the ranking "
                "moved beyond noise.",
                (),
                advise,
            )
        )
    return out
