"""What advise measured: ν and variance before and after pre-integration, freezing error against its bound,
and the measured RQMC gain.

Every chart keeps its series apart by marker shape and fill (readable in
grey-scale): the model as it is in black, the pre-integrated models in white
circles, predictions as crosses.
"""

from __future__ import annotations

from matplotlib.ticker import FuncFormatter, MaxNLocator, NullFormatter

from ...results import Estimate, OutputAdvice
from ..text import finite, fmt, fmt_count, fmt_setting, listing
from .base import Chart, error_bars
from .svg import INK, MID, label, new_figure, styled, to_svg

__all__ = ["freezing_chart", "gain_chart", "preintegration_chart"]


def _dots(ax: object, values: list[Estimate], rows: list[int], **style: object) -> None:
    if not rows:
        return
    centres, err = error_bars(values)
    ax.errorbar(centres, rows, xerr=err, capsize=2, linewidth=0.9, linestyle="none", color=INK, **style)  # type: ignore[attr-defined]


@styled
def preintegration_chart(output: OutputAdvice, key: str, section: str = "", heading: str = "") -> Chart | None:
    """ν (left) and variance (right) of the model and of each pre-integrated candidate; ``None`` without one."""
    nu = output.audit.mean_dimension
    if not output.preintegrate or nu is None:
        return None
    names = ["the model as it is", *(f"{label(c.feature)} integrated out" for c in output.preintegrate)]
    n = len(names)
    figure = new_figure(7.0, 1.2 + 0.36 * n)
    left, right = figure.subplots(1, 2, sharey=True)
    _dots(left, [nu], [0], fmt="s", markersize=5, markerfacecolor=INK, label="the model")
    after = [(i + 1, c.mean_dimension_after) for i, c in enumerate(output.preintegrate) if c.mean_dimension_after]
    _dots(left, [e for _, e in after], [i for i, _ in after], fmt="o", markersize=5, markerfacecolor="white",
          label="pre-integrated")
    left.axvline(1.0, color=MID, linewidth=0.9, linestyle="--")
    left.set_xlabel("mean dimension ν")
    left.set_yticks(range(n), names)
    left.set_ylim(n - 0.5, -0.5)
    _dots(right, [output.audit.variance], [0], fmt="s", markersize=5, markerfacecolor=INK)
    rows = list(range(1, n))
    _dots(right, [c.variance_identity.measured for c in output.preintegrate], rows, fmt="o", markersize=5,
          markerfacecolor="white")
    predicted = [c.variance_identity.predicted.estimate for c in output.preintegrate]
    right.plot(predicted, rows, "x", color=INK, markersize=6, label="σ² − un-normalised total index")
    right.set_xlabel("variance")
    handles = [*left.get_legend_handles_labels()[0], *right.get_legend_handles_labels()[0]]
    figure.legend(handles=handles, loc="outside upper center", ncols=3, fontsize=8)
    title = f"Pre-integration of {output.name}: mean dimension ν and variance before and after"
    caption = (
        "Top row: the model as it is (black squares); each row below: the model with that input integrated out "
        "by a Gauss rule (white circles). Left: ν with its 95 % interval, dashed at ν = 1; right: the variance "
        "measured, with its interval, and predicted by the audit as σ² minus the input's un-normalised total "
        "index (crosses): the two should agree."
    )
    return Chart(key, title, caption, to_svg(figure, key), section, heading=heading)


@styled
def freezing_chart(output: OutputAdvice, key: str, section: str = "", heading: str = "") -> Chart | None:
    """The measured mean squared change of freezing the group against its bound, as % of σ²."""
    group = output.freeze_group
    if group is None:
        return None
    percent = [
        Estimate(100 * e.estimate, 100 * e.ci_low, 100 * e.ci_high, 100 * e.std_error)
        for e in (group.bound_normalised, group.measured_normalised)
    ]
    figure = new_figure(6.6, 1.9)
    ax = figure.add_subplot()
    _dots(ax, [percent[0]], [0], fmt="s", markersize=5, markerfacecolor=INK)
    _dots(ax, [percent[1]], [1], fmt="o", markersize=5, markerfacecolor="white")
    budget = 100 * group.budget
    reach = max((p.ci_high for p in percent if finite(p.ci_high)), default=0.0)
    drawn = finite(budget) and 0 < budget <= 4 * reach  # a far budget would squash the two to a point
    if drawn:
        ax.axvline(budget, color=MID, linewidth=0.9, linestyle="--", label=f"budget {fmt_setting(budget)} %")
        ax.legend(loc="lower right")
    ax.axvline(0.0, color=MID, linewidth=0.8)
    ax.set_yticks([0, 1], ["bound: twice the summed total indices", "measured mean squared change"])
    ax.set_ylim(1.5, -0.5)
    ax.set_xlabel("share of the variance (%)")
    ax.xaxis.set_major_locator(MaxNLocator(nbins=4))  # a narrow range has long tick labels: keep them apart
    together = " together" if len(group.features) > 1 else ""
    title = f"Freezing {listing(group.features)}{together} in {output.name}: measured error against its bound"
    caption = (
        "Mean squared change of the output when the inputs are fixed at a random draw, as a share of its "
        "variance: the bound from the audit (black square) and the error measured on separate points (white "
        "circle), each with its 95 % interval. The measured error should not lie above the bound. "
        + (f"Dashed: the error budget ({fmt_setting(budget)} %)." if drawn else
           f"The error budget ({fmt_setting(budget)} %) lies beyond the drawn range: both are well inside it.")
    )
    return Chart(key, title, caption, to_svg(figure, key), section, heading=heading)


@styled
def gain_chart(output: OutputAdvice, key: str, section: str = "", heading: str = "") -> Chart | None:
    """Variance of the mean estimate against n, log–log, for the model and the pre-integrated one."""
    gain = output.rqmc_gain
    if gain is None or not gain.rows:
        return None
    figure = new_figure(6.6, 3.2)
    ax = figure.add_subplot()
    for attr, marker, face, line, text in (
        ("variance_before", "s", INK, "-", "the model"),
        ("variance_after", "o", "white", "--", f"{label(gain.feature)} integrated out"),
    ):
        pairs = [(r.points, getattr(r, attr)) for r in gain.rows]
        pairs = [(n, v) for n, v in pairs if finite(v) and v > 0]
        if pairs:
            ax.plot([n for n, _ in pairs], [v for _, v in pairs], linestyle=line, marker=marker, color=INK,
                    markerfacecolor=face, markersize=5, linewidth=0.9, label=text)
    ax.set_xscale("log", base=2)
    ax.set_yscale("log")
    points = [r.points for r in gain.rows]
    ax.set_xticks(points, [fmt_count(n) for n in points])
    ax.xaxis.set_minor_formatter(NullFormatter())
    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:.0e}"))  # plain text: no mathematics
    ax.yaxis.set_minor_formatter(NullFormatter())
    ax.set_xlabel("points n")
    ax.set_ylabel("variance of the mean estimate")
    ax.legend(loc="lower left")
    title = f"RQMC gain for {output.name}: variance of the mean estimate against the number of points"
    slopes = (
        f"Fitted slopes of log variance against log n: model {fmt(gain.slope_before, 3)}, pre-integrated "
        f"{fmt(gain.slope_after, 3)} (−1 is the Monte Carlo rate)."
        if finite(gain.slope_before) and finite(gain.slope_after)
        else ""
    )
    caption = (
        f"Variance over {gain.replicates} independent randomizations of the estimate of the output's mean, for "
        f"the model (black squares) and with {gain.feature} integrated out by {gain.nodes} Gauss nodes (white "
        f"circles), at each number of points. {slopes}"
    ).strip()
    return Chart(key, title, caption, to_svg(figure, key), section, heading=heading)

