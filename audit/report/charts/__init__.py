"""The charts of the HTML report, drawn with matplotlib as SVG (:mod:`.svg`).

:func:`charts_for` picks the charts of any result, each tagged with the title
of the report section it belongs to (the same titles the sections use), so
that the page renderer (:mod:`audit.report.html`) can place them without
knowing the report's kind:

audit
    per output, the ranked total and first-order indices (:mod:`.indices`);
    inputs that form an image or a sequence, their total indices in that shape
    per output and overall (:mod:`.heatmap`); interaction order through the
    network (:mod:`.depth`); the units of layers measured in detail, in the
    inputs' shape.
comparison
    ν new − old per output and hidden layer, and each output's input changes
    (:mod:`.changes`).
advice
    per output, ν and variance before and after pre-integration, the measured
    RQMC gain and the freezing error against its bound (:mod:`.advice`).

matplotlib is imported only when a chart is drawn.
"""

from __future__ import annotations

from collections.abc import Collection
from typing import Any

from ..sections.advice import ADVICE_TITLES
from ..sections.audit import SECTION_TITLES, UNIT_TITLE
from ..sections.comparison import COMPARISON_TITLES
from ..text import fmt_setting
from .base import Chart

__all__ = ["MAX_CHARTED", "Chart", "charts_for"]

#: Outputs (or layers in detail) that get charts of their own; the tables cover every one.
MAX_CHARTED = 24


def _grid_title(name: str, grid: tuple[int, int], summed: int, what: str) -> str:
    extra = f", summed over {summed} channels" if summed > 1 else ""
    return f"Total index of every input, laid out in the shape of {name} ({grid[0]} × {grid[1]}{extra}), {what}"


_GRID_CAPTION = (
    "Each cell is one input, at its place in the model's input tensor; lighter cells have larger total indices "
    "(estimates below 0, noise around a negligible index, take the colour of 0)."
)
_SHARED = " Every panel has the same colour scale."
_GROUPED = " Indices were measured per group of inputs: every input shows its group's total index."
_OVERALL_CAPTION = (
    " Each output's indices are weighted by its variance: the share of the outputs' summed variance that "
    "involves the input."
)


def _audit_charts(result: Any, prefix: str, wanted: Any) -> list[Chart]:
    from .depth import depth_chart
    from .heatmap import heatmap_chart, input_layouts, output_panels, overall_panel, unit_panels
    from .indices import indices_chart

    names = [str(i.get("name", k)) for k, i in enumerate(result.inputs)]
    charts: list[Chart | None] = []
    groups = list(getattr(result, "groups", None) or [])
    panels = output_panels(result.outputs, names, groups)
    for k, layout in enumerate(input_layouts(result.model, names) if wanted(SECTION_TITLES["outputs"]) else []):
        section = SECTION_TITLES["outputs"]
        if len(panels) > 1:
            title = _grid_title(layout.name, layout.grid, layout.summed, "for all outputs together")
            caption = _GRID_CAPTION + (_GROUPED if groups else "") + _OVERALL_CAPTION
            charts.append(heatmap_chart([overall_panel(panels)], layout, f"{prefix}all{k}", title=title,
                                        caption=caption, section=section))
        title = _grid_title(layout.name, layout.grid, layout.summed, "per output" if len(panels) > 1 else "")
        caption = _GRID_CAPTION + (_GROUPED if groups else "") + _SHARED
        charts.append(heatmap_chart(panels, layout, f"{prefix}grid{k}", title=title.rstrip(", "),
                                    caption=caption, section=section))
        for j, layer in enumerate(x for x in result.layers if any(u.total_index for u in x.units)):
            if j >= MAX_CHARTED or not wanted(UNIT_TITLE.format(name=layer.name)):
                continue
            units = unit_panels(layer, names)
            title = _grid_title(layout.name, layout.grid, layout.summed, f"for the units of {layer.name}")
            caption = _GRID_CAPTION + _SHARED + " Units with the largest variance first."
            charts.append(heatmap_chart(units, layout, f"{prefix}units{k}-{j}", title=title, caption=caption,
                                        section=UNIT_TITLE.format(name=layer.name)))
    ranked = [o for o in result.outputs if not o.relation][:MAX_CHARTED]
    for k, o in enumerate(ranked):
        section = SECTION_TITLES["inputs"].format(name=o.name)
        if wanted(section):
            charts.append(indices_chart(o, f"{prefix}inputs{k}", section))
    if wanted(SECTION_TITLES["layers"]):
        charts.append(depth_chart(result.layers, result.outputs, f"{prefix}depth", SECTION_TITLES["layers"]))
    return [c for c in charts if c is not None]


def _comparison_charts(result: Any, prefix: str, wanted: Any) -> list[Chart]:
    from .changes import input_changes_chart, nu_changes_chart

    charts = [nu_changes_chart(result, f"{prefix}nu", COMPARISON_TITLES["outputs"])]
    with_changes = [o for o in result.outputs if o.total_index_change][:MAX_CHARTED]
    if not wanted(COMPARISON_TITLES["inputs"]):
        with_changes = []
    for k, o in enumerate(with_changes):
        charts.append(input_changes_chart(result, o, f"{prefix}moved{k}", COMPARISON_TITLES["inputs"]))
    return [c for c in charts if c is not None]


def _advice_charts(result: Any, prefix: str, wanted: Any) -> list[Chart]:
    from .advice import freezing_chart, gain_chart, preintegration_chart

    charts = []
    freeze = ADVICE_TITLES["freeze"].format(eps=fmt_setting(result.settings.get("freeze_threshold", float("nan"))))
    for k, o in enumerate(result.outputs[:MAX_CHARTED]):
        section = ADVICE_TITLES["output"].format(name=o.name)
        if not wanted(section):
            continue
        gain = "" if o.rqmc_gain is None else ADVICE_TITLES["gain"].format(feature=o.rqmc_gain.feature)
        charts += [
            preintegration_chart(o, f"{prefix}pre{k}", section, ADVICE_TITLES["candidates"]),
            gain_chart(o, f"{prefix}gain{k}", section, gain),
            freezing_chart(o, f"{prefix}freeze{k}", section, freeze),
        ]
    return [c for c in charts if c is not None]


def charts_for(result: Any, prefix: str = "", sections: Collection[str] | None = None) -> list[Chart]:
    """Every chart of ``result``'s HTML report, in page order within each section.

    Parameters
    ----------
    result : AuditResult, ComparisonResult or AdviceResult
        The result (its ``kind`` picks the charts).
    prefix : str, optional
        Prepended to every chart's key (keeps ids apart when several reports share a page).
    sections : collection of str, optional
        Draw only the charts of the sections with these titles (those a report
        shows); default every chart.

    Returns
    -------
    list of Chart
        Each with the title of its section (:attr:`Chart.section`).
    """
    kind = getattr(result, "kind", "audit")

    def wanted(title: str) -> bool:
        return sections is None or title in sections

    if kind == "audit":
        return _audit_charts(result, prefix, wanted)
    if kind == "comparison":
        return _comparison_charts(result, prefix, wanted)
    if kind == "advice":
        return _advice_charts(result, prefix, wanted)
    if kind in ("simplified", "slopes"):
        return []  # their pages hold the report's tables; no chart of their own yet
    raise TypeError(f"no charts for a result of kind {kind!r}")
