"""The inputs of one output: total and first-order Sobol' indices, ranked, with their 95 % intervals.

Dark bars are total indices, white hatched bars first-order indices (told
apart by lightness and hatching, so a grey-scale print keeps them apart);
whiskers are the intervals. Estimates are drawn as estimated: one slightly
below 0 (sampling noise of a negligible index) shows as a short bar to the
left of the zero line.
"""

from __future__ import annotations

from ...results import OutputResult
from ..text import fmt, fmt_interval
from .base import Chart, error_bars
from .svg import INK, MID, label, new_figure, styled, to_svg

__all__ = ["TOP_INPUTS", "indices_chart", "indices_title"]

#: Inputs drawn per output (largest total index first); the tables list every one.
TOP_INPUTS = 15


def indices_title(name: str, first_order: bool = True) -> str:
    """The chart's title for output ``name`` (``first_order``: the estimator gave first-order indices too)."""
    if not first_order:
        return f"Inputs of {name}: total Sobol' indices, largest first"
    return f"Inputs of {name}: total and first-order Sobol' indices, largest total first"


@styled
def indices_chart(output: OutputResult, key: str, section: str = "", top: int = TOP_INPUTS) -> Chart | None:
    """The ranked indices of ``output`` as a horizontal bar chart.

    Parameters
    ----------
    output : OutputResult
        One output of an audit (or of an advise run).
    key : str
        Unique key of the chart within its page.
    section : str, optional
        Title of the report section the chart goes with.
    top : int, optional
        Inputs drawn, largest total index first.

    Returns
    -------
    Chart or None
        ``None`` for an output without per-input indices (inert, an exact
        function of other outputs, or measured by the ν-only estimator).
    """
    if output.inert or output.relation or output.mean_dimension is None or not output.total_index:
        return None
    ranked = output.ranked()[:top]
    first = {f.feature: f.value for f in output.first_order}
    n = len(ranked)
    figure = new_figure(6.6, 0.9 + 0.34 * n)
    ax = figure.add_subplot()
    y = list(range(n))
    totals, total_err = error_bars([f.value for f in ranked])
    height = 0.38 if first else 0.6
    offset = 0.2 if first else 0.0
    ax.barh(
        [v - offset for v in y],
        totals,
        height=height,
        color=INK,
        xerr=total_err,
        error_kw={"ecolor": MID, "capsize": 2, "elinewidth": 0.9},
        label="total index",
    )
    if first:
        shown = [first[f.feature] for f in ranked if f.feature in first]
        rows = [v + offset for v, f in zip(y, ranked, strict=True) if f.feature in first]
        centres, err = error_bars(shown)
        ax.barh(
            rows,
            centres,
            height=height,
            color="white",
            edgecolor=INK,
            hatch="////",
            linewidth=0.7,
            xerr=err,
            error_kw={"ecolor": MID, "capsize": 2, "elinewidth": 0.9},
            label="first-order index",
        )
    ax.axvline(0.0, color=MID, linewidth=0.8)
    ax.set_yticks(y, [label(f.feature) for f in ranked])
    ax.invert_yaxis()
    ax.set_xlabel(f"share of the variance of {label(output.name)}")
    ax.legend(loc="lower right")
    nu = output.mean_dimension
    more = f" The {n} largest of {len(output.total_index)} inputs are drawn." if n < len(output.total_index) else ""
    caption = (
        "Dark bars: total index (the share of the output's variance that involves the input, alone or with "
        "others)" + ("; hatched bars: first-order index (the input alone)" if first else "") + ". Whiskers: "
        f"95 % intervals. Mean dimension ν, the sum of the total indices: {fmt(nu.estimate)} "
        f"{fmt_interval(nu.ci_low, nu.ci_high)}.{more}"
    )
    return Chart(key, indices_title(output.name, bool(first)), caption, to_svg(figure, key), section)
