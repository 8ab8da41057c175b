"""The content of a report as plain data: a :class:`Report` of :class:`Section` s of blocks.

Every report kind (audit, comparison, advice) is built as a :class:`Report` by
:mod:`audit.report.sections`; each renderer (:mod:`audit.report.terminal`,
:mod:`audit.report.markdown`) lays out any :class:`Report` without knowing its
kind. The model says *what* is shown, never *how*: no widths, no styles, no
markup, only a :data:`Tone` that a renderer maps to its own emphasis, column
roles that tell a renderer what a column holds, and :class:`Bar` cells that
carry their value (a terminal draws blocks, a page may draw a chart).

Text in the model is Unicode and may hold names read from files verbatim;
renderers make it safe for their output (:func:`audit.report.text.visible`)
and transliterate it where the output cannot encode it. Text never carries
structure: a block with several lines lists them (:attr:`Field.lines`).

Blocks
------
:class:`Fields`
    Labelled rows (the model and run header, the details of gates).
:class:`Table`
    Rows under typed :class:`Column` s.
:class:`Paragraph`, :class:`Note`, :class:`Heading`
    Running text, a remark in a smaller voice, a heading inside a section.
:class:`Bullets`
    Findings: one sentence each, with command lines suggested as next steps.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

__all__ = [
    "Bar",
    "Block",
    "Bullet",
    "Bullets",
    "Cell",
    "CellValue",
    "Column",
    "Field",
    "Fields",
    "Heading",
    "Note",
    "Paragraph",
    "Report",
    "Section",
    "Table",
    "Tone",
]

#: Emphasis of a piece of text, mapped by each renderer to its own means (bold, colour...).
Tone = Literal["plain", "strong", "muted", "alert", "warning", "command"]
TONES: tuple[str, ...] = ("plain", "strong", "muted", "alert", "warning", "command")

#: What a column holds. ``"name"``: the row's name (at most one column, the first);
#: ``"number"``: figures, never split; ``"text"``: short words; ``"note"``: long free text
#: (a list of names) that may move under its row; ``"bar"``: :class:`Bar` cells repeating a
#: number graphically, which may be left out where room is short.
Role = Literal["name", "number", "text", "note", "bar"]
ROLES: tuple[str, ...] = ("name", "number", "text", "note", "bar")


def _check_tone(tone: str) -> None:
    if tone not in TONES:
        raise ValueError(f"unknown tone {tone!r}; tones: {', '.join(TONES)}")


@dataclass(frozen=True)
class Cell:
    """A table cell with its own tone (a failed check in ``"alert"``).

    Attributes
    ----------
    text : str
        The cell's text, one line.
    tone : Tone or None
        ``None`` takes the column's tone.
    """

    text: str
    tone: Tone | None = None

    def __post_init__(self) -> None:
        if self.tone is not None:
            _check_tone(self.tone)


@dataclass(frozen=True)
class Bar:
    """A share drawn as a bar: ``value`` out of ``scale`` (a fraction of 1 by default).

    Values outside ``[0, scale]`` are drawn clipped; NaN draws nothing.
    """

    value: float
    scale: float = 1.0

    @property
    def fraction(self) -> float:
        """``value / scale`` clipped to [0, 1]; NaN when not finite."""
        if not (math.isfinite(self.value) and math.isfinite(self.scale)) or self.scale <= 0:
            return math.nan
        return min(max(self.value / self.scale, 0.0), 1.0)


CellValue = str | Cell | Bar


@dataclass(frozen=True)
class Column:
    """A column of a :class:`Table`.

    Attributes
    ----------
    header : str
        Header text, one line; a narrow renderer may break it at a space.
    role : {"name", "number", "text", "note", "bar"}
        What the cells hold (see :data:`Role`); numbers are right-aligned,
        everything else left-aligned.
    tone : Tone
        Tone of the column's cells (a cell may override it).
    group : str
        Consecutive columns with the same non-empty ``group`` belong together
        (an estimate and its interval). A renderer short of room may show them
        as one column headed ``group``; others show each column under its own
        header.
    """

    header: str
    role: Role = "number"
    tone: Tone = "plain"
    group: str = ""

    def __post_init__(self) -> None:
        if self.role not in ROLES:
            raise ValueError(f"unknown column role {self.role!r}; roles: {', '.join(ROLES)}")
        _check_tone(self.tone)

    @property
    def align(self) -> Literal["left", "right"]:
        """``"right"`` for numbers, ``"left"`` otherwise."""
        return "right" if self.role == "number" else "left"


@dataclass(frozen=True)
class Table:
    """Rows of cells under typed columns.

    Raises
    ------
    ValueError
        When a row does not have one cell per column, when a ``"name"``
        column is not the first or not the only one, when a :class:`Bar` sits
        outside a ``"bar"`` column or a ``"bar"`` column holds anything else
        than bars and empty strings.
    """

    columns: tuple[Column, ...]
    rows: tuple[tuple[CellValue, ...], ...]

    def __post_init__(self) -> None:
        roles = [c.role for c in self.columns]
        if roles.count("name") > 1 or ("name" in roles and roles[0] != "name"):
            raise ValueError(f"at most one 'name' column, and only first; got roles {roles}")
        for row in self.rows:
            if len(row) != len(self.columns):
                raise ValueError(f"every row needs {len(self.columns)} cells, got {len(row)}")
            for cell, col in zip(row, self.columns, strict=True):
                if isinstance(cell, Bar) != (col.role == "bar") and cell != "":
                    raise ValueError(f"column {col.header!r} ({col.role}) cannot hold {cell!r}")


@dataclass(frozen=True)
class Field:
    """One labelled row: ``model  model_zoo/greenhouse_v1.onnx (onnx)``.

    Attributes
    ----------
    label : str
        Short label.
    text : str
        The value, one paragraph.
    lines : tuple of str
        Further lines listed under the value (one per input, say).
    tone : Tone
        Tone of the value (notices in ``"warning"``).
    """

    label: str
    text: str
    lines: tuple[str, ...] = ()
    tone: Tone = "plain"

    def __post_init__(self) -> None:
        _check_tone(self.tone)


@dataclass(frozen=True)
class Fields:
    """Labelled rows, the labels aligned."""

    rows: tuple[Field, ...]


@dataclass(frozen=True)
class Paragraph:
    """Running text (wrapped by the renderer)."""

    text: str
    tone: Tone = "plain"

    def __post_init__(self) -> None:
        _check_tone(self.tone)


@dataclass(frozen=True)
class Note:
    """A remark in a smaller voice: rows left out, why a table is empty, what a mark means."""

    text: str


@dataclass(frozen=True)
class Heading:
    """A heading inside a section (one level below the section's title)."""

    text: str


@dataclass(frozen=True)
class Bullet:
    """One finding: a sentence or two, and command lines suggested as the next step."""

    text: str
    commands: tuple[str, ...] = ()


@dataclass(frozen=True)
class Bullets:
    """A list of findings."""

    items: tuple[Bullet, ...]


Block = Fields | Table | Paragraph | Note | Heading | Bullets
BLOCKS: tuple[type, ...] = (Fields, Table, Paragraph, Note, Heading, Bullets)


@dataclass(frozen=True)
class Section:
    """A titled part of a report; ``title=None`` for a remark between sections."""

    title: str | None
    blocks: tuple[Block, ...] = ()

    def __post_init__(self) -> None:
        bad = [b for b in self.blocks if not isinstance(b, BLOCKS)]
        if bad:
            raise TypeError(f"not a report block: {bad[0]!r}")


@dataclass(frozen=True)
class Report:
    """A whole report.

    Attributes
    ----------
    kind : str
        The result's kind (``"audit"``, ``"comparison"``, ``"advice"``).
    title : str
        The document's title, for renderers that show one (Markdown, a page);
        the terminal report starts with its first section.
    sections : tuple of Section
        In display order. Renderers close every report with
        :data:`audit.report.text.CAUTION`.
    """

    kind: str
    title: str
    sections: tuple[Section, ...] = field(default_factory=tuple)

    def blocks(self) -> list[Block]:
        """Every block of every section, in order."""
        return [b for s in self.sections for b in s.blocks]
