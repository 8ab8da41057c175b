"""The terminal renderer: any :class:`~audit.report.document.Report` as one rich renderable.

:func:`to_renderable` lays out every block with the width-aware widgets of
:mod:`audit.report.widgets`: section titles as rules, labelled rows with a
hanging indent, tables that keep numbers whole and move long names to lines
of their own, findings as bullets with their commands (on one line, or continued with a
backslash, so that they can be pasted back), and the closing
caution. Tones become styles (``"strong"`` bold, ``"muted"`` dim, ...), which
a console without colour simply drops. Safety and ASCII are decided by the
widgets when the report is printed, from the console's encoding.

:func:`make_console` makes the console reports are printed on.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from itertools import groupby
from typing import IO

from rich.cells import cell_len
from rich.console import Console, Group, RenderableType
from rich.text import Text

from .document import (
    Bar,
    Block,
    Bullets,
    Cell,
    CellValue,
    Column,
    Fields,
    Heading,
    Note,
    Paragraph,
    Report,
    Table,
)
from .text import BAR_WIDTH, CAUTION, share_bar
from .widgets import CommandText, FitColumn, FitTable, Styled, TitleRule, WrappedText

__all__ = ["STYLES", "make_console", "to_renderable"]

#: rich styles of the document's tones.
STYLES = {
    "plain": "",
    "strong": "bold",
    "muted": "dim",
    "alert": "bold red",
    "warning": "yellow",
    "command": "bold cyan",
}
_BAR_STYLE = "cyan"
_KINDS = {"name": "name", "number": "fixed", "text": "fixed", "note": "note", "bar": "extra"}
_COMMAND_INDENT = 4


def make_console(file: IO[str] | None = None, *, width: int | None = None) -> Console:
    """A console for reports: colour on a terminal, plain text everywhere else.

    Parameters
    ----------
    file : file-like, optional
        Where to write (default standard output).
    width : int, optional
        Fixed width in columns (default: the terminal's, or 80 when not a terminal).

    Returns
    -------
    rich.console.Console
        Writes no escape codes at all when ``file`` is not a terminal or when
        the ``NO_COLOR`` environment variable is set to a non-empty value.
    """
    no_color = bool(os.environ.get("NO_COLOR"))
    console = Console(file=file, width=width, highlight=False, emoji=False, markup=False)
    if no_color or not console.is_terminal:
        console = Console(
            file=file,
            width=width,
            highlight=False,
            emoji=False,
            markup=False,
            color_system=None,
            no_color=True,
        )
    return console


# ----------------------------------------------------------------------------- tables


def _cell(cell: CellValue, column: Column) -> tuple[str, str]:
    if isinstance(cell, Bar):
        return share_bar(cell.fraction).ljust(BAR_WIDTH), _BAR_STYLE
    if isinstance(cell, Cell):
        return cell.text, STYLES[cell.tone or column.tone]
    return cell, STYLES[column.tone]


def _table(table: Table) -> FitTable:
    """One FitTable column per column, or per group of columns (their cells joined by a space)."""
    spans: list[list[int]] = []
    for _, members in groupby(range(len(table.columns)), key=lambda i: table.columns[i].group or f"\0{i}"):
        spans.append(list(members))
    columns = []
    for span in spans:
        first = table.columns[span[0]]
        if len(span) == 1:
            columns.append(FitColumn(first.header, first.align, kind=_KINDS[first.role]))  # type: ignore[arg-type]
        else:
            right = all(table.columns[i].align == "right" for i in span)
            columns.append(FitColumn(first.group, "right" if right else "left", kind=_KINDS[first.role]))  # type: ignore[arg-type]
    rows: list[list[Styled]] = []
    for row in table.rows:
        cells: list[Styled] = []
        for span in spans:
            pieces = [_cell(row[i], table.columns[i]) for i in span]
            pieces = [p for p in pieces if p[0]]
            joined: list[tuple[str, str]] = []
            for k, piece in enumerate(pieces):
                joined += [(" ", ""), piece] if k else [piece]
            cells.append(tuple(joined))
        rows.append(cells)
    return FitTable(columns, rows)


# ----------------------------------------------------------------------------- blocks


def _fields(block: Fields) -> list[RenderableType]:
    width = max(cell_len(f.label) for f in block.rows) + 1
    parts: list[RenderableType] = []
    for f in block.rows:
        style = STYLES[f.tone]
        parts.append(WrappedText(f.text, f.label.ljust(width), prefix_style="bold", style=style))
        parts += [WrappedText(line, " " * width, style=style) for line in f.lines]
    return parts


def _bullets(block: Bullets) -> list[RenderableType]:
    parts: list[RenderableType] = []
    for item in block.items:
        parts.append(WrappedText(item.text, "• ", prefix_style="bold"))
        parts += [CommandText(cmd, style=STYLES["command"], indent=_COMMAND_INDENT) for cmd in item.commands]
    return parts


def _block(block: Block, first: bool) -> list[RenderableType]:
    if isinstance(block, Fields):
        return _fields(block)
    if isinstance(block, Table):
        return [_table(block)]
    if isinstance(block, Paragraph):
        return [WrappedText(block.text, style=STYLES[block.tone])]
    if isinstance(block, Note):
        return [WrappedText(block.text, style=STYLES["muted"])]
    if isinstance(block, Heading):
        heading = WrappedText(block.text, style=STYLES["strong"])
        return [heading] if first else [Text(), heading]
    if isinstance(block, Bullets):
        return _bullets(block)
    raise TypeError(f"not a report block: {block!r}")


def _section_parts(title: str | None, blocks: Sequence[Block]) -> list[RenderableType]:
    parts: list[RenderableType] = [TitleRule(title)] if title else []
    for k, block in enumerate(blocks):
        parts += _block(block, first=k == 0)
    return parts


def to_renderable(report: Report) -> Group:
    """``report`` as one rich renderable.

    Parameters
    ----------
    report : Report
        Any report.

    Returns
    -------
    rich.console.Group
        Sections separated by blank lines, closed by a rule and the caution
        (:data:`audit.report.text.CAUTION`). Printable on any rich console;
        laid out for the console's width and encoding when printed.
    """
    parts: list[RenderableType] = []
    for k, section in enumerate(report.sections):
        if k:
            parts.append(Text())
        parts += _section_parts(section.title, section.blocks)
    parts += [Text(), TitleRule(), WrappedText(CAUTION, style="italic")]
    return Group(*parts)
