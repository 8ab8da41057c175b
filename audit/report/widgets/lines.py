"""Wrapped text and section titles for the terminal, made safe at render time.

:class:`WrappedText`
    A wrapped paragraph with a hanging indent (bullets, labelled header rows).
:class:`TitleRule`
    A bold title followed by a rule; wraps instead of truncating when too long.
    Without a title, a rule across the width.
:class:`AsciiOnly`
    Renders what it holds as if the console could encode ASCII only.
:func:`safe_text`
    A rich ``Text`` of plain text or styled pieces.

Every string is made safe when it is rendered, never before: control and
format characters are shown as escapes (:func:`audit.report.text.visible`),
and on a console that cannot encode Unicode (``options.ascii_only``) text is
transliterated (:func:`audit.report.text.to_ascii`) and rules are drawn with
``-``. Text is never parsed as rich markup.

Text is wrapped at plain spaces only (:func:`wrap`); a non-breaking space
(:data:`audit.report.text.GLUE`) keeps its neighbours on one line and is
shown as a plain space. A word longer than a whole line (an absurdly long
name) is never broken across lines: it is shortened in the middle with an
ellipsis (:func:`audit.report.text.shorten`; ``...`` on an ASCII console),
the full name staying in the JSON report. No line carries trailing spaces.
"""

from __future__ import annotations

from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, RenderableType, RenderResult
from rich.rule import Rule
from rich.text import Text

from ..text import GLUE, shorten, to_ascii, visible

__all__ = ["AsciiOnly", "Styled", "TitleRule", "WrappedText", "clean", "safe_text", "wrap"]

#: Plain text, or pieces of ``(text, rich style)`` shown one after the other.
Styled = str | tuple[tuple[str, str], ...]

_GLUE_BOTH = frozenset({"=", "≥", "≤", "<", ">", "±", "≈", "~", ">=", "<=", "+/-"})
_GLUE_NEXT = frozenset({"ν", "(ν", "nu", "(nu"})


def clean(text: str, ascii_only: bool = False) -> str:
    """``text`` made safe to print (:func:`~audit.report.text.visible`), in ASCII if asked."""
    text = visible(text)
    return to_ascii(text) if ascii_only else text


def safe_text(value: Styled, style: str = "", *, ascii_only: bool = False) -> Text:
    """A rich ``Text`` of ``value``, safe to print.

    Parameters
    ----------
    value : str or tuple of (str, str)
        Plain text, or ``(text, style)`` pieces.
    style : str, optional
        Style of plain text (pieces carry their own).
    ascii_only : bool, optional
        Transliterate to ASCII.

    Returns
    -------
    rich.text.Text
        Control characters shown as escapes; never interpreted as markup.
    """
    pieces = ((value, style),) if isinstance(value, str) else value
    out = Text()
    for text, piece_style in pieces:
        out.append(clean(text, ascii_only), style=piece_style or None)
    return out


# ----------------------------------------------------------------------------- wrapping


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
        join_next = word in _GLUE_BOTH or word in _GLUE_NEXT or (word.endswith(",") and "[" in word and "]" not in word)
    return out


def _fit_word(word: str, width: int, ellipsis: str) -> str:
    """A word (glued words, such as ``ν 1.05``, count as one) shortened in the middle to ``width``."""
    if cell_len(word) <= width:
        return word
    pieces = word.split(GLUE)
    longest = max(range(len(pieces)), key=lambda i: cell_len(pieces[i]))
    rest = cell_len(word) - cell_len(pieces[longest])
    if rest < width - cell_len(ellipsis) - 2:  # shorten the long name, keep the numbers glued to it
        pieces[longest] = shorten(pieces[longest], width - rest, ellipsis)
        return GLUE.join(pieces)
    return shorten(word, width, ellipsis)


def wrap(text: str, width: int, ellipsis: str = "…") -> list[str]:
    """Wrap ``text`` into lines at most ``width`` cells wide.

    Parameters
    ----------
    text : str
        Text; ``"\\n"`` starts a new line, runs of spaces count as one.
    width : int
        Cells per line (at least 1).
    ellipsis : str, optional
        What stands for the middle of a word shortened to fit (``"..."`` for ASCII).

    Returns
    -------
    list of str
        Lines broken at plain spaces, but never inside a relation such as
        ``N = 256`` or ``ν ≥ 1``, an interval ``[low, high]``, nor between
        ``ν`` and its value; a word wider than ``width`` is shortened in the
        middle, never broken. Non-breaking spaces are returned as plain spaces.
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
            line = _fit_word(word, width, ellipsis)
        lines.append(line)
    return [line.replace(GLUE, " ") for line in lines]


# ----------------------------------------------------------------------------- text blocks


class WrappedText:
    """Wrapped text after a prefix, continuation lines indented under the text.

    Parameters
    ----------
    text : str
        The text (one paragraph: control characters are shown escaped).
    prefix : str, optional
        Shown before the first line (a bullet, a label padded to a column).
    style, prefix_style : str, optional
        rich styles of the text and of the prefix.
    indent : int, optional
        Cells before the prefix on the first line and before continuation lines.
    """

    _MIN_TEXT = 12

    def __init__(
        self, text: str, prefix: str = "", *, style: str = "", prefix_style: str = "", indent: int = 0
    ) -> None:
        self.text, self.prefix, self.indent = text, prefix, indent
        self.style, self.prefix_style = style, prefix_style

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        text = clean(self.text, options.ascii_only)
        prefix = clean(self.prefix, options.ascii_only)
        width = options.max_width
        lead = cell_len(prefix) + self.indent
        if width - lead < self._MIN_TEXT:  # too narrow for a hanging indent
            if prefix.strip():
                yield Text(prefix.rstrip(), style=self.prefix_style)
            for line in wrap(text, width, _ellipsis(options)):
                yield Text(line, style=self.style)
            return
        for k, line in enumerate(wrap(text, width - lead, _ellipsis(options))):
            head = prefix if k == 0 else ""
            out = Text(" " * self.indent)
            out.append(head.ljust(cell_len(prefix)), style=self.prefix_style)
            out.append(line, style=self.style)
            out.rstrip()
            yield out


def _ellipsis(options: ConsoleOptions) -> str:
    return "..." if options.ascii_only else "…"


def _rule_characters(options: ConsoleOptions) -> str:
    return "-" if options.ascii_only else "─"


class TitleRule:
    """A bold title and a dim rule to the right edge; wrapped in bold when too long for one line.

    ``TitleRule(None)`` is the rule alone, across the whole width.
    """

    def __init__(self, text: str | None = None) -> None:
        self.text = text

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        characters = _rule_characters(options)
        if self.text is None:
            yield Rule(style="dim", characters=characters)
            return
        text = clean(self.text, options.ascii_only)
        if cell_len(text) + 4 <= options.max_width:
            yield Rule(Text(text, style="bold"), align="left", style="dim", characters=characters)
        else:
            yield WrappedText(self.text, style="bold")


class AsciiOnly:
    """Render ``renderable`` as on a console that can encode ASCII only (``-`` rules, ``nu``)."""

    def __init__(self, renderable: RenderableType) -> None:
        self.renderable = renderable

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        ascii_options = options.copy()
        ascii_options.encoding = "ascii"
        yield from console.render(self.renderable, ascii_options)
