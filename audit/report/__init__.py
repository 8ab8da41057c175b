"""Reports of netdim results: terminal (rich), Markdown, and a progress bar.

The report layer reads :mod:`audit.results` only; it never imports Torch or
onnxruntime. :func:`renderable`, :func:`render` and :func:`markdown` take any
result (audit, comparison, advice).
"""

from __future__ import annotations

from typing import Any

from .findings import CAUTION, Finding, derive_findings, fmt, fmt_interval
from .markdown import audit_markdown
from .progress import RunProgress
from .terminal import make_console, render_audit

__all__ = [
    "CAUTION",
    "Finding",
    "RunProgress",
    "audit_markdown",
    "derive_findings",
    "fmt",
    "fmt_interval",
    "make_console",
    "markdown",
    "render",
    "render_audit",
    "renderable",
]


def renderable(result: Any, **options: Any) -> Any:
    """Any result as one rich renderable (``all_outputs`` applies to audits)."""
    kind = getattr(result, "kind", "audit")
    if kind == "comparison":
        from .comparison import renderable as comparison_renderable

        return comparison_renderable(result)
    if kind == "advice":
        from .advice import advice_renderable

        return advice_renderable(result, **{k: v for k, v in options.items() if k == "ascii_only"})
    if kind == "signature":
        from .signature import signature_renderable

        return signature_renderable(result)
    from .terminal import renderable as audit_renderable

    return audit_renderable(result, **options)


def render(result: Any, console: Any, **options: Any) -> None:
    """Print any result on ``console`` (see :func:`make_console`)."""
    kind = getattr(result, "kind", "audit")
    if kind == "comparison":
        from .comparison import render_comparison

        render_comparison(result, console)
    elif kind == "advice":
        from .advice import render_advice

        render_advice(result, console)
    elif kind == "signature":
        from .signature import render_signature

        render_signature(result, console)
    else:
        render_audit(result, console, **options)


def markdown(result: Any, **options: Any) -> str:
    """Any report as Markdown text."""
    kind = getattr(result, "kind", "audit")
    if kind == "comparison":
        from .comparison import comparison_markdown

        return comparison_markdown(result)
    if kind == "advice":
        from .advice import advice_markdown

        return advice_markdown(result)
    return audit_markdown(result, **options)
