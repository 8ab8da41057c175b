"""Each report kind's content as a :class:`~audit.report.document.Report`.

:func:`build_report` picks the builder by the result's ``kind``:
:func:`~audit.report.sections.audit.audit_report`,
:func:`~audit.report.sections.comparison.comparison_report` and
:func:`~audit.report.sections.advice.advice_report`. Sections produce
Unicode text and plain data only; renderers lay them out. Every report is
finished by :func:`audit.report.terms.explain` (ν named at first mention, the
legend of the terms used).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..document import Report
from ..terms import explain
from .advice import advice_report
from .audit import audit_report
from .comparison import comparison_report
from .simplified import simplified_report
from .slopes import slopes_report

__all__ = [
    "AUDIT_OPTIONS",
    "advice_report",
    "audit_report",
    "build_report",
    "check_options",
    "comparison_report",
    "simplified_report",
    "slopes_report",
]

#: Options of :func:`audit_report`; other kinds accept them and ignore them.
AUDIT_OPTIONS = frozenset({"all_outputs", "threshold", "max_outputs"})


def check_options(options: Mapping[str, Any]) -> None:
    """Raise ``TypeError`` for an option no report knows (see :data:`AUDIT_OPTIONS`)."""
    unknown = set(options) - AUDIT_OPTIONS
    if unknown:
        raise TypeError(f"unknown report option(s): {', '.join(sorted(unknown))}")


def build_report(result: Any, **options: Any) -> Report:
    """The content of any result's report.

    Parameters
    ----------
    result : AuditResult, ComparisonResult or AdviceResult
        The result; its ``kind`` picks the report (a result without one is an audit).
    **options
        ``all_outputs``, ``threshold``, ``max_outputs`` for audits (see
        :func:`~audit.report.sections.audit.audit_report`); other kinds
        accept and ignore them.

    Returns
    -------
    Report
        With "mean dimension ν" named at its first mention in every section
        and closed by the legend of the terms it uses (:func:`audit.report.terms.explain`).

    Raises
    ------
    TypeError
        For an option no report knows, or a result without a report (a model signature).
    """
    check_options(options)
    kind = getattr(result, "kind", "audit")
    if kind == "audit":
        return explain(audit_report(result, **options))
    if kind == "comparison":
        return explain(comparison_report(result))
    if kind == "advice":
        return explain(advice_report(result))
    if kind == "simplified":
        return explain(simplified_report(result))
    if kind == "slopes":
        shown = {k: v for k, v in options.items() if k in ("all_outputs", "max_outputs")}
        return explain(slopes_report(result, **shown))
    raise TypeError(f"no report for a result of kind {kind!r}")
