"""The slopes report's content (audit/report/sections/slopes.py) and both renderers on it."""

from __future__ import annotations

import math

import pytest

from audit.report import build_report, markdown
from audit.report.document import Bar, Table
from audit.report.text import CAUTION
from audit.results import Estimate, FeatureEstimate
from audit.results.slopes import (
    Direction,
    DirectionSummary,
    InputBound,
    LayerSlopes,
    OutputSlopes,
    ScreenedOutput,
    Screening,
    SlopesResult,
)


def _e(x: float, half: float = 0.01) -> Estimate:
    return Estimate(x, x - half, x + half, half / 2)


def _dirs(count: int = 1, ridge: bool = True) -> DirectionSummary:
    return DirectionSummary(
        [_e(0.9), _e(0.05)], [0.95, 0.05], count, 2, 18.0, 1, 0.05 if count == 1 else 0.0, 0.3,
        [Direction(0.95, [("a", 0.8), ("b", -0.6)], [0.8, -0.6, 0.0])], _e(0.05) if ridge else None, count < 3,
    )  # fmt: skip


def _result(screening: bool = False) -> SlopesResult:
    bounds = [InputBound("a", _e(0.6), _e(1.2), _e(0.5)), InputBound("b", _e(0.1), _e(0.2), _e(0.3)),
              InputBound("c", _e(0.0, 0.0), _e(0.0, 0.0), _e(0.0, 0.0))]  # fmt: skip
    out = OutputSlopes("y", _e(2.0), bounds, _e(0.7), 1.5, 1.1, _e(1.05), _dirs())
    inert = OutputSlopes("z", _e(0.0, 0.0), [], None, 0.0, math.nan, inert=True)
    design = {"gradient_points": 64, "points": 128, "replicates": 8, "seed": 3, "method": "autograd",
              "evaluations_per_point": 3, "cost_rule": "rule", "gradient_evaluations": 1536,
              "index_evaluations": 5120, "full_evaluations": 5120, "cost_fraction": 1.3,
              "interval": "Student-t over 8 independent randomizations, 95%"}  # fmt: skip
    inputs = [{"name": n, "law": "normal", "bound_rule": "sd² · E[(∂f/∂x)²]"} for n in "abc"]
    screen = None
    if screening:
        kept = [FeatureEstimate("a", _e(0.5))]
        screen = Screening(["a"], ["b", "c"], [ScreenedOutput("y", kept, kept, _e(0.3), _e(0.4))])
    layers = [LayerSlopes("body.1", "tanh", 4, _dirs(2, ridge=False), 1.02)]
    return SlopesResult({"source": "net.onnx", "format": "onnx"}, inputs, design, [out, inert], layers, screen)


def test_sections_and_their_content():
    report = build_report(_result())
    titles = [s.title for s in report.sections]
    assert titles[:4] == ["Model and run", "Outputs at a glance: directions and bounds",
                          "Bounds on the total indices of y", "Active directions of y"]  # fmt: skip
    assert "Directions spanned by each hidden layer" in titles
    tables = [b for b in report.blocks() if isinstance(b, Table)]
    bounds = next(t for t in tables if t.columns[1].header == "bound")
    assert [row[0] for row in bounds.rows] == ["a", "b", "c"]  # largest bound first
    eig = next(t for t in tables if t.columns[1].header.startswith("λ_k"))
    assert isinstance(eig.rows[0][-1], Bar) and eig.rows[0][-1].value == pytest.approx(0.95)  # chart data
    text = markdown(_result())
    assert "close to a ridge function of 1 direction of its 3 inputs" in text
    assert "misses at most" in text  # the ridge bound with normal inputs
    assert "The bound lies below the total index beyond both intervals for b" in text
    assert "is not a safety validation" in CAUTION and "is not a safety validation" in text


def test_screening_section_lists_what_was_left_out():
    text = markdown(_result(screening=True))
    assert "## Outputs at a glance: what the inputs left out carry" in text
    assert "| y | 0.7000 | 0.3000 | [0.2900, 0.3100] | 0.4000 | [0.3900, 0.4100] |" in text
    assert "Kept 1 of 3 inputs" in text and "b, c" in text
    assert "the other 2 (one group)" in text
    assert "carry together at most 0.4000" in text


def test_terminal_render_and_output_limit():
    import io

    from audit.report import make_console, render

    out = io.StringIO()
    render(_result(), make_console(file=out, width=100))
    assert "Active directions of y" in out.getvalue() and "is not a safety validation" in out.getvalue()
    report = build_report(_result(), all_outputs=False, max_outputs=0)
    assert not any((s.title or "").startswith("Bounds on") for s in report.sections)
    with pytest.raises(ValueError, match="max_outputs"):
        build_report(_result(), max_outputs=-1)
