"""Tests of audit.report.charts.svg: figures as SVG text that is safe and self-contained in a page."""

from __future__ import annotations

import re

from htmlcheck import read_page

from audit.report.charts.svg import LABEL_LIMIT, RC, label, new_figure, styled, to_svg


@styled
def _figure(title: str):
    figure = new_figure(3.0, 2.0)
    ax = figure.add_subplot()
    ax.plot([0, 1], [0, 1], label="line")
    ax.imshow([[0.0, 1.0], [1.0, 0.0]])
    ax.set_title(title)
    ax.legend()
    return figure


def test_svg_keeps_text_as_text_and_reads_no_mathematics():
    svg = to_svg(_figure("cost $5 < $6 & more"), "k1")
    assert svg.startswith("<svg ") and svg.endswith("</svg>")
    assert "cost $5 &lt; $6 &amp; more" in svg  # drawn as written, escaped for XML
    assert "<metadata>" not in svg and "<?xml" not in svg and "DOCTYPE" not in svg


def test_ids_are_prefixed_so_that_charts_can_share_a_page():
    a, b = to_svg(_figure("a"), "one"), to_svg(_figure("a"), "two")
    ids_a = set(re.findall(r'\sid="([^"]+)"', a))
    ids_b = set(re.findall(r'\sid="([^"]+)"', b))
    assert ids_a and all(i.startswith("one-") for i in ids_a) and not ids_a & ids_b
    refs = re.findall(r'href="#([^"]+)"', a) + re.findall(r"url\(#([^)]+)\)", a)
    assert refs and set(refs) <= ids_a  # every reference points inside the same chart


def test_svg_references_nothing_outside_itself_and_scales_with_the_page():
    svg = to_svg(_figure("t"), "k")
    page = read_page(svg)
    assert not page.external and not page.problems and page.scripts == 0
    assert 'class="chart-image"' in svg and "max-width:" in svg and 'role="img"' in svg
    assert "data:image/png;base64," in svg  # the raster of imshow is embedded


def test_labels_are_safe_and_short():
    assert label("a\x1bb") == "a\\x1bb"
    long = "x" * 100
    assert len(label(long)) == LABEL_LIMIT and "…" in label(long)


def test_settings_apply_inside_charts_only():
    import matplotlib

    before = matplotlib.rcParams["svg.fonttype"]
    _figure("t")
    assert matplotlib.rcParams["svg.fonttype"] == before and RC["svg.fonttype"] == "none"
