"""Tests of audit.report.html.page: any report as one safe, self-contained HTML page."""

from __future__ import annotations

from htmlcheck import read_page

from audit.report.charts.base import Chart
from audit.report.document import (
    Bar,
    Bullet,
    Bullets,
    Cell,
    Column,
    Field,
    Fields,
    Heading,
    Note,
    Paragraph,
    Report,
    Section,
    Table,
)
from audit.report.html.page import FOLD_ROWS, PICTURES_TITLE, fragment, page
from audit.report.text import CAUTION

EVIL = "<script>alert(1)</script>\x1b[31m&"
SVG = '<svg class="chart-image" viewBox="0 0 10 10"><rect width="5" height="5"/></svg>'


def _report(rows: int = 3) -> Report:
    table = Table(
        (Column("input", "name"), Column("total index"), Column("size", "bar"), Column("check", "text")),
        tuple((f"x{k}", "0.5000", Bar(0.5), Cell("FAIL", "alert")) for k in range(rows)),
    )
    fields = Fields((Field("model", EVIL, ("line one",)), Field("notice", "n", tone="warning")))
    return Report("audit", f"Audit of {EVIL}", (
        Section("Model and run", (fields,)),
        Section("Inputs", (Paragraph("lead"), table, Note("a note"))),
        Section("Moved", (Heading("out_a"), table, Heading("out_b"), table)),
        Section("What the numbers suggest", (Bullets((Bullet("go on", ("netdim advise 'm y.onnx' --law normal",)),)),)),
    ))  # fmt: skip


def test_every_block_becomes_html_and_names_are_escaped():
    text = page(_report(), generator="netdim 9.9")
    parsed = read_page(text)
    assert not parsed.problems and parsed.scripts == 0 and not parsed.external
    assert text.startswith("<!DOCTYPE html>") and '<meta name="generator" content="netdim 9.9">' in text
    assert "<script>" not in text and "&lt;script&gt;" in text and "\\x1b[31m&amp;" in text
    assert parsed.tags["dl"] == 1 and parsed.tags["table"] == 3 and parsed.tags["h3"] == 2 and parsed.tags["pre"] == 1
    assert '<span class="bar" style="width: 50.0%"' in text and 'class="tone-alert"' in text
    assert "netdim advise &#x27;m y.onnx&#x27; --law normal" in text  # the command, whole, on one line
    assert text.count(CAUTION.replace("'", "&#x27;")) == 2  # at the top and at the end


def test_long_tables_fold_and_short_ones_do_not():
    assert "<details>" not in page(_report(FOLD_ROWS))
    assert f"Table of {FOLD_ROWS + 1} rows" in page(_report(FOLD_ROWS + 1))


def _chart(key: str, section: str, heading: str = "") -> Chart:
    return Chart(key, f"title {key}", "how to read", SVG, section, heading=heading)


def test_charts_go_before_the_first_table_after_their_heading_or_in_a_section_of_their_own():
    charts = [_chart("c1", "Inputs"), _chart("c2", "Moved", "out_b"), _chart("c3", "Moved"), _chart("c4", "Gone")]
    text = page(_report(), charts)
    parsed = read_page(text)
    assert parsed.titles() == ["title c1", "title c2", "title c3", "title c4"]
    inputs = text[text.index("<h2>Inputs</h2>"):]
    assert inputs.index("<p>lead</p>") < inputs.index('id="c1"') < inputs.index("<table>")
    moved = text[text.index("<h2>Moved</h2>"):text.index("<h2>What")]
    assert moved.index("<h3>out_b</h3>") < moved.index('id="c2"') < moved.rindex("<table>")
    assert moved.index('id="c3"') > moved.rindex("</table>")  # no heading of its own: at the end
    pictures = text.index(f"<h2>{PICTURES_TITLE}</h2>")
    assert pictures < text.index('id="c4"') and pictures < text.index("<h2>What the numbers suggest</h2>")
    assert 'aria-label="title c1"' in text


def test_the_fragment_carries_its_style_and_the_page_its_head():
    piece = fragment(_report(), prefix="abc")
    assert piece.startswith('<div class="netdim"') and "<style>" in piece and 'id="abc-s0"' in piece
    assert "<html" not in piece and not read_page(piece).problems
    whole = page(_report())
    assert whole.index("<style>") < whole.index("</head>") and whole.count("<style>") == 1
