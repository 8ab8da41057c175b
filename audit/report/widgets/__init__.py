"""Width-aware rich renderables that know nothing of the report's content.

:mod:`~audit.report.widgets.lines` holds wrapped text, titles and the
render-time safety of every string (escaped control characters, ASCII on
consoles that need it); :mod:`~audit.report.widgets.table` the fitted table;
:mod:`~audit.report.widgets.shell` commands laid out to be pasted back.
They import :mod:`audit.report.text` only.
"""

from __future__ import annotations

from .lines import AsciiOnly, Styled, TitleRule, WrappedText, clean, safe_text, wrap
from .shell import CommandText, shell_lines
from .table import FitColumn, FitTable, split_header

__all__ = [
    "AsciiOnly",
    "CommandText",
    "FitColumn",
    "FitTable",
    "Styled",
    "TitleRule",
    "WrappedText",
    "clean",
    "safe_text",
    "shell_lines",
    "split_header",
    "wrap",
]
