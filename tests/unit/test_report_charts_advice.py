"""Tests of audit.report.charts.advice: pre-integration, RQMC gain and freezing, per output."""

from __future__ import annotations

from reportdata import make_advice

from audit.report.charts.advice import freezing_chart, gain_chart, preintegration_chart


def test_each_output_gets_the_charts_it_has_numbers_for():
    first, second, inert = make_advice().outputs
    pre = preintegration_chart(first, "p", "Advice", "Inputs to pre-integrate, best first")
    assert pre.heading == "Inputs to pre-integrate, best first" and ">the model as it is<" in pre.svg
    for c in first.preintegrate:
        assert f">{c.feature} integrated out<" in pre.svg
    gain = gain_chart(first, "g")
    assert "1,024" in gain.svg and "$" not in gain.svg  # tick labels are plain text, never mathematics
    freeze = freezing_chart(first, "f")
    assert first.freeze_group.features[0] in freeze.title and "budget" in freeze.caption
    assert freezing_chart(second, "f") is None  # nothing to freeze
    assert preintegration_chart(inert, "p") is None and gain_chart(inert, "g") is None
