"""Tests of audit.report.markdown: any report as Markdown, with the terminal's figures, safe names."""

from __future__ import annotations

import dataclasses
import re

import pytest
from reportdata import (
    THRESHOLD,
    all_kinds,
    expected_numbers,
    make_comparison,
    make_result,
    md_tables,
    render_text,
    unescape_md,
)

from audit.report import CAUTION, build_report, markdown
from audit.report.document import Bar, Cell, Table
from audit.report.markdown import escape, to_markdown
from audit.report.sections.audit import SECTION_TITLES
from audit.report.text import fmt, fmt_interval, share_bar
from audit.results import AuditResult, FeatureEstimate


def test_markdown_tables_parse_and_carry_the_same_numbers():
    result = make_result()
    md = markdown(result, all_outputs=False)
    tables = md_tables(md)
    # overview, three ranked outputs, layers
    assert len(tables) == 5
    for table in tables:
        widths = {len(row) for row in table}
        assert len(widths) == 1, table[0]
        assert all(re.fullmatch(r":?-+:?", c) for c in table[1])
    overview = tables[0]
    assert [row[0] for row in overview[2:]] == [o.name for o in result.outputs]
    for row, o in zip(overview[2:], result.outputs, strict=True):
        assert row[1:3] == [fmt(o.mean.estimate), fmt(o.variance.estimate)]
        if o.mean_dimension is None:
            assert row[3] == "inert (constant)"
        else:
            md_ = o.mean_dimension
            assert row[3] == fmt(md_.estimate)
            assert row[4] == fmt_interval(md_.ci_low, md_.ci_high)
    cells = {c for table in tables for row in table for c in row}
    missing = sorted(
        s for s in expected_numbers(result, result.outputs[:3], THRESHOLD) if s not in cells and s not in md
    )
    assert not missing
    layers = tables[-1]
    assert [row[0] for row in layers[2:]] == [ly.name for ly in result.layers]
    assert CAUTION in md
    for key in ("header", "outputs", "layers", "findings"):
        assert f"## {SECTION_TITLES[key]}" in md


def test_markdown_and_terminal_show_the_same_figures():
    result = make_result()
    md = markdown(result, all_outputs=True)
    text = render_text(result, all_outputs=True)
    numbers = re.compile(r"-?\d+\.\d+(?:e[+-]\d+)?")
    assert set(numbers.findall(md)) == set(numbers.findall(text))


@pytest.mark.parametrize("kind", ["audit", "comparison", "advice"])
def test_every_kind_has_its_title_tables_cells_and_the_caution_last(kind):
    result = all_kinds()[kind]
    report = build_report(result, **({"all_outputs": True} if kind == "audit" else {}))
    md = markdown(result)
    assert md == to_markdown(report) and md.startswith(f"# {report.title}\n") and md.endswith(f"> {CAUTION}\n")
    assert md.rstrip("\n").split("\n")[-3:] == ["---", "", f"> {CAUTION}"]
    model_tables = [b for b in report.blocks() if isinstance(b, Table)]
    tables = md_tables(md)
    assert len(tables) == len(model_tables)
    for table, parsed in zip(model_tables, tables, strict=True):
        assert [unescape_md(c) for c in parsed[0]] == [c.header for c in table.columns]
        assert parsed[1] == [":---" if c.align == "left" else "---:" for c in table.columns]
        for row, cells in zip(table.rows, parsed[2:], strict=True):
            want = [share_bar(c.fraction) if isinstance(c, Bar) else getattr(c, "text", c) for c in row]
            assert [unescape_md(c) for c in cells] == want
    for s in report.sections:
        if s.title:
            assert f"## {s.title}" in md


def test_comparison_markdown_has_every_cell_and_the_gate_details():
    result = make_comparison()
    md = markdown(result)
    cells = {unescape_md(c) for t in md_tables(md) for row in t for c in row}
    for table in (b for b in build_report(result).blocks() if isinstance(b, Table)):
        for row in table.rows:
            assert {c.text if isinstance(c, Cell) else c for c in row} <= cells
    assert "- **min_rank_agreement**: lowest Kendall τ of the total-index rankings: 0.9" in md
    assert "### inside_temperature" in md and f"{fmt(-0.001, 3)} \\*" in md  # marked beyond noise


def test_names_cannot_forge_rows_lines_markup_or_html():
    base = make_result()
    hostile = "bad\n| forged | row |\x1b[31m *x* `y` <script>&"
    o = dataclasses.replace(base.outputs[0], name=hostile, total_index=[
        FeatureEstimate(f"{hostile}{k}", f.value) for k, f in enumerate(base.outputs[0].total_index)])  # fmt: skip
    result = AuditResult({"source": "# heading", "format": "onnx"}, base.inputs, base.design, [o], [], ["- item"])
    md = markdown(result)
    assert "\x1b" not in md and "<script>" not in md and "\n| forged" not in md
    tables = md_tables(md)
    assert all(len({len(r) for r in t}) == 1 for t in tables)  # every row has the header's cell count
    overview = tables[0]
    assert len(overview) == 3 and unescape_md(overview[2][0]) == "bad\\n| forged | row |\\x1b[31m *x* `y` <script>&"
    assert "# Audit of \\# heading" not in md and md.startswith("# Audit of # heading\n")  # a title's own text
    assert "- **notice**: - item" in md  # after a label nothing starts a list
    assert escape("- x", leading=True) == "\\- x" and escape("1. x", leading=True) == "\\1. x"
    assert escape("a|b*c`d<e&f\\g") == "a\\|b\\*c\\`d&lt;e&amp;f\\\\g"
