"""The Markdown renderer: any :class:`~audit.report.document.Report` as GitHub-flavoured Markdown.

Sections become ``##`` headings and headings inside them ``###``; labelled
rows and findings become lists, tables pipe tables, notes italics, suggested
commands inline code. Every string is made safe first
(:func:`audit.report.text.visible`: control characters as escapes, so that no
name can start a new row or line), then escaped for Markdown: ``\\``, ``|``,
``*``, backticks, ``<`` and ``&``, and, where text starts a line or a list
item, a leading ``#``, ``>``, ``+``, ``-``, ``=`` or list number. Nothing in
a name is read as Markdown or HTML.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

from .document import Bar, Block, Bullets, Cell, CellValue, Fields, Heading, Note, Paragraph, Report, Table
from .text import CAUTION, GLUE, share_bar, visible

__all__ = ["escape", "to_markdown"]

_ESCAPES = str.maketrans({"\\": "\\\\", "|": "\\|", "*": "\\*", "`": "\\`", "<": "&lt;", "&": "&amp;"})
_LEADING = re.compile(r"^(?:[#>+=-]|\d+[.)])")
_RULE = {"left": ":---", "right": "---:"}


def escape(text: str, *, leading: bool = False) -> str:
    """``text`` safe inside a Markdown line or table cell (see the module docstring).

    ``leading=True`` also escapes a list, quote or heading marker at the start,
    for text that begins a line or a list item.
    """
    text = visible(text).translate(_ESCAPES).replace(GLUE, " ")
    return "\\" + text if leading and _LEADING.match(text) else text


def _code(command: str) -> str:
    """A command as inline code (escaped text when it holds a backtick)."""
    command = visible(command)
    return f"`{command}`" if "`" not in command else escape(command)


def _cell(cell: CellValue) -> str:
    if isinstance(cell, Bar):
        return share_bar(cell.fraction)
    return escape(cell.text if isinstance(cell, Cell) else cell)


def _table(table: Table) -> list[str]:
    header = "| " + " | ".join(escape(c.header) for c in table.columns) + " |"
    rule = "|" + "|".join(_RULE[c.align] for c in table.columns) + "|"
    return [header, rule, *("| " + " | ".join(_cell(c) for c in row) + " |" for row in table.rows)]


def _fields(block: Fields) -> list[str]:
    lines = []
    for f in block.rows:
        lines.append(f"- **{escape(f.label)}**: {escape(f.text)}")
        lines += [f"  - {escape(line, leading=True)}" for line in f.lines]
    return lines


def _block(block: Block) -> list[str]:
    if isinstance(block, Fields):
        return _fields(block)
    if isinstance(block, Table):
        return _table(block)
    if isinstance(block, Paragraph):
        return [escape(block.text, leading=True)]
    if isinstance(block, Note):
        return [f"*{escape(block.text)}*"]
    if isinstance(block, Heading):
        return [f"### {escape(block.text)}"]
    if isinstance(block, Bullets):
        lines = []
        for item in block.items:
            lines.append(f"- {escape(item.text, leading=True)}")
            lines += [f"  - {_code(cmd)}" for cmd in item.commands]
        return lines
    raise TypeError(f"not a report block: {block!r}")


def _section(title: str | None, blocks: Sequence[Block]) -> list[str]:
    lines = [f"## {escape(title)}", ""] if title else []
    for block in blocks:
        lines += [*_block(block), ""]
    return lines


def to_markdown(report: Report) -> str:
    """``report`` as Markdown text.

    Parameters
    ----------
    report : Report
        Any report.

    Returns
    -------
    str
        A ``#`` title, the sections, a rule and the caution
        (:data:`audit.report.text.CAUTION`) as a quote; ends with a newline.
    """
    lines = [f"# {escape(report.title)}", ""]
    for section in report.sections:
        lines += _section(section.title, section.blocks)
    lines += ["---", "", f"> {CAUTION}", ""]
    return "\n".join(lines)
