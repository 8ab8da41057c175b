"""``--html PATH``: the report as one self-contained HTML page with charts, next to the JSON.

``audit``, ``compare``, ``advise``, ``demo`` and ``show`` take the option. The
path is checked before any work (:func:`check_html_target`: never the model,
the spec, the checkpoint or the JSON report, never a folder, never a file
that is not a netdim page), and the page is written atomically after the JSON
report (:func:`write_html`), so a failure to write it loses nothing: the
message says how to write it again from the JSON.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..errors import UserError
from .output import check_target

__all__ = ["HTML_HELP", "add_html_option", "check_html_target", "write_html"]

HTML_HELP = "also write the report as one self-contained HTML page with charts there (opens in any browser)"
_MARK = '<meta name="generator" content="netdim'


def add_html_option(group: Any) -> None:
    """Add ``--html PATH`` to a parser or an argument group."""
    group.add_argument("--html", metavar="PATH", help=HTML_HELP)


def _is_page(path: Path) -> bool:
    try:
        with path.open(encoding="utf-8") as f:
            return _MARK in f.read(4096)
    except (OSError, UnicodeDecodeError):
        return False


def check_html_target(path: str | None, protected: list[str | None]) -> None:
    """Refuse, before any work, an ``--html`` path that would overwrite something else than a netdim page.

    Parameters
    ----------
    path : str or None
        The ``--html`` value (nothing to check without one).
    protected : list of str or None
        The run's model, spec, checkpoint and JSON report paths.

    Raises
    ------
    UserError
        When the path is one of ``protected``, a folder, or an existing file
        that netdim did not write.
    """
    check_target("--html", path, protected, _is_page, "HTML report", "reports/run.html")


def write_html(result: Any, args: argparse.Namespace, saved: Path | None = None) -> Path | None:
    """Write the HTML report when ``--html`` was given; return its path (``None`` without the option).

    Parameters
    ----------
    result : AuditResult, ComparisonResult or AdviceResult
        The result.
    args : argparse.Namespace
        The parsed command line (``html``, ``all_outputs``).
    saved : Path, optional
        Where the JSON report went, named in the message if the page cannot be written.

    Raises
    ------
    UserError
        When the page cannot be written; the JSON report is already safe.
    """
    path = getattr(args, "html", None)
    if not path:
        return None
    from .. import report
    from .output import _write_atomic

    text = report.html_page(result)
    try:
        return _write_atomic(Path(path), text)
    except OSError as exc:
        why = exc.strerror or str(exc)
    again = (
        f" The JSON report is saved in '{saved}': `netdim show {saved} --html PATH` writes the page again."
        if saved is not None
        else ""
    )
    raise UserError(f"The HTML report could not be written to '{path}' ({why}).{again} Choose a writable place.")
