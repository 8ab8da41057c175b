"""Result objects of netdim studies and their JSON form.

The report layer renders these objects and nothing else; they import nothing
from it (see :mod:`audit.results.base` for how they are displayed).
"""

from __future__ import annotations

from typing import Any

from .advice import (
    AdviceResult,
    Candidate,
    FreezeGroup,
    FreezeItem,
    GainRow,
    OutputAdvice,
    RqmcGain,
    VarianceIdentity,
)
from .audit import AuditResult, LayerResult, OutputResult, PairEstimate, UnitResult
from .base import SCHEMA, Estimate, FeatureEstimate, set_renderer
from .comparison import ComparisonResult, GateCheck, LayerChange, OutputChange
from .signature import LayerEntry, ModelSignature, TensorEntry
from .simplified import OutputShift, SimplifiedResult
from .slopes import SlopesResult

__all__ = [
    "KINDS",
    "SCHEMA",
    "AdviceResult",
    "AuditResult",
    "Candidate",
    "ComparisonResult",
    "Estimate",
    "FeatureEstimate",
    "FreezeGroup",
    "FreezeItem",
    "GainRow",
    "GateCheck",
    "LayerChange",
    "LayerEntry",
    "LayerResult",
    "ModelSignature",
    "OutputAdvice",
    "OutputChange",
    "OutputResult",
    "OutputShift",
    "PairEstimate",
    "RqmcGain",
    "SimplifiedResult",
    "SlopesResult",
    "TensorEntry",
    "UnitResult",
    "VarianceIdentity",
    "result_from_dict",
    "set_renderer",
]

#: Report kinds (the JSON ``"kind"``) and their classes.
KINDS = {
    "audit": AuditResult,
    "comparison": ComparisonResult,
    "advice": AdviceResult,
    "simplified": SimplifiedResult,
    "slopes": SlopesResult,
}


def result_from_dict(data: Any) -> AuditResult | ComparisonResult | AdviceResult | SimplifiedResult | SlopesResult:
    """Rebuild any saved report from its JSON object.

    Raises
    ------
    ValueError
        When ``data`` is not a netdim report this version can read (the reason is in the message).
    """
    if not isinstance(data, dict):
        raise ValueError(f"a report is a JSON object, got {type(data).__name__}")
    kind = data.get("kind", "audit")
    if kind not in KINDS:
        raise ValueError(f"unknown report kind {kind!r}; known kinds: {', '.join(KINDS)}")
    try:
        return KINDS[kind].from_dict(data)
    except (KeyError, TypeError, AttributeError, IndexError) as exc:
        what = f"missing {exc}" if isinstance(exc, KeyError) else f"{type(exc).__name__}: {exc}"
        raise ValueError(f"the {kind} report is incomplete or malformed ({what})") from exc
