"""Reports of netdim results: terminal (rich), Markdown, HTML with charts, a summary, and a progress bar.

Every result (an audit, a comparison of two models, an advise run) is first
turned into plain content, a :class:`~audit.report.document.Report`
(:func:`build_report`); one renderer lays out any report for the terminal
(:mod:`audit.report.terminal`), one writes it as Markdown
(:mod:`audit.report.markdown`), one as a self-contained HTML page with
matplotlib charts (:mod:`audit.report.html`, :mod:`audit.report.charts`;
matplotlib is imported only then). :func:`summary` is a few lines for a
result's ``repr``. A model signature (``netdim layers``) has a
renderer of its own (:mod:`audit.report.signature`).

The report layer reads :mod:`audit.results` only; it never imports Torch,
onnxruntime, the models, the engine, the estimators or the studies.

Names read from files are shown safely everywhere (control characters as
escapes, no markup interpreted), and consoles that cannot encode Unicode get
ASCII; both are decided when a report is printed.
"""

from __future__ import annotations

from typing import Any

from rich.console import Console, RenderableType

from .document import Report
from .markdown import to_markdown
from .progress import RunProgress
from .sections import build_report, check_options
from .summary import summary
from .terminal import make_console, to_renderable
from .text import CAUTION
from .widgets import AsciiOnly

__all__ = [
    "CAUTION",
    "Report",
    "RunProgress",
    "build_report",
    "html_fragment",
    "html_page",
    "make_console",
    "markdown",
    "render",
    "renderable",
    "summary",
]


def renderable(result: Any, *, ascii_only: bool = False, **options: Any) -> RenderableType:
    """Any result as one rich renderable.

    Parameters
    ----------
    result : AuditResult, ComparisonResult, AdviceResult or ModelSignature
        What to show (its ``kind`` picks the report).
    ascii_only : bool, optional
        ASCII stand-ins even on a console that can encode Unicode (they are
        used anyway on one that cannot).
    **options
        ``all_outputs``, ``threshold``, ``max_outputs`` for audits (see
        :func:`audit.report.sections.audit.audit_report`); other kinds
        accept and ignore them.

    Returns
    -------
    rich renderable
        Laid out for the console's width and encoding when printed; suitable
        as a ``__rich__`` hook.
    """
    if getattr(result, "kind", "audit") == "signature":
        from .signature import signature_renderable

        check_options(options)
        view: RenderableType = signature_renderable(result)
    else:
        view = to_renderable(build_report(result, **options))
    return AsciiOnly(view) if ascii_only else view


def render(result: Any, console: Console, **options: Any) -> None:
    """Print any result on ``console``.

    Parameters
    ----------
    result : AuditResult, ComparisonResult, AdviceResult or ModelSignature
        What to show.
    console : rich.console.Console
        Where to print (see :func:`make_console`); the layout follows its
        width, and ASCII stand-ins are used when its encoding is not UTF.
    **options
        As for :func:`renderable`.
    """
    if getattr(result, "kind", "audit") == "signature":
        from .signature import render_signature

        render_signature(result, console)
        return
    console.print(renderable(result, **options))


def markdown(result: Any, **options: Any) -> str:
    """An audit, comparison or advice report as Markdown text.

    Parameters
    ----------
    result : AuditResult, ComparisonResult or AdviceResult
        What to export.
    **options
        As for :func:`renderable`, except that audits rank the inputs of every
        output by default (``all_outputs=True``: a file has room).

    Returns
    -------
    str
        Markdown ending in a newline, closing with the caution.
    """
    if getattr(result, "kind", "audit") in ("audit", "slopes"):
        options.setdefault("all_outputs", True)
    return to_markdown(build_report(result, **options))


def html_page(result: Any, **options: Any) -> str:
    """An audit, comparison or advice report as one self-contained HTML page with charts.

    Parameters
    ----------
    result : AuditResult, ComparisonResult or AdviceResult
        What to show.
    **options
        As for :func:`renderable`, except that audits rank the inputs of every
        output by default (``all_outputs=True``).

    Returns
    -------
    str
        An HTML5 document: inline style and SVG charts, nothing loaded from
        elsewhere; it closes with the caution.
    """
    from .html import html_page as page

    return page(result, **options)


def html_fragment(result: Any, **options: Any) -> str:
    """The HTML report as one element with its style sheet, for a notebook's ``_repr_html_``."""
    from .html import html_fragment as fragment

    return fragment(result, **options)
