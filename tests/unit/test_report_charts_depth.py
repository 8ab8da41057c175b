"""Tests of audit.report.charts.depth: ν of every layer's units, input side first, and the outputs."""

from __future__ import annotations

import dataclasses

from reportdata import make_result

from audit.report.charts.depth import DEPTH_TITLE, depth_chart, unit_values


def test_unit_values_leave_out_inert_and_unreliable_units():
    layer = make_result().layers[0]
    units = list(layer.units)
    units[0] = dataclasses.replace(units[0], unreliable="interval wider than [1, d]")
    kept = unit_values(dataclasses.replace(layer, units=units))
    live = [u for u in layer.units if not u.inert]
    assert kept == [u.mean_dimension.estimate for u in live[1:]]


def test_one_column_per_layer_then_the_outputs():
    result = make_result()
    chart = depth_chart(result.layers, result.outputs, "d", "Hidden layers")
    assert chart.title == DEPTH_TITLE and chart.section == "Hidden layers"
    for layer in result.layers:
        assert f">{layer.name}" in chart.svg
    assert ">outputs" in chart.svg and "3 shown" in chart.svg  # the inert output is left out
    assert depth_chart([], result.outputs, "d") is None


def test_a_layer_saved_with_its_summary_only_is_drawn_from_its_quantiles():
    result = make_result()
    bare = [dataclasses.replace(x, units=[]) for x in result.layers]
    chart = depth_chart(bare, result.outputs, "d")
    assert chart is not None and all(f">{x.name}" in chart.svg for x in bare)
