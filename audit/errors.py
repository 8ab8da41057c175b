"""Errors a user can cause, and the one validation helper every module uses.

Every mistake a user can make (a bad file, a bad spec, a bad setting, a model
that returns non-finite numbers) raises :class:`UserError` with a one-paragraph
message saying what is wrong, where, and how to fix it. The command line prints
that message without a traceback and exits with code 2.

Library messages name the parameters of the Python API in backticks
(```points```); the command line shows them as its flags (``--points``), see
:func:`audit.cli.output.as_flags`. The ``check_*`` helpers below are the one
place settings are validated, for the command line and the Python API alike.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable, Sequence
from typing import Any

__all__ = ["UserError", "check_choice", "check_int", "check_number", "suggest"]


class UserError(Exception):
    """A problem the user can fix: bad input, bad file, bad setting.

    Parameters
    ----------
    message : str
        One paragraph: what is wrong, where, and how to fix it. Parameters of
        the Python API are written in backticks (```points```).
    """

    exit_code = 2

    def __init__(self, message: str) -> None:
        super().__init__(message)
        self.message = message

    def __str__(self) -> str:
        return self.message


def suggest(word: str, choices: Iterable[str]) -> str:
    """Return ``" Did you mean 'x'?"`` for the nearest choice, or ``""``."""
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f" Did you mean '{close[0]}'?" if close else ""


def check_choice(value: Any, name: str, choices: Sequence[str], what: str = "") -> str:
    """``value`` when it is one of ``choices``; otherwise a :class:`UserError` listing them.

    Parameters
    ----------
    value : object
        The setting given.
    name : str
        Parameter name, shown in backticks.
    choices : sequence of str
        Valid values.
    what : str, optional
        A phrase added to the message (what the choices mean).
    """
    if isinstance(value, str) and value in choices:
        return value
    extra = f" {what}" if what else ""
    raise UserError(
        f"Unknown `{name}` {value!r}; valid choices: {', '.join(choices)}.{extra}" + suggest(str(value), choices)
    )


def check_int(value: Any, name: str, low: int, high: int | None = None, why: str = "") -> int:
    """``value`` as an int in ``[low, high]``; a :class:`UserError` naming ``name`` otherwise.

    Whole floats (``4.0``) are taken as ints; booleans, floats with a fraction and
    non-numbers are refused.
    """
    ok = isinstance(value, int) and not isinstance(value, bool)
    if not ok and isinstance(value, float) and value.is_integer():
        value, ok = int(value), True
    if not ok and hasattr(value, "__index__") and not isinstance(value, bool):
        try:
            value, ok = int(value.__index__()), True
        except (TypeError, ValueError):
            ok = False
    if not ok or value < low or (high is not None and value > high):
        span = f"{low}..{high}" if high is not None else f"≥ {low}"
        tail = f" {why}" if why else ""
        raise UserError(f"`{name}` must be a whole number {span}, got {value!r}.{tail}")
    return int(value)


def check_number(
    value: Any,
    name: str,
    low: float | None = None,
    high: float | None = None,
    *,
    low_open: bool = False,
    why: str = "",
) -> float:
    """``value`` as a finite float in the given range; a :class:`UserError` naming ``name`` otherwise.

    Parameters
    ----------
    low, high : float, optional
        Bounds (inclusive; ``low_open`` makes the lower bound exclusive).
    """
    try:
        v = float(value) if not isinstance(value, bool) else math.nan
    except (TypeError, ValueError):
        v = math.nan
    bad = not math.isfinite(v)
    bad = bad or (low is not None and (v <= low if low_open else v < low))
    bad = bad or (high is not None and v > high)
    if bad:
        if low is not None and high is not None:
            span = f"in {'(' if low_open else '['}{low:g}, {high:g}]"
        elif low is not None:
            span = f"{'>' if low_open else '≥'} {low:g}"
        elif high is not None:
            span = f"≤ {high:g}"
        else:
            span = "finite"
        tail = f" {why}" if why else ""
        raise UserError(f"`{name}` must be a number {span}, got {value!r}.{tail}")
    return v
