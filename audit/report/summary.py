"""A result in a few lines: what a bare result shows as its ``repr`` (a notebook cell's last line, a shell).

The whole report is a display away (a rich console or a notebook renders it,
:func:`audit.report.renderable`, :func:`audit.report.html_fragment`); the
summary names the kind, the model, the size of the run and, per output (at
most :data:`SUMMARY_OUTPUTS`), its mean dimension ν with its interval and
what moved or what is advised.
"""

from __future__ import annotations

from typing import Any

from .describe import describe_model
from .text import fmt, fmt_count, fmt_duration, fmt_interval, listing

__all__ = ["SUMMARY_OUTPUTS", "summary"]

#: Outputs listed in a summary; the rest are counted.
SUMMARY_OUTPUTS = 3
_HINT = "  (display it in a notebook or rich console for the report; .to_dict() gives the JSON)"


def _nu(o: Any) -> str:
    if o.inert or o.mean_dimension is None:
        return "inert (constant)"
    nu = o.mean_dimension
    return f"mean dimension ν {fmt(nu.estimate)} {fmt_interval(nu.ci_low, nu.ci_high)}"


def _run(design: dict[str, Any]) -> str:
    parts = []
    if "points" in design and "replicates" in design:
        parts.append(f"N = {fmt_count(design['points'])} points × R = {fmt_count(design['replicates'])}")
    if "evaluations" in design:
        parts.append(f"{fmt_count(design['evaluations'])} evaluations")
    if design.get("seconds") is not None:
        parts.append(f"in {fmt_duration(design['seconds'])}")
    if design.get("seed") is not None:
        parts.append(f"seed {design['seed']}")
    return "  " + ", ".join(parts) if parts else ""


def _more(n: int) -> list[str]:
    return [f"  … {n} more output{'s' if n != 1 else ''}"] if n > 0 else []


def _audit_lines(result: Any) -> list[str]:
    layers = f", {len(result.layers)} hidden layer{'s' if len(result.layers) != 1 else ''}" if result.layers else ""
    lines = [f"AuditResult of {describe_model(result.model)}: {len(result.inputs)} inputs, "
             f"{len(result.outputs)} outputs{layers}"]
    lines.append(_run(result.design or {}))
    for o in result.outputs[:SUMMARY_OUTPUTS]:
        leading = ", ".join(f.feature for f in o.ranked()[:3])
        lines.append(f"  {o.name}: {_nu(o)}" + (f"; leading {leading}" if leading and not o.inert else ""))
    return lines + _more(len(result.outputs) - SUMMARY_OUTPUTS)


def _comparison_lines(result: Any) -> list[str]:
    gates = (f"gates {'passed' if result.passed else 'FAILED'} ({len(result.gates)})" if result.gates
             else "no gates set")
    lines = [f"ComparisonResult of {describe_model(result.old_model)} → {describe_model(result.new_model)}: "
             f"{len(result.outputs)} outputs, {gates}"]
    lines.append(_run(result.design or {}))
    for o in result.outputs[:SUMMARY_OUTPUTS]:
        e = o.mean_dimension_change
        change = "n/a" if e is None else f"{fmt(e.estimate, 3)} {fmt_interval(e.ci_low, e.ci_high)}"
        moved = f"; moved: {listing(o.moved, 3)}" if o.moved else ""
        lines.append(f"  {o.name}: change of mean dimension ν {change}{moved}")
    return lines + _more(len(result.outputs) - SUMMARY_OUTPUTS)


def _advice_lines(result: Any) -> list[str]:
    lines = [f"AdviceResult for {describe_model(result.model)}: {len(result.outputs)} outputs"]
    lines.append(_run(result.design or {}))
    for o in result.outputs[:SUMMARY_OUTPUTS]:
        parts = [_nu(o.audit)]
        best = o.best
        if best is not None and best.mean_dimension_after is not None:
            parts.append(f"pre-integrate {best.feature} (ν after {fmt(best.mean_dimension_after.estimate)})")
        if o.freeze_group is not None:
            parts.append(f"freeze {listing(o.freeze_group.features, 3)}")
        lines.append(f"  {o.name}: " + "; ".join(parts))
    return lines + _more(len(result.outputs) - SUMMARY_OUTPUTS)


def summary(result: Any) -> str:
    """``result`` in a few lines (a header, the run, one line per output, at most :data:`SUMMARY_OUTPUTS`).

    Parameters
    ----------
    result : AuditResult, ComparisonResult or AdviceResult
        The result.

    Returns
    -------
    str
        Lines without a final newline, the last saying how to see the whole report.
    """
    kind = getattr(result, "kind", "audit")
    if kind == "comparison":
        lines = _comparison_lines(result)
    elif kind == "advice":
        lines = _advice_lines(result)
    else:
        lines = _audit_lines(result)
    return "\n".join(line for line in [*lines, _HINT] if line)
