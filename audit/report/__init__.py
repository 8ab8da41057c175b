"""Reports of netdim results: terminal (rich), Markdown, and a progress bar.

The report layer reads :mod:`audit.results` only; it never imports Torch or
onnxruntime.
"""

from __future__ import annotations

from .findings import CAUTION, Finding, derive_findings, fmt, fmt_interval
from .markdown import audit_markdown
from .progress import RunProgress
from .terminal import make_console, render_audit, renderable

__all__ = [
    "CAUTION",
    "Finding",
    "RunProgress",
    "audit_markdown",
    "derive_findings",
    "fmt",
    "fmt_interval",
    "make_console",
    "render_audit",
    "renderable",
]
