"""Findings: what a report's numbers suggest, in plain words (the rules, no layout).

:mod:`~audit.report.findings.audit`
    Outputs and inputs of an audit (:func:`derive_findings`).
:mod:`~audit.report.findings.layers`
    Hidden layers and units: ν below 1, ν against depth, constant units.
:mod:`~audit.report.findings.advice`
    Pre-integration and freezing (:func:`derive_advice_findings`).
:mod:`~audit.report.findings.comparison`
    Which changes of a comparison are beyond noise.

Every rule is common practice, no source: a reading aid, not a statistical test.
"""

from __future__ import annotations

from .advice import derive_advice_findings
from .audit import DEFAULT_THRESHOLD, derive_findings
from .base import Finding
from .comparison import change_note, excludes_zero

__all__ = [
    "DEFAULT_THRESHOLD",
    "Finding",
    "change_note",
    "derive_advice_findings",
    "derive_findings",
    "excludes_zero",
]
