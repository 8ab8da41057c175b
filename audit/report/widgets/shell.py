"""Shell commands laid out to be pasted back: one line when it fits, else continued with a backslash.

A command a report suggests must reach the shell exactly as it was meant,
however narrow the terminal. :func:`shell_lines` keeps it on one line when it
fits and otherwise breaks it between words, each line but the last ending in
`` \\`` (the POSIX line continuation), continuation lines indented; an option
stays on the line of its value where room allows. A single word wider than a
whole line (a long path) is broken inside, where the shell joins it again: the
line ends in ``\\`` right after the cut (closing and reopening a single-quoted
part around it) and the next line starts in the first column.

:class:`CommandText` is the rich renderable of a command: it never lets the
console wrap or crop the text itself.
"""

from __future__ import annotations

from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, RenderResult
from rich.text import Text

from .lines import clean

__all__ = ["CONTINUATION", "CommandText", "shell_lines", "shell_words"]

#: Extra indent of continuation lines.
CONTINUATION = 4


def shell_words(command: str) -> list[str]:
    """``command`` split at spaces outside quotes, each word as written (quotes kept)."""
    words: list[str] = []
    word, quote, escaped = "", "", False
    for ch in command:
        if escaped:
            word, escaped = word + ch, False
        elif ch == "\\" and quote != "'":
            word, escaped = word + ch, True
        elif quote:
            word += ch
            quote = "" if ch == quote else quote
        elif ch in "'\"":
            word, quote = word + ch, ch
        elif ch == " ":
            if word:
                words.append(word)
            word = ""
        else:
            word += ch
    if word:
        words.append(word)
    return words


def _groups(words: list[str]) -> list[list[str]]:
    """Words kept together where room allows: ``netdim audit``, and each option with its value."""
    out: list[list[str]] = []
    i = 0
    while i < len(words):
        w = words[i]
        joined = i + 1 < len(words) and (
            (i == 0 and w == "netdim") or (w.startswith("-") and not words[i + 1].startswith("-"))
        )
        out.append(words[i : i + 2] if joined else [w])
        i += 2 if joined else 1
    return out


def _cut_points(word: str) -> list[tuple[int, str]]:
    """Where ``word`` may be cut, and what ends the line there: ``\\`` outside quotes, ``'\\`` inside single ones."""
    points: list[tuple[int, str]] = []
    quote, escaped = "", False
    for i, ch in enumerate(word):
        if i and not escaped and quote in ("", "'"):
            points.append((i, "'\\" if quote == "'" else "\\"))
        if escaped:
            escaped = False
        elif ch == "\\" and quote != "'":
            escaped = True
        elif quote:
            quote = "" if ch == quote else quote
        elif ch in "'\"":
            quote = ch
    return points


def _break_word(word: str, first_room: int, room: int) -> list[str]:
    """``word`` cut into pieces that fit (the first in ``first_room`` cells, the others in ``room``).

    The last piece keeps room for a following `` \\``.
    """
    pieces: list[str] = []
    rest, limit = word, first_room
    while cell_len(rest) + 2 > limit:
        fitting = [(i, end) for i, end in _cut_points(rest) if cell_len(rest[:i] + end) <= limit]
        if not fitting:
            break
        i, end = fitting[-1]
        pieces.append(rest[:i] + end)
        rest = ("'" if end == "'\\" else "") + rest[i:]
        limit = room
    return [*pieces, rest]


def shell_lines(command: str, width: int, indent: int = 0) -> list[str]:
    """``command`` as lines of at most ``width`` cells that a POSIX shell reads as the same command.

    Parameters
    ----------
    command : str
        One command line, its words quoted for the shell.
    width : int
        Cells per line, ``indent`` included.
    indent : int, optional
        Spaces before the first line; continuation lines get :data:`CONTINUATION` more.

    Returns
    -------
    list of str
        The command on one line when it fits; otherwise broken between words
        (lines ending in `` \\``), and inside a word only when the word alone is
        wider than a line (the line ends in ``\\`` at the cut and the next one
        starts in the first column). Only a word that cannot be cut anywhere
        is left wider than ``width``.
    """
    first = " " * indent
    if cell_len(first + command) <= width:
        return [first + command]
    lead = " " * (indent + CONTINUATION)
    lines: list[str] = []
    line = first
    for group in _groups(shell_words(command)):
        together = " ".join(group)
        parts = [together] if cell_len(lead + together + " \\") <= width else group
        for part in parts:
            if line.strip() and cell_len(f"{line} {part} \\") <= width:
                line = f"{line} {part}"
                continue
            if line.strip():
                lines.append(line + " \\")
                line = lead
            if cell_len(line + part + " \\") <= width:
                line += part
                continue
            pieces = _break_word(part, width - cell_len(line), width)
            lines += [line + pieces[0], *pieces[1:-1]]
            line = pieces[-1]
    lines.append(line)
    return lines


class CommandText:
    """A suggested command, laid out by :func:`shell_lines` for the console's width (made safe first)."""

    def __init__(self, command: str, *, indent: int = 0, style: str = "") -> None:
        self.command, self.indent, self.style = command, indent, style

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        text = clean(self.command, options.ascii_only)
        for line in shell_lines(text, options.max_width, self.indent):
            yield Text(line, style=self.style, no_wrap=True, overflow="ignore", end="\n")
