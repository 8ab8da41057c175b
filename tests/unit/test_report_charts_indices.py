"""Tests of audit.report.charts.indices: the ranked indices of one output."""

from __future__ import annotations

import dataclasses

from reportdata import make_result

from audit.report.charts.indices import TOP_INPUTS, indices_chart, indices_title


def test_the_largest_total_indices_are_drawn_with_a_caption_giving_nu():
    o = make_result().outputs[0]
    chart = indices_chart(o, "k", "Inputs of it")
    assert chart.title == indices_title(o.name) and chart.section == "Inputs of it" and chart.key == "k"
    drawn = [f.feature for f in o.ranked()[:TOP_INPUTS]]
    assert all(f">{name}<" in chart.svg for name in drawn)
    assert not any(f">{f.feature}<" in chart.svg for f in o.ranked()[TOP_INPUTS:])
    assert "first-order index" in chart.svg and f"of {len(o.total_index)} inputs are drawn" in chart.caption


def test_outputs_without_indices_have_no_chart_and_the_nu_only_estimator_draws_totals_only():
    result = make_result()
    inert, relation = result.outputs[3], dataclasses.replace(result.outputs[0], relation="= 1 − y")
    assert indices_chart(inert, "k") is None and indices_chart(relation, "k") is None
    only_totals = indices_chart(result.outputs[2], "k")  # no first-order indices
    assert "first-order index" not in only_totals.svg and "hatched" not in only_totals.caption
    assert only_totals.title == indices_title(result.outputs[2].name, first_order=False)
