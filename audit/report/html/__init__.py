"""The HTML report: the same content as the terminal and Markdown reports, with charts, in one file.

:func:`html_page` builds any result's report (:func:`audit.report.sections.build_report`),
draws its charts (:func:`audit.report.charts.charts_for`) and lays both out as
one self-contained page (:mod:`.page`): inline style, inline SVG, nothing
fetched when it is viewed, so it can be sent as it is. :func:`html_fragment`
is the same report as one element, for a notebook's display.
"""

from __future__ import annotations

import hashlib
import json
from typing import Any

from ...version import __version__
from ..charts import charts_for
from ..sections import build_report
from .page import fragment, page

__all__ = ["GENERATOR", "html_fragment", "html_page"]

#: The page's generator mark (``<meta name="generator">``); netdim refuses to overwrite other HTML files.
GENERATOR = f"netdim {__version__}"


def _prefix(result: Any, report_title: str) -> str:
    """A short id prefix, the same for the same report (so a page is reproducible), apart for different ones.

    The design (seed, points, evaluations, time) takes part, so that two runs on the same model shown in one
    notebook keep their section links and chart ids apart.
    """
    design = json.dumps(getattr(result, "design", None) or {}, sort_keys=True, default=str)
    text = f"{getattr(result, 'kind', 'audit')}|{report_title}|{design}"
    return "nd" + hashlib.sha256(text.encode()).hexdigest()[:6]


def _options(result: Any, options: dict[str, Any]) -> dict[str, Any]:
    if getattr(result, "kind", "audit") == "audit":
        options.setdefault("all_outputs", True)  # a page has room for every output
    return options


def _charts(result: Any, report: Any, prefix: str) -> list[Any]:
    """The charts of the sections ``report`` shows (charts of sections left out are not drawn)."""
    return charts_for(result, prefix, {s.title for s in report.sections if s.title})


def html_page(result: Any, **options: Any) -> str:
    """Any result's report as one self-contained HTML page with its charts.

    Parameters
    ----------
    result : AuditResult, ComparisonResult or AdviceResult
        What to show.
    **options
        As for :func:`audit.report.renderable`; audits rank the inputs of
        every output by default (``all_outputs=True``).

    Returns
    -------
    str
        An HTML5 document (UTF-8) ending in a newline.

    Example
    -------
    >>> from pathlib import Path
    >>> Path("report.html").write_text(html_page(result), encoding="utf-8")  # doctest: +SKIP
    """
    report = build_report(result, **_options(result, options))
    prefix = _prefix(result, report.title)
    return page(report, _charts(result, report, prefix), prefix, GENERATOR)


def html_fragment(result: Any, **options: Any) -> str:
    """Any result's report with its charts as one ``<div>`` (style sheet included), for a notebook.

    It shows what the terminal shows (for an audit, the inputs of the first
    few outputs unless ``all_outputs=True``), so that a notebook cell stays quick.
    """
    report = build_report(result, **options)
    prefix = _prefix(result, report.title)
    return fragment(report, _charts(result, report, prefix), prefix)
