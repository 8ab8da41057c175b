"""Tests of audit.report.charts.heatmap: which inputs form a grid, and where each input lands in it.

References: the ONNX and numpy convention that a tensor's elements are laid out row-major (C order,
numpy.reshape); scikit-learn's bundled digits, whose ``data`` rows are the 8 × 8 ``images`` read row
by row (``load_digits().images[i].ravel() == load_digits().data[i]``), the layout of
model_zoo/digits_cnn's spec names pixel_ROW_COL; the variance-weighted aggregation of indices over
a vector output (Gamboa, Janon, Klein and Lagnoux, Electronic Journal of Statistics, 2014).
"""

from __future__ import annotations

import numpy as np
import pytest
from reportdata import est

from audit.report.charts.heatmap import (
    MAX_PANELS,
    Layout,
    Panel,
    grid_values,
    heatmap_chart,
    input_layouts,
    output_panels,
    overall_panel,
    unit_panels,
)
from audit.results import FeatureEstimate, LayerResult, OutputResult, UnitResult

PIXELS = [f"pixel_{r}_{c}" for r in range(8) for c in range(8)]


def test_layouts_come_from_input_tensors_of_rank_two_or_more():
    (image,) = input_layouts({"input": {"name": "image", "shape": [1, 8, 8]}}, PIXELS)
    assert image.grid == (8, 8) and image.summed == 1 and image.positions == tuple(range(64))
    assert input_layouts({"input": {"name": "x", "shape": [8]}}, PIXELS[:8]) == []  # a plain list of features
    assert input_layouts({"input": {"name": "x", "shape": [2, 8]}}, PIXELS[:8]) == []  # sizes do not add up
    two = input_layouts({"inputs": [{"name": "a", "shape": [3]}, {"name": "seq", "shape": [4, 2]}]}, PIXELS[:11])
    assert [(x.name, x.grid, x.positions[0]) for x in two] == [("seq", (4, 2), 3)]
    (column,) = input_layouts({"input": {"name": "s", "shape": [5, 1]}}, PIXELS[:5])
    assert column.grid == (1, 5)  # a single column is drawn as a row
    assert input_layouts(None, PIXELS) == [] and input_layouts({"input": {"shape": ["?"]}}, PIXELS) == []


def test_groups_with_a_shape_are_laid_out_by_name():
    model = {"groups": [{"name": "patch", "features": ["pixel_0_1", "pixel_0_0", "pixel_1_1", "pixel_1_0"],
                         "shape": [2, 2]}, {"name": "no shape", "features": ["pixel_0_0"]}]}  # fmt: skip
    (patch,) = input_layouts(model, PIXELS)
    assert patch.name == "patch" and patch.positions == (1, 0, 9, 8)


def test_grid_values_follow_the_digits_pixel_order():
    sklearn = pytest.importorskip("sklearn.datasets")
    digits = sklearn.load_digits()
    (layout,) = input_layouts({"input": {"name": "image", "shape": [1, 8, 8]}}, PIXELS)
    for i in (0, 7, 1500):
        assert np.array_equal(grid_values(digits.data[i], layout), digits.images[i])
    # and the spec's names sit where they say
    where = grid_values(list(range(64)), layout)
    assert all(PIXELS[int(where[r, c])] == f"pixel_{r}_{c}" for r in range(8) for c in range(8))


def test_leading_axes_are_summed_into_each_cell():
    layout = Layout("rgb", (3, 2, 2), tuple(range(12)))
    values = np.arange(12.0)
    assert layout.summed == 3
    assert np.array_equal(grid_values(values, layout), values.reshape(3, 2, 2).sum(axis=0))


def _output(name: str, variance: float, totals: list[float]) -> OutputResult:
    return OutputResult(name, est(0.0, 0.1), est(variance, 0.1), est(sum(totals), 0.01),
                        [FeatureEstimate(f"x{j}", est(t, 0.01)) for j, t in enumerate(totals)])  # fmt: skip


def test_panels_and_the_variance_weighted_overall():
    names = ["x0", "x1"]
    outs = [_output("a", 1.0, [0.8, 0.2]), _output("b", 3.0, [0.1, 0.9]),
            OutputResult("c", est(0, 0), est(0, 0), None, inert=True)]  # fmt: skip
    panels = output_panels(outs, names)
    assert [p.title for p in panels] == ["a", "b"]  # the inert output has no panel
    overall = overall_panel(panels)
    expected = (np.array([0.8, 0.2]) * 1.0 + np.array([0.1, 0.9]) * 3.0) / 4.0  # Σ σ²_k T_jk / Σ σ²_k
    assert np.allclose(overall.values, expected) and overall.weight == 4.0


def test_unit_panels_take_detailed_units_largest_variance_first():
    index = [FeatureEstimate("x0", est(0.5, 0.1))]
    units = [UnitResult(f"l[{i}]", est(float(i), 0.1), est(1.1, 0.01), total_index=index) for i in range(3)]
    units.append(UnitResult("l[9]", est(9.0, 0.1), None, inert=True, total_index=[FeatureEstimate("x0", est(0, 0))]))
    layer = LayerResult("l", "Relu", (4,), {}, units)
    assert [p.title for p in unit_panels(layer, ["x0"])] == ["[2]", "[1]", "[0]"]  # the chart names the layer


def test_the_chart_carries_its_grid_and_draws_at_most_the_panel_limit():
    layout = Layout("image", (2, 3), tuple(range(6)))
    panels = [Panel(f"p{k}", tuple(float(v) for v in range(6)), 1.0) for k in range(MAX_PANELS + 3)]
    chart = heatmap_chart(panels, layout, "h", title="t", caption="c")
    assert chart.shape == (2, 3) and chart.svg.count("<image") == MAX_PANELS + 1  # and the colour bar's
    assert ">p0<" in chart.svg and f">p{MAX_PANELS - 1}<" in chart.svg and f">p{MAX_PANELS}<" not in chart.svg
    assert heatmap_chart([], layout, "h", title="t", caption="c") is None


def test_a_grouped_run_paints_every_input_with_its_group_index():
    """Indices measured per group (patches of an image): each pixel of a patch shows that patch's index."""
    names = [f"p{i}" for i in range(4)]
    groups = [{"name": "left", "inputs": ["p0", "p2"]}, {"name": "right", "inputs": ["p1", "p3"]}]
    out = OutputResult("y", est(1.0, 0.1), est(1.2, 0.1), est(2.0, 0.1),
                       [FeatureEstimate("left", est(0.7, 0.1)), FeatureEstimate("right", est(0.4, 0.1))])  # fmt: skip
    (panel,) = output_panels([out], names, groups)
    assert panel.values == (0.7, 0.4, 0.7, 0.4)
    (plain,) = output_panels([out], names)  # without the groups nothing matches an input: no value
    assert all(np.isnan(v) for v in plain.values)
