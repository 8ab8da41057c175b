"""Tests of audit.report.charts.advice: pre-integration, RQMC gain and freezing, per output."""

from __future__ import annotations

import itertools
from dataclasses import replace

from matplotlib.backends.backend_agg import FigureCanvasAgg
from reportdata import make_advice

from audit.report.charts.advice import freezing_chart, gain_chart, preintegration_chart
from audit.report.charts.svg import style
from audit.results import Estimate


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


def _drawn_figures(monkeypatch) -> list:
    """Keep every figure the advice charts hand to ``to_svg``."""
    import audit.report.charts.advice as advice

    figures: list = []
    real = advice.to_svg

    def keep(figure, key):
        figures.append(figure)
        return real(figure, key)

    monkeypatch.setattr(advice, "to_svg", keep)
    return figures


def test_tick_labels_never_overlap_even_on_a_narrow_range(monkeypatch):
    # The freezing chart spans 0 to about 0.025 %: matplotlib's default ticks there ran into each other
    # ("0.00000.00250.0050..."). Common practice, no source: labels of one axis must not share pixels.
    figures = _drawn_figures(monkeypatch)
    first = make_advice().outputs[0]
    narrow = replace(
        first.freeze_group,
        bound_normalised=Estimate(1.967e-4, 1.896e-4, 2.038e-4, 3e-6),
        measured_normalised=Estimate(1.962e-4, 1.885e-4, 2.040e-4, 3.3e-6),
    )  # the demo surrogate's: ticks every 0.0025 % by default, six characters wide
    first = replace(first, freeze_group=narrow)
    preintegration_chart(first, "p")
    gain_chart(first, "g")
    freezing_chart(first, "f")
    assert len(figures) == 3
    for figure in figures:
        with style():
            renderer = FigureCanvasAgg(figure).get_renderer()
            figure.draw(renderer)
        for ax in figure.axes:
            boxes = [t.get_window_extent(renderer) for t in ax.get_xticklabels() if t.get_text() and t.get_visible()]
            boxes.sort(key=lambda b: b.x0)
            assert len(boxes) >= 2
            # at least half the font size between labels: the browser draws the SVG's text in its own
            # sans-serif font, which may be a little wider than the one matplotlib measured
            gap = 0.5 * ax.get_xticklabels()[0].get_fontsize() * figure.dpi / 72
            for left, right in itertools.pairwise(boxes):
                assert right.x0 - left.x1 >= gap, [t.get_text() for t in ax.get_xticklabels()]
