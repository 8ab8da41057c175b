"""A small TOML writer for input specs, with comments.

The standard library reads TOML (:mod:`tomllib`) but does not write it. A spec
made from data is a file people read and edit, so it carries comments: where
each law came from, the range and the test results of every feature, and the
groups suggested for dependent inputs, commented out. Well-kept TOML writers
write data without comments; the spec needs only strings, numbers, booleans,
lists of them, tables and arrays of tables, so this writer is a few lines.
Every document it writes is read back by :mod:`tomllib` in the tests.

References
----------
.. [1] TOML v1.0.0, https://toml.io/en/v1.0.0 (strings, floats incl. ``inf`` and
   ``nan``, arrays, tables, arrays of tables).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

__all__ = ["TomlWriter", "toml_value"]

_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def _string(s: str) -> str:
    out = []
    for ch in s:
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _float(x: float) -> str:
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    text = repr(float(x))  # the shortest text that reads back to the same float
    return text if any(c in text for c in ".en") else text + ".0"


def toml_value(v: Any) -> str:
    """A string, number, boolean or (nested) list as TOML text.

    Examples
    --------
    >>> from audit.inputs.tomlwrite import toml_value
    >>> toml_value(["a", 1, 0.5, float("inf")])
    '["a", 1, 0.5, inf]'
    """
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return _float(v)
    if isinstance(v, str):
        return _string(v)
    if isinstance(v, Sequence):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if hasattr(v, "item"):  # numpy scalars
        return toml_value(v.item())
    raise TypeError(f"cannot write {type(v).__name__} as TOML.")


def _key(k: str) -> str:
    bare = k and all(c.isascii() and (c.isalnum() or c in "_-") for c in k)
    return k if bare else _string(k)


class TomlWriter:
    """Lines of a TOML document, written in order: comments, keys, tables.

    Long lists are wrapped, several numbers to a line.
    """

    def __init__(self, width: int = 100) -> None:
        self.lines: list[str] = []
        self.width = width

    def comment(self, text: str = "") -> None:
        for line in (text.splitlines() or [""]) if text else [""]:
            self.lines.append(f"# {line}".rstrip())

    def blank(self) -> None:
        self.lines.append("")

    def table(self, name: str) -> None:
        self.lines.append(f"[{name}]")

    def array_table(self, name: str) -> None:
        self.lines.append(f"[[{name}]]")

    def key(self, name: str, value: Any, prefix: str = "") -> None:
        """``name = value``; ``prefix`` (``"# "``) writes it commented out."""
        head = f"{prefix}{_key(name)} = "
        text = toml_value(value)
        if len(head) + len(text) <= self.width or not isinstance(value, list | tuple) or not value:
            self.lines.append(head + text)
            return
        self.lines.append(head + "[")
        row: list[str] = []
        for item in value:
            part = toml_value(item) + ","
            if row and len(prefix) + 4 + len(" ".join(row)) + 1 + len(part) > self.width:
                self.lines.append(prefix + "    " + " ".join(row))
                row = []
            row.append(part)
        if row:
            self.lines.append(prefix + "    " + " ".join(row))
        self.lines.append(prefix + "]")

    def text(self) -> str:
        return "\n".join(self.lines).rstrip() + "\n"
