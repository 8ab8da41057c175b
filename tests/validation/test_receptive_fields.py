"""The image heat maps put every input where the network sees it: receptive fields of the digits CNN.

Exact reference: the definition of a 3 × 3 convolution with padding 1 (model_zoo/nets.py, DigitsCNN,
the first layer ``features.1``): the unit at channel c, row i, column j reads the input rows i−1..i+1
and columns j−1..j+1 only, so every other pixel's total index for it is 0 (up to the rounding of
the convolution's own arithmetic). Measured with --unit-detail, laid out by the report's heat-map
layout (audit.report.charts.heatmap), each unit's total indices must sit in that 3 × 3 window.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

import audit
from audit.report.charts.heatmap import grid_values, input_layouts

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"
UNIT = re.compile(r"features\.1\[(\d+),(\d+),(\d+)\]")


@pytest.fixture(scope="module")
def detailed():
    spec = audit.load_spec(str(ZOO / "digits_cnn.toml"))
    return audit.audit_model(str(ZOO / "digits_cnn.onnx"), spec, points=64, replicates=2, seed=11,
                             layers="features.1", unit_detail=["features.1"])  # fmt: skip


def test_every_unit_sees_only_its_3_by_3_window_in_the_heat_map_layout(detailed):
    (layout,) = input_layouts(detailed.model, [i["name"] for i in detailed.inputs])
    assert layout.grid == (8, 8)
    (layer,) = detailed.layers
    checked = 0
    for unit in layer.units:
        if unit.inert or not unit.total_index:
            continue
        _channel, i, j = (int(v) for v in UNIT.fullmatch(unit.unit).groups())
        totals = grid_values([f.value.estimate for f in unit.total_index], layout)
        window = np.zeros((8, 8), dtype=bool)
        window[max(0, i - 1) : i + 2, max(0, j - 1) : j + 2] = True
        inside = np.abs(totals[window]).max()
        assert inside > 0, unit.unit
        assert np.abs(totals[~window]).max() <= 1e-6 * inside, unit.unit
        checked += 1
    assert checked >= 400  # most of the 512 units vary


def test_the_page_draws_the_units_in_the_images_shape(detailed):
    from htmlcheck import read_page

    from audit.report import html_page

    page = read_page(html_page(detailed))
    units = [c for c in page.charts if "for the units of features.1" in c["title"]]
    assert [c["shape"] for c in units] == ["8x8"] and not page.external and not page.problems
