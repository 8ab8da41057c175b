"""Interaction order through the network: the mean dimension ν of every layer's units, input side first.

One column per hidden layer and one for the outputs. A box spans the middle
half of the units' ν (quartiles, the median marked), whiskers reach the lowest
and highest unit; a white diamond is the layer's variance-weighted ν with its
95 % interval. The outputs' column shows each output's ν with its interval.
Inert and unreliable units are left out, as in the layer summaries. A layer
saved with its summary only (no units) is drawn from its quantiles: a line
from the lowest to the highest unit, ticks at the median and the 90th
percentile.
"""

from __future__ import annotations

from collections.abc import Sequence

from ...results import Estimate, LayerResult, OutputResult
from ..describe import layer_units
from ..text import finite, fmt_count
from .base import Chart, error_bars
from .svg import INK, LIGHT, MID, label, new_figure, styled, to_svg

__all__ = ["DEPTH_TITLE", "NAMED_OUTPUTS", "OUTPUT_DOTS", "depth_chart", "unit_values"]

DEPTH_TITLE = (
    "Interaction order through the network: mean dimension ν of each layer's units, input side first, "
    "then the outputs"
)
#: Outputs drawn one by one (with their intervals); more are summarised by a box only.
OUTPUT_DOTS = 12
#: Outputs named beside their dots when there are this many or fewer.
NAMED_OUTPUTS = 4


def unit_values(layer: LayerResult) -> list[float]:
    """ν of the units of ``layer`` that count in its summary (neither inert nor unreliable)."""
    return [
        u.mean_dimension.estimate
        for u in layer.units
        if not (u.inert or u.unreliable) and u.mean_dimension is not None and finite(u.mean_dimension.estimate)
    ]


def _weighted(layer: LayerResult) -> Estimate | None:
    s = layer.summary
    if not finite(s.get("nu_weighted")):
        return None
    return Estimate(s["nu_weighted"], s.get("nu_weighted_ci_low", float("nan")), s.get("nu_weighted_ci_high",
                    float("nan")), float("nan"))


def _box(ax: object, values: Sequence[float], at: float) -> None:
    ax.boxplot(  # type: ignore[attr-defined]
        [list(values)],
        positions=[at],
        widths=0.5,
        whis=(0, 100),
        showfliers=False,
        patch_artist=True,
        boxprops={"facecolor": LIGHT, "edgecolor": INK, "linewidth": 0.8},
        medianprops={"color": INK, "linewidth": 1.6},
        whiskerprops={"color": INK, "linewidth": 0.8},
        capprops={"color": INK, "linewidth": 0.8},
    )


def _quantiles(ax: object, summary: dict, at: float) -> bool:
    low, high = summary.get("nu_min"), summary.get("nu_max")
    if not (finite(low) and finite(high)):
        return False
    ax.vlines(at, low, high, color=INK, linewidth=1.0)  # type: ignore[attr-defined]
    for key, width in (("nu_median", 0.25), ("nu_p90", 0.15)):
        if finite(summary.get(key)):
            ax.hlines(summary[key], at - width, at + width, color=INK, linewidth=1.6)  # type: ignore[attr-defined]
    return True


@styled
def depth_chart(
    layers: Sequence[LayerResult], outputs: Sequence[OutputResult], key: str, section: str = ""
) -> Chart | None:
    """ν per layer, input side first, and of the outputs.

    Parameters
    ----------
    layers : sequence of LayerResult
        Hidden layers in the order of the network (input side first).
    outputs : sequence of OutputResult
        The outputs; inert ones and exact functions of others are left out.
    key, section : str
        The chart's key and the title of the section it goes with.

    Returns
    -------
    Chart or None
        ``None`` without hidden layers.
    """
    if not layers:
        return None
    shown = [o for o in outputs if not (o.inert or o.relation) and o.mean_dimension is not None]
    columns = len(layers) + (1 if shown else 0)
    figure = new_figure(max(5.6, min(11.0, 1.6 + 1.0 * columns)), 3.8)
    ax = figure.add_subplot()
    ticks = []
    weighted_drawn = False
    for k, layer in enumerate(layers):
        values = unit_values(layer)
        if values:
            _box(ax, values, k)
        else:
            _quantiles(ax, layer.summary, k)
        w = _weighted(layer)
        if w is not None:
            centres, err = error_bars([w])
            ax.errorbar([k + 0.36], centres, yerr=err, fmt="D", color=INK, markerfacecolor="white", markersize=5,
                        capsize=2, linewidth=0.9, label=None if weighted_drawn else "weighted ν (95 % interval)")
            weighted_drawn = True
        ticks.append(f"{label(layer.name, 18)}\n{label(layer.op, 12)}, {fmt_count(layer_units(layer))} units")
    if shown:
        at = len(layers)
        nus = [o.mean_dimension for o in shown]
        if len(shown) > OUTPUT_DOTS:
            _box(ax, [e.estimate for e in nus if finite(e.estimate)], at)
        else:
            step = 0.3 / max(1, len(shown) - 1)
            spread = [at - 0.15 + step * i for i in range(len(shown))] if len(shown) > 1 else [at]
            centres, err = error_bars(nus)
            ax.errorbar(spread, centres, yerr=err, fmt="o", color=INK, markerfacecolor=MID, markersize=4.5,
                        capsize=2, linewidth=0.9, linestyle="none", label="output ν (95 % interval)")
            if len(shown) <= NAMED_OUTPUTS:  # few outputs: name each one beside its dot
                for x, y, o in zip(spread, centres, shown, strict=True):
                    ax.annotate(label(o.name, 18), (x, y), xytext=(5, 0), textcoords="offset points",
                                fontsize=7, va="center", color=INK)
        ticks.append(f"outputs\n{len(shown)} shown")
    ax.axhline(1.0, color=MID, linewidth=0.9, linestyle="--", label="ν = 1: no interactions")
    ax.set_xticks(range(len(ticks)), ticks, rotation=25 if columns > 7 else 0, ha="right" if columns > 7 else "center")
    named = bool(shown) and len(shown) <= NAMED_OUTPUTS and len(shown) <= OUTPUT_DOTS
    ax.set_xlim(-0.6, len(ticks) - 0.4 + (0.6 if named else 0.0))  # room for the outputs' names
    ax.set_ylabel("mean dimension ν")
    figure.legend(loc="outside upper center", ncols=2, fontsize=8)
    caption = (
        "Each column is a hidden layer, input side first. Box: the middle half of the layer's units (the line "
        "inside is the median), whiskers the lowest and highest unit; white diamond: the layer's ν weighted by "
        "unit variance, with its 95 % interval. Right-hand column: each output's ν with its interval. Dashed "
        "line: ν = 1, a unit with no interactions. Inert and unreliable units are left out."
    )
    return Chart(key, DEPTH_TITLE, caption, to_svg(figure, key), section)
