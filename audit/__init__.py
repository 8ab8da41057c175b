"""netdim: audit trained models by their ANOVA structure.

Mean dimension and Sobol' indices of every output and hidden unit, with
confidence intervals from randomized quasi-Monte Carlo.

The names below are loaded on first use, so that ``import audit`` (and the
command line's start-up) does not pay for scipy, onnx or torch until a study
needs them.
"""

from __future__ import annotations

import importlib
from typing import Any

from .results.base import set_renderer
from .version import __version__ as __version__

#: Public name -> module that defines it.
_EXPORTS = {
    "AdviceResult": "audit.results",
    "AuditResult": "audit.results",
    "ComparisonResult": "audit.results",
    "Design": "audit.design",
    "DesignOptions": "audit.studies",
    "RunOptions": "audit.studies",
    "SlopesResult": "audit.results",
    "Estimate": "audit.results",
    "FeatureEstimate": "audit.results",
    "Gates": "audit.studies",
    "InputSpec": "audit.inputs",
    "Law": "audit.inputs",
    "LayerResult": "audit.results",
    "OutputResult": "audit.results",
    "PreIntegrated": "audit.quadrature",
    "UnitResult": "audit.results",
    "UserError": "audit.errors",
    "advise_function": "audit.studies",
    "advise_model": "audit.studies",
    "audit_function": "audit.studies",
    "audit_model": "audit.studies",
    "compare_models": "audit.studies",
    "load_spec": "audit.inputs",
    "open_model": "audit.models.open",
    "parse_spec": "audit.inputs",
    "SimplifiedResult": "audit.results",
    "simplify_model": "audit.studies",
    "slopes_model": "audit.studies.slopes",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name not in _EXPORTS:
        raise AttributeError(f"module 'audit' has no attribute {name!r}")
    value = getattr(importlib.import_module(_EXPORTS[name]), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted([*globals(), *_EXPORTS])


def _render(result: Any) -> Any:
    """Results shown in a rich console: the report layer's renderable."""
    from .report import renderable

    return renderable(result)


def _html(result: Any) -> str:
    """Results shown in a notebook: the HTML report, charts included."""
    from .report import html_fragment

    return html_fragment(result)


def _summary(result: Any) -> str:
    """``repr`` of a result: a few lines."""
    from .report import summary

    return summary(result)


set_renderer(_render, html=_html, summary=_summary)
