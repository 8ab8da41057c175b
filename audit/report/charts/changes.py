"""What a retrained model changed: paired changes with their 95 % intervals, those beyond noise marked.

Each row is one change (new − old) with its interval. A change whose interval
excludes 0 (:func:`audit.report.findings.comparison.excludes_zero`) is a black
square, one within noise a white circle: told apart by shape and fill, so a
grey-scale print keeps them apart. A gate's limit is drawn as a dashed line.
"""

from __future__ import annotations

from collections.abc import Sequence

from ...results import ComparisonResult, Estimate, OutputChange
from ..findings.comparison import excludes_zero
from ..text import finite, fmt_setting
from .base import Chart, error_bars
from .svg import INK, MID, label, new_figure, styled, to_svg

__all__ = [
    "LIMIT_REACH",
    "NU_CHANGES_TITLE",
    "TOP_CHANGES",
    "changes_chart",
    "input_changes_chart",
    "input_changes_title",
    "nu_changes_chart",
]

#: Inputs drawn per output, largest change first.
TOP_CHANGES = 15
#: A gate's limit is drawn when it lies within this multiple of the largest change (with its interval);
#: farther, drawing it would squash the changes to a point, and the caption says where it is.
LIMIT_REACH = 4.0
#: Title of the chart of ν new − old.
NU_CHANGES_TITLE = "Change of the mean dimension ν, new − old, with paired 95 % intervals"


def input_changes_title(name: str) -> str:
    """The title of the chart of input changes of output ``name``."""
    return f"Change of each input's total index for {name}, new − old, with 95 % intervals"


def _gate(result: ComparisonResult, name: str) -> float | None:
    for g in result.gates:
        if g.name == name and finite(g.limit):
            return float(g.limit)
    return None


@styled
def changes_chart(
    names: Sequence[str],
    changes: Sequence[Estimate],
    key: str,
    *,
    title: str,
    caption: str,
    axis: str,
    section: str = "",
    heading: str = "",
    limits: Sequence[float] = (),
) -> Chart | None:
    """A forest plot of ``changes`` (one row per name, first on top); ``None`` without rows.

    Parameters
    ----------
    names : sequence of str
        Row labels.
    changes : sequence of Estimate
        The changes with their intervals.
    key, title, caption, axis, section, heading : str
        The chart's key, title, caption, horizontal axis label, section, and
        the heading inside the section it follows.
    limits : sequence of float, optional
        Gate limits drawn as dashed vertical lines.
    """
    if not changes:
        return None
    n = len(changes)
    figure = new_figure(6.6, 0.95 + 0.3 * n)
    ax = figure.add_subplot()
    centres, err = error_bars(changes)
    beyond = [excludes_zero(e) for e in changes]
    for flag, marker, face, text in ((True, "s", INK, "interval excludes 0"), (False, "o", "white", "within noise")):
        rows = [i for i in range(n) if beyond[i] == flag]
        if rows:
            ax.errorbar(
                [centres[i] for i in rows],
                rows,
                xerr=[[err[0][i] for i in rows], [err[1][i] for i in rows]],
                fmt=marker,
                color=INK,
                markerfacecolor=face,
                markersize=5,
                capsize=2,
                linewidth=0.9,
                linestyle="none",
                label=text,
            )
    ax.axvline(0.0, color=MID, linewidth=0.9)
    reach = max((abs(c) + max(b, a) for c, b, a in zip(centres, err[0], err[1], strict=True)), default=0.0)
    shown = [x for x in limits if reach > 0 and abs(x) <= LIMIT_REACH * reach]
    for k, limit in enumerate(shown):
        ax.axvline(limit, color=MID, linewidth=0.9, linestyle="--", label="gate limit" if k == 0 else None)
    if limits:
        values = " and ".join(fmt_setting(x) for x in limits)
        caption += (
            f" Dashed: the gate's limit ({values})."
            if len(shown) == len(limits)
            else f" The gate's limit ({values}) lies beyond the drawn range: every change here is well inside it."
        )
    ax.set_yticks(range(n), [label(x) for x in names])
    ax.set_ylim(n - 0.5, -0.5)
    ax.set_xlabel(axis)
    figure.legend(loc="outside upper center", ncols=3, fontsize=8)
    return Chart(key, title, caption, to_svg(figure, key), section, heading=heading)


_CAPTION = (
    "Black squares: changes whose paired 95 % interval excludes 0 (beyond noise); white circles: within noise. "
    "Whiskers: the intervals; the solid line is no change."
)


def nu_changes_chart(result: ComparisonResult, key: str, section: str = "") -> Chart | None:
    """ν new − old of every output (and of the hidden layers in both models, variance-weighted)."""
    rows = [(o.name, o.mean_dimension_change) for o in result.outputs if o.mean_dimension_change is not None]
    rows += [(f"layer {x.name}", x.nu_weighted_change) for x in result.layers if x.nu_weighted_change is not None]
    limit = _gate(result, "max_dimension_rise")
    return changes_chart(
        [n for n, _ in rows],
        [e for _, e in rows],
        key,
        title=NU_CHANGES_TITLE,
        caption=_CAPTION,
        axis="change of mean dimension ν",
        section=section,
        limits=[limit] if limit else [],
    )


def input_changes_chart(
    result: ComparisonResult, output: OutputChange, key: str, section: str = "", top: int = TOP_CHANGES
) -> Chart | None:
    """The total-index changes of the inputs of one output, largest first (at most ``top``)."""
    ranked = sorted(output.total_index_change, key=lambda c: -abs(c.value.estimate) if finite(c.value.estimate) else 0)
    ranked = ranked[:top]
    limit = _gate(result, "max_index_shift")
    more = len(output.total_index_change) - len(ranked)
    caption = _CAPTION + (
        f" The {len(ranked)} largest changes are drawn; {more} more are in the JSON report." if more > 0 else ""
    )
    return changes_chart(
        [c.feature for c in ranked],
        [c.value for c in ranked],
        key,
        title=input_changes_title(output.name),
        caption=caption,
        axis=f"change of the total index ({label(output.name)})",
        section=section,
        heading=output.name if output.moved else "",
        limits=[-limit, limit] if limit else [],
    )
