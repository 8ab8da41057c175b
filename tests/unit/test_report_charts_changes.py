"""Tests of audit.report.charts.changes: paired changes with their intervals, beyond-noise ones marked."""

from __future__ import annotations

from reportdata import make_comparison

from audit.report.charts.changes import (
    LIMIT_REACH,
    changes_chart,
    input_changes_chart,
    input_changes_title,
    nu_changes_chart,
)
from audit.report.charts.svg import label
from audit.results import Estimate


def test_nu_changes_list_outputs_and_shared_layers():
    result = make_comparison()
    chart = nu_changes_chart(result, "n", "Mean dimension ν, old → new")
    for o in result.outputs:
        assert f">{o.name}<" in chart.svg
    assert f">{label('layer /body/body.1/Tanh_output_0')}<" in chart.svg  # shortened in the middle
    assert "interval excludes 0" in chart.svg and "within noise" in chart.svg


def test_a_far_gate_limit_is_named_not_drawn_and_a_near_one_is_drawn():
    changes = [Estimate(0.01, 0.005, 0.015, 0.002), Estimate(-0.002, -0.01, 0.006, 0.004)]
    near = changes_chart(["a", "b"], changes, "c", title="t", caption="", axis="x", limits=[0.02])
    far = changes_chart(["a", "b"], changes, "c", title="t", caption="", axis="x", limits=[LIMIT_REACH * 0.02])
    assert "gate limit" in near.svg and "Dashed: the gate's limit (0.02)" in near.caption
    assert "gate limit" not in far.svg and "lies beyond the drawn range" in far.caption
    assert changes_chart([], [], "c", title="t", caption="", axis="x") is None


def test_input_changes_follow_the_heading_of_an_output_that_moved():
    result = make_comparison()
    moved, still = result.outputs
    chart = input_changes_chart(result, moved, "i", "Inputs whose total index moved")
    assert chart.title == input_changes_title(moved.name) and chart.heading == moved.name
    assert input_changes_chart(result, still, "j").heading == ""  # no heading of its own in the report
