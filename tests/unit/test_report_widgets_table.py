"""Tests of audit.report.widgets.table: tables fitted to the width, numbers never split.

The layout tests through a whole audit report come first (long names at 80
columns, narrow consoles, any width); then the table's own steps.
"""

from __future__ import annotations

import io

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from reportdata import (
    GREENHOUSE_INPUTS,
    LONG_INPUT,
    LONG_OUTPUT,
    ONNX_LAYERS,
    THRESHOLD,
    assert_whole,
    expected_numbers,
    make_result,
    named_result,
    render_text,
)
from rich.console import Console

from audit.report.text import fmt
from audit.report.widgets import FitColumn, FitTable, split_header


def show(table: FitTable, width: int, encoding: str = "utf-8") -> list[str]:
    buf = io.TextIOWrapper(io.BytesIO(), encoding=encoding, errors="strict")
    Console(file=buf, width=width, no_color=True, force_terminal=False).print(table)
    buf.flush()
    return buf.buffer.getvalue().decode(encoding).splitlines()


# ----------------------------------------------------------------------------- through an audit report


def test_long_names_at_80_columns_appear_in_full_on_one_line():
    result = named_result([*GREENHOUSE_INPUTS, LONG_INPUT], ["inside_temperature", LONG_OUTPUT], ONNX_LAYERS)
    text = render_text(result, all_outputs=True)
    lines = text.splitlines()
    expected = expected_numbers(result, result.outputs, THRESHOLD)
    assert_whole(text, expected, 80)
    # composite cells (intervals, quantile chains) stay whole on one line too
    assert not sorted(s for s in expected if not any(s in line for line in lines))
    names = [*GREENHOUSE_INPUTS, LONG_INPUT, "inside_temperature", LONG_OUTPUT, *ONNX_LAYERS]
    assert not [n for n in names if not any(n in line for line in lines)]
    # a long name on a line of its own is followed by its numbers, not folded into a cell
    for layer in result.layers:
        at = next(i for i, line in enumerate(lines) if line == layer.name)
        assert fmt(layer.summary["nu_weighted"]) in lines[at + 1]


def test_greenhouse_and_onnx_layer_names_read_well_at_80_and_use_the_room_at_120():
    outputs = ["inside_temperature", "inside_humidity"]
    result = named_result(GREENHOUSE_INPUTS, outputs, ONNX_LAYERS[:1])
    for width in (80, 120):
        text = render_text(result, width=width, all_outputs=True)
        lines = text.splitlines()
        assert_whole(text, expected_numbers(result, result.outputs, THRESHOLD), width)
        # at 80 columns already, every ranked input sits on one line with its numbers
        for o in result.outputs:
            for f in o.total_index:
                row = [line for line in lines if line.startswith(f.feature + " ")]
                assert any(fmt(f.value.estimate) in line for line in row), (width, f.feature)
    wide = render_text(result, width=120).splitlines()
    for o in result.outputs:
        leading = ", ".join(f.feature for f in o.ranked()[:3])
        assert any(line.startswith(o.name) and leading in line for line in wide)
    layer = result.layers[0]
    assert any(line.startswith(layer.name) and fmt(layer.summary["nu_weighted"]) in line for line in wide)
    # at 80 the leading inputs move to a line of their own under their output, unfolded
    narrow = render_text(result, width=80).splitlines()
    for o in result.outputs:
        at = next(i for i, line in enumerate(narrow) if line.startswith(o.name + " "))
        assert ", ".join(f.feature for f in o.ranked()[:3]) in narrow[at + 1]


def test_absurdly_long_names_are_shortened_in_the_middle_on_lines_of_their_own():
    absurd = "sensor_" + "_".join(f"segment{k}" for k in range(16))  # 150 characters
    result = named_result([absurd, *GREENHOUSE_INPUTS[:3]], [absurd], [])
    text = render_text(result)
    expected = expected_numbers(result, result.outputs, THRESHOLD)
    assert_whole(text, expected, 80)
    lines = text.splitlines()
    assert not any(absurd in line for line in lines) and all(len(line) <= 80 for line in lines)
    # never broken across lines: shortened, its start and end kept around one ellipsis
    short = [line.strip() for line in lines if line.strip().startswith("sensor_segment0") and "…" in line]
    assert short and all(s.endswith("segment15") or "segment15" in s for s in short)
    assert not any(line.strip().startswith("segment") for line in lines)  # no piece of a broken name


@pytest.mark.parametrize("width", [30, 44, 60])
def test_narrow_consoles_keep_every_number_whole(width):
    result = make_result()
    text = render_text(result, width=width)
    assert_whole(text, expected_numbers(result, result.outputs[:3], THRESHOLD), width)


@settings(max_examples=25, deadline=None)
@given(
    width=st.integers(min_value=36, max_value=160),
    lengths=st.lists(st.integers(min_value=1, max_value=70), min_size=3, max_size=6),
)
def test_any_width_and_name_lengths_keep_numbers_whole(width, lengths):
    stems = "abcdefghijklmnopqrstuvwxyz_/."
    names = [f"{k}" + "".join(stems[(k * 7 + i) % len(stems)] for i in range(n)) for k, n in enumerate(lengths)]
    result = named_result(names, names[:2], names[-1:], seed=len(names) + width)
    text = render_text(result, width=width, all_outputs=True)
    assert_whole(text, expected_numbers(result, result.outputs, THRESHOLD), width)


# ----------------------------------------------------------------------------- the table's own steps

COLUMNS = [
    FitColumn("input", "left", kind="name"),
    FitColumn("total index"),
    FitColumn("95 % interval"),
    FitColumn("size", "left", style="cyan", kind="extra"),
    FitColumn("leading inputs", "left", kind="note"),
]
ROWS = [
    ["a_rather_long_input_name", "0.4322", "[0.4100, 0.4500]", "████", "x1, x2, x3"],
    ["x2", "0.1200", "[0.1100, 0.1300]", "█▏", "x4, x5, x6"],
]


def test_wide_tables_stay_on_one_line_per_row_with_number_headers_on_two_lines():
    lines = show(FitTable(COLUMNS, ROWS), 120)
    assert lines[0].split() == ["total"] and lines[1].split()[:3] == ["input", "index", "95"]
    assert "leading inputs" in lines[1]  # names and notes keep one-line headers
    assert lines[3].startswith("a_rather_long_input_name") and lines[3].endswith("x1, x2, x3")
    assert len(lines) == 5 and set(lines[2]) == {"─"}


def test_tables_degrade_step_by_step():
    notes = show(FitTable(COLUMNS, ROWS), 70)  # notes move under their row
    assert any(line.strip() == "leading inputs: x1, x2, x3" for line in notes)
    names = show(FitTable(COLUMNS, ROWS), 50)  # the long name moves above its row
    at = names.index("a_rather_long_input_name")
    assert names[at + 1].split()[:1] == ["0.4322"] and any(line.startswith("x2 ") for line in names)
    dropped = show(FitTable(COLUMNS, ROWS), 30)  # the bar goes
    assert not any("█" in line for line in dropped) and any("0.4322" in line for line in dropped)
    records = show(FitTable(COLUMNS, ROWS), 14)  # header: value pairs
    assert "  total index:" in records and all(len(line) <= 14 for line in records)
    for width in (120, 70, 50, 30, 20):  # wide enough for an interval: numbers stay whole
        lines = show(FitTable(COLUMNS, ROWS), width)
        assert all(len(line) <= width for line in lines)
        assert all(any(n in line for line in lines) for n in ("0.4322", "0.1200", "0.4100", "0.1300"))


def test_split_header_breaks_where_the_wider_line_is_shortest():
    assert split_header("total index", 6) == ["total", "index"]
    assert split_header("σ² − total", 5) == ["σ² −", "total"]
    assert split_header("variance, pre-integrated", 9) == ["variance,", "pre-integrated"]
    assert split_header("ν and 95 % interval", 9) == ["ν and 95 %", "interval"]
    assert split_header("total index", 11) == ["total index"] and split_header("units", 1) == ["units"]


def test_cells_are_made_safe_and_ascii_when_rendered():
    hostile = ["evil\nforged | row", "0.5000", "[red]x[/red]", "█", "a\x1b[31mb"]
    table = FitTable(COLUMNS, [hostile, ROWS[1]])
    lines = show(table, 120)
    assert len(lines) == 5  # the newline made no row of its own
    assert any("evil\\nforged | row" in line and "[red]x[/red]" in line and "a\\x1b[31mb" in line for line in lines)
    ascii_lines = show(table, 120, encoding="ascii")
    assert set(ascii_lines[2]) == {"-"} and any("#+" in line for line in ascii_lines)


def test_bad_tables_are_refused():
    with pytest.raises(ValueError, match="only first"):
        FitTable([FitColumn("a"), FitColumn("b", kind="name")], [])
    with pytest.raises(ValueError, match="2 cells"):
        FitTable([FitColumn("a"), FitColumn("b")], [["1"]])
