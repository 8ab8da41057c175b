"""What a comparison's numbers say: which changes count, and the note explaining the marks.

The rule (common practice, no source): a change counts when its 95 % interval
lies wholly beyond the tolerance of its gate — it excludes 0 and exceeds the
minimum size even at its end nearest 0. With paired points both models see the
same randomizations, so the interval is that of the paired differences. The
tolerances are the comparison's own (recorded in its design); a report without
them falls back to "the interval excludes 0".
"""

from __future__ import annotations

from ...results import ComparisonResult, Estimate

__all__ = ["MARK", "change_note", "counts", "excludes_zero", "tolerance"]

#: Appended to a change whose interval excludes 0.
MARK = "*"


def excludes_zero(e: Estimate) -> bool:
    """True when the interval of the change ``e`` lies wholly above or below 0."""
    return e.ci_low > 0 or e.ci_high < 0


def tolerance(result: ComparisonResult, gate: str) -> float:
    """The tolerance of ``gate`` in this comparison (0 when off or not recorded), at least the rounding floor."""
    gates = result.design.get("gates") or {}
    value = gates.get(gate)
    floor = float(result.design.get("rounding_floor") or 0.0)
    return max(float(value) if isinstance(value, int | float) else 0.0, floor)


def counts(e: Estimate, tol: float) -> bool:
    """True when the interval of the change ``e`` lies wholly beyond ``±tol``."""
    return e.ci_low > tol or e.ci_high < -tol


def change_note(result: ComparisonResult) -> str | None:
    """The note explaining :data:`MARK` and ``±`` under the tables, or ``None`` when no change is shown."""
    if not (any(o.moved for o in result.outputs) or any(o.mean_dimension_change for o in result.outputs)):
        return None
    how = "paired over randomizations" if result.design.get("paired", True) else "independent points"
    gates = result.design.get("gates")
    if not gates:
        return f"{MARK} the 95 % interval of the change excludes 0 ({how}); ± is its half-width."
    parts = [f"ν ±{tolerance(result, 'mean_dimension'):.3g}", f"total index ±{tolerance(result, 'total_index'):.3g}",
             f"layer ν ±{tolerance(result, 'layer_mean_dimension'):.3g}"]  # fmt: skip
    return (
        f"{MARK} the 95 % interval of the change ({how}) lies wholly beyond the tolerance of its gate "
        f"({', '.join(parts)}): it counts as a change; ± is the interval's half-width."
    )
