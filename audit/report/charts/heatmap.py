"""Inputs that form an image or a sequence: total indices drawn in the input tensor's own shape.

Which inputs form a grid is read from the report (:func:`input_layouts`):

- the model's input tensors (``model["input"]`` or, for several tensors,
  ``model["inputs"]``, each ``{"name", "shape"}``): the features are the
  tensors' elements one after the other, each tensor row-major (C order), as
  the model reads them. A tensor of rank 2 or more is a grid of its last two
  axes (an image's rows and columns, a sequence's steps and channels); leading
  axes (channels of a colour image) are summed into each cell. A tensor of
  rank 1 is a plain list of features and has no picture.
- groups of inputs, when a report carries them (``model["groups"]``, a list of
  ``{"name", "features", "shape"}``: a named group of input names laid out in
  ``shape``); a group without a shape has no picture.

One panel per output (a classifier: per class), all panels on one colour
scale, and a panel for all outputs together (:func:`overall_panel`, drawn as
a chart of its own on its own scale): each input's total index weighted by
the output variances, Σ_k σ²_k T_jk / Σ_k σ²_k, the share of the summed
variance of the outputs that involves the input (the usual aggregation of
indices over the components of a vector output; Gamboa, Janon, Klein and
Lagnoux, "Sensitivity analysis for multidimensional and functional outputs",
Electronic Journal of Statistics, 2014). Lighter means larger (viridis, whose
lightness rises monotonically: readable in grey-scale); estimates below 0
(noise around a negligible index) take the colour of 0.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ...results import FeatureEstimate, LayerResult, OutputResult
from .base import Chart
from .svg import COLOUR_MAP, label, new_figure, styled, to_svg

__all__ = [
    "MAX_PANELS",
    "OVERALL",
    "Layout",
    "Panel",
    "grid_values",
    "heatmap_chart",
    "input_layouts",
    "output_panels",
    "overall_panel",
    "unit_panels",
]

#: Panels drawn in one chart (outputs or units); the overall panel comes on top.
MAX_PANELS = 16
#: Title of the panel of all outputs together (weighted by their variances).
OVERALL = "all outputs"
_TITLE_LIMIT = 16


@dataclass(frozen=True)
class Layout:
    """Where the features of one input tensor (or group) sit in its grid.

    Attributes
    ----------
    name : str
        The tensor's (or group's) name.
    shape : tuple of int
        Its shape as the model reads it (no batch axis).
    positions : tuple of int
        Indices of its features among the report's inputs, in row-major order of ``shape``.
    """

    name: str
    shape: tuple[int, ...]
    positions: tuple[int, ...]

    @property
    def grid(self) -> tuple[int, int]:
        """(rows, columns) drawn: the last two axes; a single column is drawn as a row."""
        rows, cols = self.shape[-2], self.shape[-1]
        return (1, rows) if cols == 1 else (rows, cols)

    @property
    def summed(self) -> int:
        """How many slices of the leading axes are summed into each cell (1 for a plain image)."""
        return math.prod(self.shape[:-2])


@dataclass(frozen=True)
class Panel:
    """One grid of values: its title, one value per feature (report order) and a weight (the variance)."""

    title: str
    values: tuple[float, ...]
    weight: float


def _layout(name: str, shape: Sequence[Any], positions: Sequence[int]) -> Layout | None:
    try:
        dims = tuple(int(v) for v in shape)
    except (TypeError, ValueError):
        return None
    if len(dims) < 2 or min(dims) < 1 or math.prod(dims) != len(positions) or math.prod(dims) < 2:
        return None
    return Layout(str(name), dims, tuple(positions))


def input_layouts(model: Mapping[str, Any] | None, names: Sequence[str]) -> list[Layout]:
    """The grids the inputs of a report form (see the module docstring).

    Parameters
    ----------
    model : dict
        A result's ``model`` (``input`` or ``inputs``, and ``groups`` if any).
    names : sequence of str
        The report's input names, in order.

    Returns
    -------
    list of Layout
        Groups with a shape first, then input tensors of rank 2 or more; empty
        when the tensors' sizes do not add up to the inputs.
    """
    model = model or {}
    out: list[Layout] = []
    where = {n: i for i, n in enumerate(names)}
    for group in model.get("groups") or []:
        if isinstance(group, Mapping) and group.get("shape") and all(f in where for f in group.get("features", [])):
            layout = _layout(group.get("name", "group"), group["shape"], [where[f] for f in group["features"]])
            if layout is not None:
                out.append(layout)
    tensors = model.get("inputs") or ([model["input"]] if isinstance(model.get("input"), Mapping) else [])
    try:
        sizes = [math.prod(int(v) for v in t.get("shape", [])) for t in tensors]
    except (TypeError, ValueError, AttributeError):
        return out
    if sum(sizes) != len(names):
        return out
    start = 0
    for tensor, size in zip(tensors, sizes, strict=True):
        layout = _layout(tensor.get("name", "input"), tensor.get("shape", []), range(start, start + size))
        if layout is not None:
            out.append(layout)
        start += size
    return out


def grid_values(values: Sequence[float], layout: Layout) -> np.ndarray:
    """``values`` (one per report input) arranged in ``layout.grid``, leading axes summed."""
    picked = np.array([values[p] for p in layout.positions], dtype=float).reshape(layout.shape)
    if picked.ndim > 2:
        picked = picked.reshape(-1, *layout.shape[-2:]).sum(axis=0)
    return picked.reshape(layout.grid)


def _totals(
    indices: Sequence[FeatureEstimate], names: Sequence[str], member_of: Mapping[str, str] | None = None
) -> tuple[float, ...]:
    by = {f.feature: f.value.estimate for f in indices}
    member_of = member_of or {}
    return tuple(float(by.get(member_of.get(n, n), math.nan)) for n in names)


def output_panels(
    outputs: Sequence[OutputResult], names: Sequence[str], groups: Sequence[Mapping[str, Any]] = ()
) -> list[Panel]:
    """A panel per output with total indices (inert outputs and exact functions of others left out).

    With ``groups`` (a grouped run: each group's ``name`` and ``inputs``), every input
    takes the total index of its group.
    """
    member_of = {str(x): str(g["name"]) for g in groups for x in g.get("inputs", [])}
    return [
        Panel(o.name, _totals(o.total_index, names, member_of), o.variance.estimate)
        for o in outputs
        if o.total_index and not (o.inert or o.relation) and o.mean_dimension is not None
    ]


def unit_panels(layer: LayerResult, names: Sequence[str], limit: int = MAX_PANELS) -> list[Panel]:
    """Panels of the units of ``layer`` that carry total indices, largest variance first."""
    units = [u for u in layer.units if u.total_index and not (u.inert or u.unreliable)]
    units.sort(key=lambda u: -u.variance.estimate if math.isfinite(u.variance.estimate) else 0.0)
    def title(unit: str) -> str:  # "features.1[1,5,2]" -> "[1,5,2]": the chart names the layer
        return unit[len(layer.name) :] if unit.startswith(layer.name) and len(unit) > len(layer.name) else unit

    return [Panel(title(u.unit), _totals(u.total_index, names), u.variance.estimate) for u in units[:limit]]


def overall_panel(panels: Sequence[Panel]) -> Panel:
    """All ``panels`` in one: each value weighted by its panel's weight (an output's variance)."""
    weights = np.array([p.weight if math.isfinite(p.weight) and p.weight > 0 else 0.0 for p in panels])
    values = np.nan_to_num(np.array([p.values for p in panels], dtype=float))
    total = float(weights.sum())
    mix = (weights @ values) / total if total > 0 else values.mean(axis=0)
    return Panel(OVERALL, tuple(float(v) for v in mix), total)


@styled
def heatmap_chart(
    panels: Sequence[Panel],
    layout: Layout,
    key: str,
    *,
    title: str,
    caption: str,
    section: str = "",
) -> Chart | None:
    """Panels of total indices in the grid of ``layout``, on one colour scale.

    Parameters
    ----------
    panels : sequence of Panel
        One per output (or unit); at most :data:`MAX_PANELS` are drawn.
    layout : Layout
        The grid.
    key, title, caption, section : str
        The chart's key, title in words, how to read it, and its section.

    Returns
    -------
    Chart or None
        ``shape`` is ``layout.grid``; ``None`` without panels.
    """
    if not panels:
        return None
    drawn = list(panels[:MAX_PANELS])
    rows, cols = layout.grid
    wide = cols > 3 * rows
    per_row = 1 if wide else min(len(drawn), 6)
    lines = math.ceil(len(drawn) / per_row)
    width = 6.8 if wide else (1.15 * per_row + 0.9 if len(drawn) > 1 else 3.4)
    cell = (width - 0.9) / per_row / cols
    height = lines * (rows * cell + 0.32) + 0.3
    figure = new_figure(width, max(height, 1.6))
    axes = figure.subplots(lines, per_row, squeeze=False)
    grids = [np.clip(np.nan_to_num(grid_values(p.values, layout)), 0.0, None) for p in drawn]
    top = max(float(g.max()) for g in grids)
    image = None
    for k, ax in enumerate(axes.flat):
        ax.set_xticks([])
        ax.set_yticks([])
        if k >= len(drawn):
            ax.set_axis_off()
            continue
        image = ax.imshow(grids[k], cmap=COLOUR_MAP, vmin=0.0, vmax=top if top > 0 else 1.0, interpolation="nearest")
        ax.set_title(label(drawn[k].title, _TITLE_LIMIT), fontsize=7.5)
        for side in ax.spines.values():
            side.set_visible(False)
    figure.colorbar(image, ax=axes, shrink=0.85, label="total index", aspect=25)
    return Chart(key, title, caption, to_svg(figure, key), section, layout.grid)
