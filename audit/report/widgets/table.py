"""A table laid out for the width it is rendered at: numbers never split, long names on their own line.

rich tables fold every cell that does not fit, which splits names mid-word
into ragged multi-line cells. :class:`FitTable` decides its layout from the
width it is given at render time instead, and degrades in steps:

1. every column on one line per row, three spaces between columns, then two;
   the header of a number column wider than its cells is broken onto two lines;
2. ``note`` columns (long free text such as a list of names) move to an
   indented line of their own under each row;
3. names too long for the room left move to a line of their own above their
   row (the name column is dropped when no name fits); a name wider than the
   whole line is shortened in the middle (``…``), never broken;
4. ``extra`` columns (a bar that repeats a number) are dropped;
5. on a console too narrow for the numeric columns themselves, each row
   becomes a name line followed by ``header: value`` pairs.

Numeric cells are never split: they are laid out whole on one line. Cells
and headers are made safe and, on an ASCII console, transliterated when the
table is rendered (:func:`audit.report.widgets.lines.safe_text`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, RenderResult
from rich.text import Text

from ..text import GLUE, shorten
from .lines import Styled, clean, safe_text, wrap

__all__ = ["FitColumn", "FitTable", "split_header"]


@dataclass(frozen=True)
class FitColumn:
    """A column of a :class:`FitTable`.

    Attributes
    ----------
    header : str
        Header text; the header of a right-justified ``"fixed"`` column (a
        number) is broken at a space onto two lines (aligned at the bottom)
        when it is wider than every cell of the column.
    justify : {"left", "right"}
        Alignment of the header and the cells.
    style : str
        rich style of plain-string cells.
    kind : {"fixed", "name", "note", "extra"}
        ``"fixed"`` cells always stay whole on the row's line; the ``"name"``
        column (at most one, the first) moves long names above their row;
        ``"note"`` columns move under the row when the line is too narrow;
        ``"extra"`` columns (a bar repeating a number) are dropped when even
        names on lines of their own leave too little room.
    """

    header: str
    justify: Literal["left", "right"] = "right"
    style: str = ""
    kind: Literal["fixed", "name", "note", "extra"] = "fixed"


def split_header(header: str, room: int) -> list[str]:
    """``header`` on one line, or on two broken at the space that makes the wider line shortest.

    The header is broken only when it is wider than ``room`` (the column's
    widest cell) and breaking makes it narrower; a lone ``%`` stays with the
    word before it.
    """
    words: list[str] = []
    for word in header.split(" "):
        if words and word == "%":
            words[-1] += " %"
        else:
            words.append(word)
    if cell_len(header) <= room or len(words) < 2:
        return [header]
    splits = [(" ".join(words[:i]), " ".join(words[i:])) for i in range(1, len(words))]
    top, bottom = min(splits, key=lambda s: max(cell_len(s[0]), cell_len(s[1])))
    return [top, bottom] if max(cell_len(top), cell_len(bottom)) < cell_len(header) else [header]


@dataclass(frozen=True)
class _Plan:
    gap: int
    visible: tuple[int, ...]  # columns laid out on the row's line, in order
    widths: dict[int, int]
    notes_below: tuple[int, ...]
    stack: Literal["none", "some", "all", "records"]


class FitTable:
    """A table laid out for the width it is rendered at; see the module docstring.

    Parameters
    ----------
    columns : sequence of FitColumn
        The columns, the ``"name"`` column (if any) first.
    rows : sequence of sequence of Styled
        One cell per column; cells are single lines.
    """

    def __init__(self, columns: Sequence[FitColumn], rows: Sequence[Sequence[Styled]]) -> None:
        kinds = [c.kind for c in columns]
        if kinds.count("name") > 1 or ("name" in kinds and kinds[0] != "name"):
            raise ValueError(f"at most one 'name' column, and only first; got kinds {kinds}")
        if any(len(r) != len(columns) for r in rows):
            raise ValueError(f"every row needs {len(columns)} cells")
        self.columns = list(columns)
        self.rows = [list(r) for r in rows]

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        a = options.ascii_only
        rows = [
            [safe_text(cell, col.style, ascii_only=a) for cell, col in zip(row, self.columns, strict=True)]
            for row in self.rows
        ]
        grid = _Grid(self.columns, [clean(c.header, a) for c in self.columns], rows, rule="-" if a else "─",
                     ellipsis="..." if a else "…")
        yield from grid.lines(options.max_width)


class _Grid:
    """One rendering of a :class:`FitTable`: safe cells, planned for one width."""

    GAPS = (3, 2)
    NAME_MIN = 8
    INDENT = 2

    def __init__(
        self, columns: list[FitColumn], headers: list[str], rows: list[list[Text]], rule: str, ellipsis: str = "…"
    ) -> None:
        self.columns, self.headers, self.rows, self.rule, self.ellipsis = columns, headers, rows, rule, ellipsis
        self.heads = [self._head(i) for i in range(len(columns))]

    def _head(self, i: int) -> list[str]:
        """Header lines of column ``i``: numbers' headers may take two lines."""
        column, header = self.columns[i], self.headers[i]
        if column.kind != "fixed" or column.justify != "right":
            return [header]
        return split_header(header, max((cell_len(r[i].plain) for r in self.rows), default=0))

    # ------------------------------------------------------------------ planning

    def _natural(self, i: int) -> int:
        return max([*(cell_len(h) for h in self.heads[i]), *(cell_len(r[i].plain) for r in self.rows)])

    def _span(self, cols: Sequence[int], gap: int, nat: list[int]) -> int:
        return sum(nat[i] for i in cols) + gap * max(0, len(cols) - 1)

    def _plan(self, width: int) -> _Plan:
        """Choose gaps, columns on the row line, notes and stacked names for ``width``."""
        n = len(self.columns)
        nat = [self._natural(i) for i in range(n)]
        kinds = [c.kind for c in self.columns]
        notes = tuple(i for i in range(n) if kinds[i] == "note")
        no_notes = tuple(i for i in range(n) if kinds[i] != "note")
        tries: list[tuple[tuple[int, ...], tuple[int, ...]]] = [(tuple(range(n)), ())]
        if notes:
            tries.append((no_notes, notes))
        for visible_cols, below in tries:
            for gap in self.GAPS:
                if self._span(visible_cols, gap, nat) <= width:
                    return _Plan(gap, visible_cols, {i: nat[i] for i in visible_cols}, below, "none")
        fixed = tuple(i for i in no_notes if kinds[i] != "name")
        essential = tuple(i for i in fixed if kinds[i] != "extra")
        indent = self.INDENT if "name" in kinds else 0
        for cols in (fixed, essential) if essential != fixed else (fixed,):
            if "name" in kinds:
                names = [cell_len(r[0].plain) for r in self.rows]
                for gap in self.GAPS:
                    room = width - self._span(cols, gap, nat) - gap
                    fitting = [w for w in names if w <= room]
                    head = max(cell_len(h) for h in self.heads[0])
                    every = len(fitting) == len(names) and head <= room
                    most = room >= self.NAME_MIN and 0 < len(fitting) >= len(names) / 2
                    if every or most:
                        widths = {0: max([head, *fitting]), **{i: nat[i] for i in cols}}
                        return _Plan(gap, (0, *cols), widths, notes, "some")
            for gap in self.GAPS:
                if indent + self._span(cols, gap, nat) <= width:
                    return _Plan(gap, cols, {i: nat[i] for i in cols}, notes, "all")
        rest = tuple(i for i in range(n) if kinds[i] not in ("name", "extra"))
        return _Plan(2, (), {}, rest, "records")

    # ------------------------------------------------------------------ rendering

    def _line(self, cells: list[tuple[int, Text]], plan: _Plan, indent: int) -> Text:
        out = Text(" " * indent)
        for k, (i, cell) in enumerate(cells):
            if k:
                out.append(" " * plan.gap)
            pad = plan.widths[i] - cell_len(cell.plain)
            if self.columns[i].justify == "right":
                out.append(" " * pad)
                out.append_text(cell)
            else:
                out.append_text(cell)
                out.append(" " * pad)
        out.rstrip()
        out.plain = out.plain.replace(GLUE, " ")
        return out

    def _header_lines(self, plan: _Plan, indent: int) -> list[Text]:
        heads = {i: self.heads[i] for i in plan.visible}
        depth = max(len(h) for h in heads.values())
        lines = []
        for k in range(depth):
            cells = []
            for i in plan.visible:
                h = heads[i]
                part = h[k - (depth - len(h))] if k >= depth - len(h) else ""
                cells.append((i, Text(part, style="bold")))
            lines.append(self._line(cells, plan, indent))
        if plan.stack == "all" and self.columns[0].kind == "name":
            # the names sit on lines of their own: their header leads the header block
            label = self.headers[0]
            first = lines[0].plain
            free = len(first) - len(first.lstrip(" ")) if first.strip() else len(first) + 99
            head = Text(label, style="bold")
            if free > cell_len(label) + 1:
                lines[0] = head + lines[0][cell_len(label) :]
            else:
                lines.insert(0, head)
        return lines

    def _name_lines(self, name: Text, width: int) -> list[Text]:
        if cell_len(name.plain) <= width:
            return [name]
        return [Text(shorten(name.plain, width, self.ellipsis), style=name.style)]

    def _notes(self, row: list[Text], plan: _Plan, width: int) -> list[Text]:
        out: list[Text] = []
        for i in plan.notes_below:
            value = row[i].plain.strip()
            if not value:
                continue
            prefix = " " * self.INDENT + f"{self.headers[i]}: "
            aligned = width - cell_len(prefix)
            if aligned >= 12 and all(cell_len(w) <= aligned for w in value.split(" ")):
                lines = wrap(value, aligned, self.ellipsis)
                out += [
                    Text((prefix if k == 0 else " " * cell_len(prefix)) + line, style="dim")
                    for k, line in enumerate(lines)
                ]
                continue
            # an item too long to sit under the label: hang the continuation lines instead
            hang = self.INDENT + 2
            lines = wrap(f"{self.headers[i]}: {value}", max(1, width - hang), self.ellipsis)
            out += [Text((" " * (self.INDENT if k == 0 else hang)) + line, style="dim") for k, line in enumerate(lines)]
        return out

    def _record(self, row: list[Text], width: int) -> list[Text]:
        out: list[Text] = []
        has_name = self.columns[0].kind == "name"
        if has_name:
            out += self._name_lines(row[0], width)
        pairs = []
        for i, col in enumerate(self.columns):
            value = row[i].plain.strip()
            if (has_name and i == 0) or col.kind == "extra" or not value:
                continue
            pairs.append(f"{self.headers[i]}: {value}")
        indent = self.INDENT if has_name else 0
        avail = max(1, width - indent)
        line = ""
        for pair in pairs:
            candidate = f"{line}   {pair}" if line else pair
            if cell_len(candidate) <= avail:
                line = candidate
                continue
            if line:
                out.append(Text(" " * indent + line))
            parts = wrap(pair, avail, self.ellipsis)
            out += [Text(" " * indent + p) for p in parts[:-1]]
            line = parts[-1]
        if line:
            out.append(Text(" " * indent + line))
        return out

    def lines(self, width: int) -> list[Text]:
        """The table's lines for ``width`` cells."""
        plan = self._plan(width)
        if plan.stack == "records":
            return [line for row in self.rows for line in self._record(row, width)]
        has_name = self.columns[0].kind == "name"
        indent = self.INDENT if plan.stack == "all" and has_name else 0
        out = self._header_lines(plan, indent)
        span = indent + sum(plan.widths.values()) + plan.gap * (len(plan.visible) - 1)
        out.append(Text(self.rule * span))
        for row in self.rows:
            cells = [(i, row[i]) for i in plan.visible]
            if (plan.stack == "all" and has_name) or (plan.stack == "some" and cell_len(row[0].plain) > plan.widths[0]):
                out += self._name_lines(row[0], width)
                if plan.stack == "some":
                    cells[0] = (0, Text(""))
            out.append(self._line(cells, plan, indent))
            out += self._notes(row, plan, width)
        return out
