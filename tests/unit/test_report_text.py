"""Tests of audit.report.text: number formatting, lists, safe names, ASCII stand-ins.

The formatting conventions (four significant digits, fixed notation in a
readable range) are common practice, no source.
"""

from __future__ import annotations

import math
import re
import unicodedata

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from reportdata import GREENHOUSE_INPUTS, named_result, render_text

from audit.report.text import (
    GLUE,
    LIST_LIMIT,
    finite,
    fmt,
    fmt_count,
    fmt_duration,
    fmt_interval,
    fmt_percent,
    fmt_setting,
    glue,
    listing,
    share_bar,
    to_ascii,
    visible,
)


def test_fmt_keeps_four_significant_digits():
    # common practice, no source: fixed notation in a readable range, scientific outside
    assert fmt(0.43219) == "0.4322"
    assert fmt(1.5) == "1.500"
    assert fmt(12.3456) == "12.35"
    assert fmt(123456.7) == "1.235e+05"
    assert fmt(0.000123456) == "1.235e-04"
    assert fmt(0.0) == "0"
    assert fmt(math.nan) == "n/a" and fmt(None) == "n/a"
    for x in np.geomspace(1e-7, 1e7, 57):
        digits = re.sub(r"e.*$", "", fmt(x)).replace(".", "").lstrip("0")
        assert len(digits) == 4, fmt(x)
        assert float(fmt(x)) == pytest.approx(x, rel=5e-4)


def test_other_number_formats():
    assert fmt_interval(1.0, 1.25) == "[1.000, 1.250]"
    assert fmt_interval(math.nan, 1.0) == "n/a" and fmt_interval(None, None) == "n/a"
    assert fmt_count(81920) == "81,920" and fmt_count(4096.0) == "4,096"
    assert fmt_count(None) == "n/a" and fmt_count(True) == "True" and fmt_count(0.5) == "0.5000"
    assert fmt_setting(0.001) == "0.001" and fmt_setting(16.0) == "16" and fmt_setting(-5) == "-5"
    assert fmt_setting("normal") == "normal"
    assert fmt_percent(0.0123) == "1.230 %" and fmt_percent(math.inf) == "n/a"
    assert finite(1) and finite(2.5) and not finite(True) and not finite(math.nan) and not finite("1")


def test_share_bar_is_proportional():
    assert share_bar(1.0) == "█" * 10
    assert share_bar(0.5) == "█" * 5
    assert share_bar(0.0) == "" and share_bar(math.nan) == ""
    assert len(share_bar(0.26)) == 3  # two full blocks and a part
    assert share_bar(1.7) == share_bar(1.0)


def test_run_time_is_formatted_for_people():
    # common practice, no source: two significant digits, then minutes and hours
    assert fmt_duration(0.026) == "0.026 s"
    assert fmt_duration(0.2340) == "0.23 s"
    assert fmt_duration(2.4) == "2.4 s"
    assert fmt_duration(48.4) == "48 s"
    assert fmt_duration(72.0) == "1 min 12 s"
    assert fmt_duration(59.7) == "1 min 0 s"
    assert fmt_duration(3725.0) == "1 h 02 min"
    assert fmt_duration(0.0004) == "under 0.001 s"
    assert fmt_duration(math.nan) == "n/a" and fmt_duration(-1.0) == "n/a"
    text = render_text(named_result(GREENHOUSE_INPUTS, ["y"], []))
    assert "81,920 model evaluations in 0.026 s" in text


def test_listing_caps_long_lists_and_glue_binds():
    names = [f"n{k}" for k in range(LIST_LIMIT + 3)]
    assert listing(names[:2]) == "n0, n1"
    assert listing(names) == ", ".join(names[:LIST_LIMIT]) + " and 3 more"
    assert listing(names, limit=1) == f"n0 and {len(names) - 1} more"
    assert glue("N = 256 points") == GLUE.join(["N", "=", "256", "points"])


@pytest.mark.parametrize(
    ("raw", "shown"),
    [
        ("\x1b[31mred\x1b[0m", "\\x1b[31mred\\x1b[0m"),
        ("two\nlines", "two\\nlines"),
        ("tab\there\r", "tab\\there\\r"),
        ("bell\x07 del\x7f c1\x9b", "bell\\x07 del\\x7f c1\\x9b"),
        ("abc\u202edcb", "abc\\u202edcb"),  # a right-to-left override
        ("zero\u200bwidth", "zero\\u200bwidth"),
        ("line\u2028sep", "line\\u2028sep"),
    ],
)
def test_visible_shows_control_and_format_characters_as_escapes(raw, shown):
    assert visible(raw) == shown
    assert visible(shown) == shown  # applying it again changes nothing more
    assert not any(unicodedata.category(c) in ("Cc", "Cf", "Zl", "Zp") for c in visible(raw))


def test_visible_keeps_printable_text():
    for text in ("inside_temperature", "ν ≥ 1 [0.9, 1.1]", "W/m²", "température", "N" + GLUE + "=", "[/bold] [red]"):
        assert visible(text) == text


@given(st.text())
def test_visible_never_lets_a_line_break_or_escape_through(text):
    shown = visible(text)
    assert len(shown.splitlines()) <= 1 and "\x1b" not in shown
    assert visible(shown) == shown


def test_to_ascii_stand_ins():
    assert to_ascii("ν ≥ 1 → ±2 %") == "nu >= 1 -> +/-2 %"
    assert to_ascii("σ² − total") == "var - total"
    assert to_ascii("Σ x") == "sum x"
    assert to_ascii("W/m², 30 °C, température, Kendall τ") == "W/m2, 30 deg C, temperature, Kendall tau"
    assert to_ascii("█▌ • … —") == "#+ * ... -"
    assert to_ascii("plain") == "plain"
    assert to_ascii("ν" + GLUE + "1.05") == "nu" + GLUE + "1.05"  # the wrapper still sees the glue
    assert to_ascii("漢字").isascii()
