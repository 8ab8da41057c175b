"""Width-aware text blocks for the terminal report.

rich tables fold every cell that does not fit, which splits names mid-word
into ragged multi-line cells. The blocks here decide their layout from the
width they are given at render time instead, and degrade in steps:

:class:`FitTable`
    1. every column on one line per row, three spaces between columns, then two;
    2. ``note`` columns (long free text such as a list of names) move to an
       indented line of their own under each row;
    3. names too long for the room left move to a line of their own above
       their row (the name column is dropped when no name fits);
    4. ``extra`` columns (a bar that repeats a number) are dropped;
    5. on a console too narrow for the numeric columns themselves, each row
       becomes a name line followed by ``header: value`` pairs.

    Numeric cells are never split: they are laid out whole on one line.
:class:`Paragraph`
    A wrapped paragraph with a hanging indent (bullets, labelled header rows).

Text is wrapped at plain spaces only; a non-breaking space
(:data:`audit.report.findings.GLUE`) keeps its neighbours on one line and is
shown as a plain space. A word longer than a whole line (an absurdly long
name) is folded, at a ``/``, ``_``, ``.`` or ``-`` when one is near the end
of the line. No line carries trailing spaces.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, RenderResult
from rich.text import Text

from .findings import GLUE

__all__ = ["Column", "FitTable", "Paragraph", "wrap"]

_SEPARATORS = "/_.-," + GLUE


def _fold(word: str, width: int) -> tuple[str, str]:
    """Split ``word`` (wider than ``width``) into a head that fits and the rest."""
    used, cut = 0, 0
    for i, ch in enumerate(word):
        used += cell_len(ch)
        if used > width:
            break
        cut = i + 1
    cut = max(cut, 1)
    head = word[:cut]
    best = max(head.rfind(s) for s in _SEPARATORS)
    if best >= max(1, width // 2) - 1 and best + 1 < len(word):
        cut = best + 1
    head, rest = word[:cut], word[cut:]
    return head.rstrip(GLUE), rest.lstrip(GLUE)


_GLUE_BOTH = frozenset({"=", "≥", "≤", "<", ">", "±", "≈", "~"})
_GLUE_NEXT = frozenset({"ν", "(ν", "nu", "(nu"})


def _glued(words: list[str]) -> list[str]:
    """Words joined by GLUE in relations (``N = 256``, ``ν ≥ 1``), ``ν 1.05`` and ``[a, b]``."""
    out: list[str] = []
    join_next = False
    for word in words:
        if not word:
            continue
        if out and (join_next or word in _GLUE_BOTH):
            out[-1] += GLUE + word
        else:
            out.append(word)
        # relations, "ν value", and the two ends of an interval "[low, high]"
        join_next = (
            word in _GLUE_BOTH
            or word in _GLUE_NEXT
            or (word.endswith(",") and "[" in word and "]" not in word)
        )
    return out


def wrap(text: str, width: int) -> list[str]:
    """Wrap ``text`` into lines at most ``width`` cells wide.

    Parameters
    ----------
    text : str
        Text; ``"\\n"`` starts a new line, runs of spaces count as one.
    width : int
        Cells per line (at least 1).

    Returns
    -------
    list of str
        Lines broken at plain spaces, but never inside a relation such as
        ``N = 256`` or ``ν ≥ 1``, an interval ``[low, high]``, nor between
        ``ν`` and its value; a word wider
        than ``width`` is folded. Non-breaking spaces are returned as plain spaces.
    """
    width = max(1, int(width))
    lines: list[str] = []
    for paragraph in text.split("\n"):
        line = ""
        for word in _glued(paragraph.split(" ")):
            candidate = f"{line} {word}" if line else word
            if cell_len(candidate) <= width:
                line = candidate
                continue
            if line:
                lines.append(line)
            while cell_len(word) > width:
                head, word = _fold(word, width)
                lines.append(head)
            line = word
        lines.append(line)
    return [line.replace(GLUE, " ") for line in lines]


class Paragraph:
    """Wrapped text after a prefix, continuation lines indented under the text.

    Parameters
    ----------
    text : str
        The text (may hold ``"\\n"``).
    prefix : str, optional
        Shown before the first line (a bullet, a label padded to a column).
    style, prefix_style : str, optional
        rich styles of the text and of the prefix.
    indent : int, optional
        Cells before the prefix on the first line and before continuation lines.
    """

    _MIN_TEXT = 12

    def __init__(
        self,
        text: str,
        prefix: str = "",
        *,
        style: str = "",
        prefix_style: str = "",
        indent: int = 0,
    ) -> None:
        self.text, self.prefix, self.indent = text, prefix, indent
        self.style, self.prefix_style = style, prefix_style

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        width = options.max_width
        lead = cell_len(self.prefix) + self.indent
        if width - lead < self._MIN_TEXT:  # too narrow for a hanging indent
            if self.prefix.strip():
                yield Text(self.prefix.rstrip(), style=self.prefix_style)
            for line in wrap(self.text, width):
                yield Text(line, style=self.style)
            return
        for k, line in enumerate(wrap(self.text, width - lead)):
            head = self.prefix if k == 0 else ""
            out = Text(" " * self.indent)
            out.append(head.ljust(cell_len(self.prefix)), style=self.prefix_style)
            out.append(line, style=self.style)
            out.rstrip()
            yield out


@dataclass(frozen=True)
class Column:
    """A column of a :class:`FitTable`.

    Attributes
    ----------
    header : str
        Header text; ``"\\n"`` makes a two-line header (aligned at the bottom).
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


Cell = str | Text


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
    columns : sequence of Column
        The columns, the ``"name"`` column (if any) first.
    rows : sequence of sequence of str or Text
        One cell per column; cells are single lines.
    ascii_only : bool, optional
        Draw the header rule with ``-`` instead of ``─``.
    """

    GAPS = (3, 2)
    NAME_MIN = 8
    INDENT = 2

    def __init__(
        self, columns: Sequence[Column], rows: Sequence[Sequence[Cell]], *, ascii_only: bool = False
    ) -> None:
        kinds = [c.kind for c in columns]
        if kinds.count("name") > 1 or ("name" in kinds and kinds[0] != "name"):
            raise ValueError(f"at most one 'name' column, and only first; got kinds {kinds}")
        if any(len(r) != len(columns) for r in rows):
            raise ValueError(f"every row needs {len(columns)} cells")
        self.columns = list(columns)
        self.rows = [[self._text(c, col) for c, col in zip(r, columns, strict=True)] for r in rows]
        self.ascii_only = ascii_only

    @staticmethod
    def _text(cell: Cell, col: Column) -> Text:
        text = cell.copy() if isinstance(cell, Text) else Text(str(cell), style=col.style)
        text.plain = text.plain.replace("\n", " ")
        return text

    # ------------------------------------------------------------------ planning

    def _natural(self, i: int) -> int:
        heads = [cell_len(h) for h in self.columns[i].header.split("\n")]
        return max([*heads, *(cell_len(r[i].plain) for r in self.rows)])

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
        for visible, below in tries:
            for gap in self.GAPS:
                if self._span(visible, gap, nat) <= width:
                    return _Plan(gap, visible, {i: nat[i] for i in visible}, below, "none")
        fixed = tuple(i for i in no_notes if kinds[i] != "name")
        essential = tuple(i for i in fixed if kinds[i] != "extra")
        indent = self.INDENT if "name" in kinds else 0
        for cols in (fixed, essential) if essential != fixed else (fixed,):
            if "name" in kinds:
                names = [cell_len(r[0].plain) for r in self.rows]
                for gap in self.GAPS:
                    room = width - self._span(cols, gap, nat) - gap
                    fitting = [w for w in names if w <= room]
                    head = cell_len(self.columns[0].header)
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
        return out

    def _header_lines(self, plan: _Plan, indent: int) -> list[Text]:
        heads = {i: self.columns[i].header.split("\n") for i in plan.visible}
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
            label = self.columns[0].header.replace("\n", " ")
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
        return [Text(line, style=name.style) for line in wrap(name.plain, width)]

    def _notes(self, row: list[Text], plan: _Plan, width: int) -> list[Text]:
        out: list[Text] = []
        for i in plan.notes_below:
            value = row[i].plain.strip()
            if not value:
                continue
            label = self.columns[i].header.replace("\n", " ")
            prefix = " " * self.INDENT + f"{label}: "
            aligned = width - cell_len(prefix)
            if aligned >= 12 and all(cell_len(w) <= aligned for w in value.split(" ")):
                lines = wrap(value, aligned)
                out += [
                    Text((prefix if k == 0 else " " * cell_len(prefix)) + line, style="dim")
                    for k, line in enumerate(lines)
                ]
                continue
            # an item too long to sit under the label: hang the continuation lines instead
            hang = self.INDENT + 2
            lines = wrap(f"{label}: {value}", max(1, width - hang))
            out += [
                Text((" " * (self.INDENT if k == 0 else hang)) + line, style="dim")
                for k, line in enumerate(lines)
            ]
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
            pairs.append(f"{col.header.replace(chr(10), ' ')}: {value}")
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
            parts = wrap(pair, avail)
            out += [Text(" " * indent + p) for p in parts[:-1]]
            line = parts[-1]
        if line:
            out.append(Text(" " * indent + line))
        return out

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        width = options.max_width
        plan = self._plan(width)
        if plan.stack == "records":
            for row in self.rows:
                yield from self._record(row, width)
            return
        has_name = self.columns[0].kind == "name"
        indent = self.INDENT if plan.stack == "all" and has_name else 0
        yield from self._header_lines(plan, indent)
        span = indent + sum(plan.widths.values()) + plan.gap * (len(plan.visible) - 1)
        yield Text(("-" if self.ascii_only else "─") * span)
        for row in self.rows:
            cells = [(i, row[i]) for i in plan.visible]
            if (plan.stack == "all" and has_name) or (
                plan.stack == "some" and cell_len(row[0].plain) > plan.widths[0]
            ):
                yield from self._name_lines(row[0], width)
                if plan.stack == "some":
                    cells[0] = (0, Text(""))
            yield self._line(cells, plan, indent)
            yield from self._notes(row, plan, width)
