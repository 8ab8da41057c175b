"""Tests of audit.report.sections.comparison: what a comparison report holds, as plain content."""

from __future__ import annotations

from reportdata import make_comparison

from audit.report.document import Cell, Fields, Heading, Note, Table
from audit.report.sections.comparison import (
    COMPARISON_TITLES,
    MAX_MOVED,
    comparison_report,
    fmt_change,
    outputs_table,
)
from audit.report.text import fmt
from audit.results import Estimate


def test_changes_are_signed_marked_and_given_a_half_width():
    assert fmt_change(Estimate(0.2, 0.15, 0.25, 0.02)) == (f"+{fmt(0.2, 3)} *", f"± {fmt(0.05, 2)}")
    assert fmt_change(Estimate(-0.001, -0.008, 0.006, 0.003)) == (f"{fmt(-0.001, 3)}", f"± {fmt(0.007, 2)}")
    assert fmt_change(None) == ("inert", "")


def test_sections_in_order_with_the_models_the_run_and_the_note():
    result = make_comparison()
    report = comparison_report(result)
    assert report.kind == "comparison"
    assert report.title == "Comparison of model_zoo/greenhouse_v1.onnx and model_zoo/greenhouse_v2.onnx"
    assert [s.title for s in report.sections] == [*COMPARISON_TITLES.values(), None]
    (header,) = report.sections[0].blocks
    assert isinstance(header, Fields)
    labels = [f.label for f in header.rows]
    assert labels[:3] == ["old", "new", "inputs"] and "design" in labels and "run" in labels
    design = next(f for f in header.rows if f.label == "design")
    assert "same points for both (paired)" in design.text
    assert report.sections[-1].blocks[0].text.startswith("* the 95 % interval of the change excludes 0")


def test_outputs_table_has_both_nus_the_change_and_rank_agreement():
    result = make_comparison()
    table = outputs_table(result)
    assert [c.header for c in table.columns] == [
        "output",
        "ν old",
        "ν new",
        "change",
        "95 %",
        "rank agreement",
        "top-k kept",
    ]
    o = result.outputs[0]
    change, half = fmt_change(o.mean_dimension_change)
    assert table.rows[0] == (o.name, fmt(o.old.mean_dimension.estimate), fmt(o.new.mean_dimension.estimate),
                             change, half, fmt(o.kendall_tau, 3), "3/3")  # fmt: skip


def test_moved_inputs_are_grouped_by_output_and_capped():
    report = comparison_report(make_comparison(moved=MAX_MOVED + 2))
    blocks = report.sections[2].blocks
    assert blocks[0] == Heading("inside_temperature") and isinstance(blocks[1], Table)
    assert len(blocks[1].rows) == MAX_MOVED and blocks[2] == Note("… 2 more moved")
    assert [c.header for c in blocks[1].columns] == ["input", "old", "new", "change", "95 %"]
    none = comparison_report(make_comparison(moved=0)).sections[2].blocks
    assert none == (Note("No input's total index changed significantly (every interval contains 0)."),)


def test_layers_and_gates_with_their_details_or_why_they_are_missing():
    report = comparison_report(make_comparison())
    (layers,) = report.sections[3].blocks
    assert layers.rows[0][:2] == ("/body/body.1/Tanh_output_0", "32")
    gates, details = report.sections[4].blocks
    assert [row[3] for row in gates.rows] == [Cell("pass"), Cell("FAIL", "alert")]
    assert [f.label for f in details.rows] == ["max_dimension_rise", "min_rank_agreement"]
    bare = comparison_report(make_comparison(gates=False, layers=False))
    assert bare.sections[3].blocks == (Note("No hidden layer has the same name and unit count in both models."),)
    assert "No gates are on" in bare.sections[4].blocks[0].text
