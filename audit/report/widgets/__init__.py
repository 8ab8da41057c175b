"""Width-aware rich renderables that know nothing of the report's content.

:mod:`~audit.report.widgets.lines` holds wrapped text, titles and the
render-time safety of every string (escaped control characters, ASCII on
consoles that need it); :mod:`~audit.report.widgets.table` the fitted table.
They import :mod:`audit.report.text` only.
"""

from __future__ import annotations

from .lines import AsciiOnly, Styled, TitleRule, WrappedText, clean, safe_text, wrap
from .table import FitColumn, FitTable, split_header

__all__ = [
    "AsciiOnly",
    "FitColumn",
    "FitTable",
    "Styled",
    "TitleRule",
    "WrappedText",
    "clean",
    "safe_text",
    "split_header",
    "wrap",
]
