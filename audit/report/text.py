"""Text shared by every report: numbers, durations, lists, the caution, safe names.

Every number a report shows is formatted here, so the terminal, the Markdown
export (and any later renderer) show identical figures with identical rounding.
Numbers get :data:`SIGNIFICANT_DIGITS` significant digits (:func:`fmt`), in
fixed notation between 0.001 and 100 000 and in scientific notation outside.

Two helpers prepare text for a particular output, and every renderer uses
them on every string it writes:

:func:`visible`
    Control and format characters (an escape sequence, a newline, a bidi
    override) shown as visible escapes (``\\x1b``, ``\\n``, ``\\u202e``).
    Model, layer, input and output names come from files; a name can never
    move the cursor, colour the terminal or start a new line or table row.
:func:`to_ascii`
    ASCII stand-ins (``ν`` -> ``nu``, ``σ²`` -> ``var``, ``é`` -> ``e``) for
    consoles that cannot encode Unicode.

Report text is written in Unicode; a non-breaking space (:data:`GLUE`) keeps
a number with its label and unit when a line wraps and is shown as a space.
"""

from __future__ import annotations

import math
import unicodedata
from collections.abc import Sequence
from typing import Any

__all__ = [
    "BAR_WIDTH",
    "CAUTION",
    "GLUE",
    "LIST_LIMIT",
    "SIGNIFICANT_DIGITS",
    "cell_len",
    "finite",
    "fmt",
    "fmt_count",
    "fmt_duration",
    "fmt_interval",
    "fmt_percent",
    "fmt_setting",
    "glue",
    "listing",
    "share_bar",
    "shorten",
    "to_ascii",
    "visible",
]

SIGNIFICANT_DIGITS = 4
BAR_WIDTH = 10
LIST_LIMIT = 5

CAUTION = (
    "An audit of a model's sensitivity is not a safety validation. Where a model informs or "
    "controls equipment, defer to the applicable codes and to qualified engineers."
)

GLUE = "\u00a0"  # a non-breaking space: renderers show it as a plain space


# ----------------------------------------------------------------------------- numbers


def finite(x: Any) -> bool:
    """True for an int or float (not a bool) that is neither NaN nor infinite."""
    return isinstance(x, int | float) and not isinstance(x, bool) and math.isfinite(x)


def fmt(x: float | None, digits: int = SIGNIFICANT_DIGITS) -> str:
    """Format a number with a fixed count of significant digits.

    Parameters
    ----------
    x : float or None
        The number. ``None``, NaN and infinities give ``"n/a"``.
    digits : int, optional
        Significant digits (default :data:`SIGNIFICANT_DIGITS`).

    Returns
    -------
    str
        Fixed notation for 0.001 <= |x| < 100 000 (trailing zeros kept, so
        every value shows the same number of digits), scientific otherwise;
        exact zero is ``"0"``.
    """
    if not finite(x):
        return "n/a"
    x = float(x)  # type: ignore[arg-type]
    if x == 0.0:
        return "0"
    if 1e-3 <= abs(x) < 1e5:
        text = f"{x:#.{digits}g}"
        if "e" not in text:
            return text.rstrip(".")
    return f"{x:.{digits - 1}e}"


def fmt_interval(low: float | None, high: float | None) -> str:
    """Format an interval as ``[low, high]`` with :func:`fmt` (``"n/a"`` without both ends)."""
    if not (finite(low) and finite(high)):
        return "n/a"
    return f"[{fmt(low)}, {fmt(high)}]"


def fmt_count(n: Any) -> str:
    """Format a count with thousands separators (``81,920``); other values as text."""
    if isinstance(n, bool):
        return str(n)
    if isinstance(n, int):
        return f"{n:,}"
    if isinstance(n, float) and n.is_integer():
        return f"{int(n):,}"
    if n is None:
        return "n/a"
    return fmt(n) if finite(n) else str(n)


def fmt_setting(x: Any) -> str:
    """Format a setting or law parameter compactly (``0.001``, ``16``, ``-5``), up to 4 digits."""
    if finite(x):
        return f"{float(x):.4g}"
    return str(x)


def fmt_percent(fraction: float) -> str:
    """A fraction as a percentage with :func:`fmt` (``0.0123`` -> ``"1.230 %"``); ``"n/a"`` if not finite."""
    return f"{fmt(100 * fraction)} %" if finite(fraction) else "n/a"


def fmt_duration(seconds: Any) -> str:
    """Format a duration for people: ``0.026 s``, ``2.4 s``, ``1 min 12 s``, ``2 h 05 min``.

    Parameters
    ----------
    seconds : float
        Wall-clock seconds; ``None``, NaN, infinities and negative values give ``"n/a"``.

    Returns
    -------
    str
        Two significant digits below ten seconds (``"under 0.001 s"`` below a
        millisecond), whole seconds below a minute, minutes and seconds below an
        hour, hours and minutes beyond.
    """
    if not finite(seconds) or seconds < 0:
        return "n/a"
    x = float(seconds)
    if x < 1e-3:
        return "under 0.001 s"
    if x < 9.95:
        return f"{x:.2g} s"
    whole = round(x)
    if whole < 60:
        return f"{whole} s"
    if whole < 3600:
        minutes, rest = divmod(whole, 60)
        return f"{minutes} min {rest} s"
    minutes = round(x / 60)
    hours, rest = divmod(minutes, 60)
    return f"{hours} h {rest:02d} min"


def share_bar(fraction: float, width: int = BAR_WIDTH) -> str:
    """A proportional bar of block characters, ``width`` cells for a fraction of 1.

    Parameters
    ----------
    fraction : float
        Value in [0, 1]; values outside are clipped, NaN gives an empty bar.
    width : int, optional
        Cells for a full bar.

    Returns
    -------
    str
        Full blocks and one partial block (eighths of a cell).
    """
    if not finite(fraction):
        return ""
    eighths = round(min(max(float(fraction), 0.0), 1.0) * width * 8)
    full, rest = divmod(eighths, 8)
    partial = " ▏▎▍▌▋▊▉"[rest].strip()
    return "█" * full + partial


# ----------------------------------------------------------------------------- words


def listing(items: Sequence[str], limit: int = LIST_LIMIT) -> str:
    """``a, b, c``; beyond ``limit`` items ``a, b, c, d, e and 3 more``."""
    if len(items) <= limit:
        return ", ".join(items)
    return ", ".join(items[:limit]) + f" and {len(items) - limit} more"


def cell_len(text: str) -> int:
    """Terminal cells ``text`` takes: two for wide (East Asian) characters, none for combining marks."""
    if text.isascii():
        return len(text)
    return sum(
        0 if unicodedata.combining(c) else 2 if unicodedata.east_asian_width(c) in "WF" else 1 for c in text
    )


def shorten(name: str, width: int, ellipsis: str = "…") -> str:
    """``name`` cut in the middle to at most ``width`` cells: ``features.1…Relu_output_0``.

    Parameters
    ----------
    name : str
        A name (one word: a layer, an input, a path).
    width : int
        Cells available (a wide character takes two).
    ellipsis : str, optional
        What stands for the part left out (``"..."`` on an ASCII console).

    Returns
    -------
    str
        ``name`` itself when it fits; otherwise its start and its end around
        ``ellipsis``, the start one cell longer when the room is odd. Names are
        shortened, never broken across lines: the full name stays in the JSON report.
    """
    if cell_len(name) <= width:
        return name
    room = max(0, width - cell_len(ellipsis))
    head_room, tail_room = room - room // 2, room // 2
    head, used = "", 0
    for ch in name:
        if used + cell_len(ch) > head_room:
            break
        head, used = head + ch, used + cell_len(ch)
    tail, used = "", 0
    for ch in reversed(name[len(head) :]):
        if used + cell_len(ch) > tail_room:
            break
        tail, used = ch + tail, used + cell_len(ch)
    return head + ellipsis + tail


def glue(text: str) -> str:
    """``text`` with its spaces made non-breaking, so that wrapping keeps it on one line."""
    return text.replace(" ", GLUE)


# ----------------------------------------------------------------------------- safe output

# Character classes shown escaped: controls, format characters (bidi overrides, zero
# widths), line and paragraph separators, lone surrogates and unassigned code points.
_HIDDEN = frozenset({"Cc", "Cf", "Zl", "Zp", "Cs", "Cn"})
_SHORT_ESCAPES = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def _escape(ch: str) -> str:
    if ch in _SHORT_ESCAPES:
        return _SHORT_ESCAPES[ch]
    code = ord(ch)
    if code < 0x100:
        return f"\\x{code:02x}"
    return f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}"


def visible(text: str) -> str:
    """``text`` with every control or format character shown as a visible escape.

    Parameters
    ----------
    text : str
        Any text, typically holding names read from a model file or a spec.

    Returns
    -------
    str
        The same text where control characters (``\\x1b``, newline, tab, DEL),
        format characters (bidi overrides, zero-width characters), line and
        paragraph separators, surrogates and unassigned code points are written
        as Python-style escapes: ``\\x1b``, ``\\n``, ``\\u202e``. Printable text,
        including non-ASCII letters and :data:`GLUE`, is unchanged; applying it
        twice changes nothing more.
    """
    if text.isascii() and text.isprintable():
        return text
    return "".join(_escape(c) if unicodedata.category(c) in _HIDDEN else c for c in text)


# Stand-ins for consoles that cannot encode Unicode (a cp1252 pipe, say); longer keys first.
_ASCII_WORDS = (("σ²", "var"), ("Σ", "sum"))
_ASCII = str.maketrans(
    {
        "ν": "nu",
        "τ": "tau",
        "σ": "sigma",
        "μ": "mu",
        "…": "...",
        "—": "-",
        "–": "-",
        "−": "-",
        "→": "->",
        "±": "+/-",
        "≥": ">=",
        "≤": "<=",
        "≈": "~",
        "√": "sqrt ",
        "×": "x",
        "°": "deg ",
        "•": "*",
        "†": "~",
        "‡": "!",
        "─": "-",
        "█": "#",
        "▉": "#",
        "▊": "#",
        "▋": "#",
        "▌": "+",
        "▍": "+",
        "▎": "+",
        "▏": "+",
    }
)


def to_ascii(text: str) -> str:
    """``text`` in ASCII: symbols by stand-ins, accents dropped, anything else as ``?``.

    Parameters
    ----------
    text : str
        Report text.

    Returns
    -------
    str
        ``ν`` -> ``nu``, ``σ²`` -> ``var``, ``→`` -> ``->``, ``±`` -> ``+/-``,
        ``²`` -> ``2``, ``é`` -> ``e``, bar blocks -> ``#`` and ``+``.
        Non-breaking spaces (:data:`GLUE`) are kept for the line wrapper, which
        shows them as plain spaces.
    """
    if text.isascii():
        return text
    if GLUE in text:
        return GLUE.join(to_ascii(part) for part in text.split(GLUE))
    for word, stand_in in _ASCII_WORDS:
        text = text.replace(word, stand_in)
    decomposed = unicodedata.normalize("NFKD", text.translate(_ASCII))
    kept = "".join(c for c in decomposed if not unicodedata.combining(c))
    return kept.encode("ascii", "replace").decode("ascii")
