"""Tests of audit.report.terminal: any report on a rich console, at any width and encoding.

Results are built by hand (no model, no estimator), so every check is about
presentation: sections, numbers at the displayed precision, width, plain text.
"""

from __future__ import annotations

import dataclasses
import io
import re

import pytest
from reportdata import (
    LONG_INPUT,
    LONG_OUTPUT,
    THRESHOLD,
    all_kinds,
    expected_numbers,
    make_advice,
    make_comparison,
    make_result,
    render_bytes,
    render_text,
    squash,
)
from rich.console import Console

from audit.report import CAUTION, build_report, make_console, render, renderable
from audit.report.document import Report, Section, Table
from audit.report.sections.audit import SECTION_TITLES
from audit.report.terminal import to_renderable
from audit.report.text import fmt
from audit.results import AuditResult, FeatureEstimate, OutputResult

HOSTILE = "evil\x1b[31m[/bold][red]\nforged | row"
SHOWN = "evil\\x1b[31m[/bold][red]\\nforged | row"


def test_terminal_sections_in_order_and_caution():
    result = make_result()
    text = render_text(result)
    titles = [
        SECTION_TITLES["header"],
        SECTION_TITLES["outputs"],
        SECTION_TITLES["inputs"].format(name="inside_temperature"),
        SECTION_TITLES["inputs"].format(name="inside_humidity"),
        SECTION_TITLES["inputs"].format(name="condensation_risk"),
        SECTION_TITLES["layers"],
        SECTION_TITLES["findings"],
    ]
    positions = [text.find(t) for t in titles]
    assert all(p >= 0 for p in positions), list(zip(titles, positions, strict=True))
    assert positions == sorted(positions)
    assert squash(CAUTION) in squash(text)
    assert squash(text).rfind(squash(CAUTION)) > text.find(SECTION_TITLES["findings"]) - 200
    # the fourth output is beyond max_outputs=3: overview row only, no ranking
    assert SECTION_TITLES["inputs"].format(name="alarm_flag") not in text
    assert "alarm_flag" in text and "inert (constant)" in text


def test_terminal_shows_every_number_at_display_precision():
    result = make_result()
    text = render_text(result)
    missing = sorted(s for s in expected_numbers(result, result.outputs[:3], THRESHOLD) if s not in text)
    assert not missing


def test_terminal_fits_80_columns_without_escape_codes():
    result = make_result()
    for kwargs in ({}, {"all_outputs": True}, {"threshold": 0.0}):
        text = render_text(result, **kwargs)
        assert "\x1b" not in text
        too_long = [line for line in text.splitlines() if len(line) > 80]
        assert not too_long


def test_long_names_still_fit_and_keep_numbers():
    base = make_result()
    long = "outside_relative_humidity_at_the_weather_station_on_the_roof"
    o = base.outputs[1]
    renamed = OutputResult(
        name="inside_relative_humidity_averaged_over_the_whole_compartment",
        mean=o.mean,
        variance=o.variance,
        mean_dimension=o.mean_dimension,
        total_index=[FeatureEstimate(long + f.feature, f.value) for f in o.total_index],
        first_order=[FeatureEstimate(long + f.feature, f.value) for f in o.first_order],
    )
    result = AuditResult(base.model, base.inputs, base.design, [renamed], base.layers, [])
    text = render_text(result)
    assert max(len(line) for line in text.splitlines()) <= 80
    missing = sorted(s for s in expected_numbers(result, [renamed], THRESHOLD) if s not in text)
    assert not missing


@pytest.mark.parametrize("kind", ["audit", "comparison", "advice"])
@pytest.mark.parametrize("width", [30, 44, 60, 80, 120])
def test_every_kind_fits_and_ends_with_the_caution(kind, width):
    text = render_text(all_kinds()[kind], width=width)
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= width and all(line == line.rstrip() for line in lines)
    assert squash(text).endswith(squash(CAUTION))


def test_comparison_lays_out_like_the_other_reports_at_80_columns():
    result = make_comparison(names=(LONG_OUTPUT, "inside_humidity"))
    report = build_report(result)
    numbers = {c for t in report.blocks() if isinstance(t, Table) for row in t.rows for c in row[1:] if c}
    numbers = {getattr(c, "text", c) for c in numbers}
    lines = render_text(result).splitlines()
    assert max(len(line) for line in lines) <= 80
    assert not sorted(n for n in numbers if not any(n in line for line in lines))  # never split
    at = lines.index(LONG_OUTPUT)  # the long name on a line of its own, its numbers below
    change = re.escape(fmt(result.outputs[0].mean_dimension_change.estimate, 3))
    assert re.search(change, lines[at + 1]) and lines[at + 1].startswith(" ")
    assert any(line.startswith("inside_humidity ") and "3/3" in line for line in lines)
    assert set(lines[lines.index(next(x for x in lines if x.startswith("output"))) + 1]) == {"─"}


def test_ascii_console_gets_ascii_only():
    result = make_result()
    buf = io.TextIOWrapper(io.BytesIO(), encoding="ascii", errors="strict")
    console = Console(file=buf, width=80, no_color=True, force_terminal=False, record=True)
    assert not console.encoding.lower().startswith("utf")
    render(result, console)  # would raise UnicodeEncodeError on a non-ASCII character
    text = console.export_text()
    assert text.isascii()
    assert "nu" in text and fmt(result.outputs[0].mean_dimension.estimate) in text
    assert "uniform(0, 16) W/m2" in text


@pytest.mark.parametrize("kind", ["audit", "comparison", "advice"])
def test_every_kind_prints_on_an_ascii_console(kind):
    text = render_bytes(all_kinds()[kind], encoding="ascii")  # strict: raises on any non-ASCII character
    assert text.isascii() and max(len(line) for line in text.splitlines()) <= 80
    assert "->" in text or "nu" in text
    assert render_bytes(all_kinds()[kind], encoding="cp1252").isascii()


def test_make_console_is_plain_off_terminal_and_with_no_color(monkeypatch):
    monkeypatch.delenv("NO_COLOR", raising=False)
    buf = io.StringIO()
    render(make_result(), make_console(buf, width=80))
    assert "\x1b" not in buf.getvalue() and SECTION_TITLES["findings"] in buf.getvalue()

    class FakeTty(io.StringIO):
        def isatty(self) -> bool:
            return True

    monkeypatch.delenv("TERM", raising=False)
    monkeypatch.delenv("FORCE_COLOR", raising=False)
    monkeypatch.delenv("TTY_COMPATIBLE", raising=False)
    tty = FakeTty()
    render(make_result(), make_console(tty, width=80))
    assert "\x1b[" in tty.getvalue()  # positive control: styles on a terminal
    monkeypatch.setenv("NO_COLOR", "1")
    tty = FakeTty()
    render(make_result(), make_console(tty, width=80))
    assert "\x1b" not in tty.getvalue()


def _hostile_audit() -> AuditResult:
    base = make_result()
    o = dataclasses.replace(
        base.outputs[0],
        name=HOSTILE,
        total_index=[FeatureEstimate(HOSTILE + f.feature, f.value) for f in base.outputs[0].total_index],
    )
    inputs = [{**i, "name": HOSTILE + i["name"]} for i in base.inputs[:3]] + [
        {"name": "n", "law": "normal", "mean": 0, "sd": 1}
    ]
    layer = dataclasses.replace(base.layers[0], name=HOSTILE)
    return AuditResult({"source": HOSTILE, "format": "onnx"}, inputs, base.design, [o], [layer], [HOSTILE])


def test_names_with_escapes_newlines_and_markup_are_shown_literally(monkeypatch):
    result = _hostile_audit()
    markup_console = Console(file=io.StringIO(), width=100, record=True, no_color=True, markup=True)
    render(result, markup_console)  # markup on: nothing in a name is parsed, nothing raises
    text = markup_console.export_text()
    assert "\x1b" not in text and SHOWN in text
    assert not [line for line in text.splitlines() if line.startswith("forged")]  # no forged lines
    monkeypatch.delenv("NO_COLOR", raising=False)

    class FakeTty(io.StringIO):
        def isatty(self) -> bool:
            return True

    tty = FakeTty()
    render(result, make_console(tty, width=100))
    raw = re.sub(r"\x1b\[[0-9;]*m", "", tty.getvalue())  # the console's own styles only
    assert "\x1b" not in raw and SHOWN in raw and "[/bold][red]" in raw
    for kind in (make_comparison(names=(HOSTILE, "y")), make_advice()):
        assert "\x1b" not in render_text(kind)
    comparison = render_text(make_comparison(names=(HOSTILE, "y")))
    assert SHOWN in comparison and not [line for line in comparison.splitlines() if line.startswith("forged")]


def test_results_render_through_the_rich_protocol():
    result = make_result()
    console = Console(record=True, width=100, file=io.StringIO(), no_color=True)
    console.print(result)
    text = console.export_text()
    for key in ("header", "outputs", "layers", "findings"):
        assert SECTION_TITLES[key] in text
    assert max(len(line) for line in text.splitlines()) <= 100
    missing = sorted(s for s in expected_numbers(result, result.outputs[:3], THRESHOLD) if s not in text)
    assert not missing
    # the hook is renderable(result) with defaults: same text as render at that width
    assert text == render_text(result, width=100)
    again = Console(record=True, width=100, file=io.StringIO(), no_color=True)
    again.print(renderable(result))
    assert again.export_text() == text


def test_any_report_renders_even_one_without_sections():
    console = Console(record=True, width=60, file=io.StringIO(), no_color=True)
    console.print(to_renderable(Report("audit", "t", (Section(None, ()),))))
    assert squash(console.export_text()) == "─" * 60 + " " + squash(CAUTION)  # a rule, then the caution


def test_long_input_name_in_the_header_wraps_under_its_label():
    result = dataclasses.replace(make_result(), inputs=[
        {"name": LONG_INPUT, "law": "uniform", "low": 0, "high": 1},
        {"name": "x", "law": "normal", "mean": 0, "sd": 1},
    ])  # fmt: skip
    lines = render_text(result, width=50).splitlines()
    at = next(i for i, line in enumerate(lines) if line.startswith("inputs"))
    assert lines[at] == "inputs    2 inputs:" and lines[at + 1].startswith(" " * 10 + "outside_")
