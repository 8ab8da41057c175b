"""Tests of audit.report.document: the content model is plain, checked data."""

from __future__ import annotations

import dataclasses
import math

import pytest

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


def test_columns_align_numbers_right_and_check_their_role_and_tone():
    assert Column("x").align == "right" and Column("x").role == "number"
    assert [Column("x", r).align for r in ("name", "text", "note", "bar")] == ["left"] * 4
    with pytest.raises(ValueError, match="role"):
        Column("x", "chart")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="tone"):
        Column("x", tone="red")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="tone"):
        Cell("x", "blink")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="tone"):
        Paragraph("x", "loud")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="tone"):
        Field("a", "b", tone="shout")  # type: ignore[arg-type]


def test_tables_check_rows_names_and_bars():
    cols = (Column("input", "name"), Column("total"), Column("size", "bar"))
    table = Table(cols, (("x1", "0.5000", Bar(0.5)), ("x2", Cell("0.1000", "strong"), "")))
    assert len(table.rows) == 2
    with pytest.raises(ValueError, match="3 cells"):
        Table(cols, (("x1", "0.5"),))
    with pytest.raises(ValueError, match="only first"):
        Table((Column("total"), Column("input", "name")), ())
    with pytest.raises(ValueError, match="only first"):
        Table((Column("a", "name"), Column("b", "name")), ())
    with pytest.raises(ValueError, match="cannot hold"):
        Table(cols, (("x1", Bar(0.5), Bar(0.5)),))
    with pytest.raises(ValueError, match="cannot hold"):
        Table(cols, (("x1", "0.5", "#####"),))


def test_bars_carry_their_value_and_clip():
    assert Bar(0.25).fraction == 0.25 and Bar(3.0, scale=4.0).fraction == 0.75
    assert Bar(1.7).fraction == 1.0 and Bar(-0.2).fraction == 0.0
    assert math.isnan(Bar(math.nan).fraction) and math.isnan(Bar(1.0, scale=0.0).fraction)


def test_sections_hold_blocks_only_and_reports_list_them_in_order():
    blocks = (
        Fields((Field("model", "m.onnx (onnx)", ("line",)),)),
        Paragraph("text"),
        Note("a note"),
        Heading("sub"),
        Bullets((Bullet("finding", ("netdim advise m.onnx",)),)),
    )
    report = Report("audit", "Audit of m.onnx", (Section("One", blocks[:2]), Section(None, blocks[2:])))
    assert report.blocks() == list(blocks)
    with pytest.raises(TypeError, match="block"):
        Section("Bad", ("just a string",))  # type: ignore[arg-type]
    with pytest.raises(dataclasses.FrozenInstanceError):
        report.title = "changed"  # type: ignore[misc]
