"""Errors a user can cause.

Every mistake a user can make (a bad file, a bad spec, a bad option, a model
that returns non-finite numbers) raises :class:`UserError` with a one-paragraph
message saying what is wrong, where, and how to fix it. The command line prints
that message without a traceback and exits with code 2.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable

__all__ = ["UserError", "suggest"]


class UserError(Exception):
    """A problem the user can fix: bad input, bad file, bad option.

    Parameters
    ----------
    message : str
        One paragraph: what is wrong, where, and how to fix it.
    """

    exit_code = 2

    def __init__(self, message: str) -> None:
        super().__init__(message)
        self.message = message

    def __str__(self) -> str:
        return self.message


def suggest(word: str, choices: Iterable[str]) -> str:
    """Return ``" Did you mean 'x'?"`` for the nearest choice, or ``""``."""
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    return f" Did you mean '{close[0]}'?" if close else ""
