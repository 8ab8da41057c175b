"""What a comparison's numbers say: which changes are beyond noise, and the note explaining the marks.

The rule (common practice, no source): a change is beyond noise when its
95 % interval excludes 0. With paired points both models see the same
randomizations, so the interval is that of the paired differences.
"""

from __future__ import annotations

from ...results import ComparisonResult, Estimate

__all__ = ["MARK", "change_note", "excludes_zero"]

#: Appended to a change whose interval excludes 0.
MARK = "*"


def excludes_zero(e: Estimate) -> bool:
    """True when the interval of the change ``e`` lies wholly above or below 0."""
    return e.ci_low > 0 or e.ci_high < 0


def change_note(result: ComparisonResult) -> str | None:
    """The note explaining :data:`MARK` and ``±`` under the tables, or ``None`` when no change is shown."""
    if not (any(o.moved for o in result.outputs) or any(o.mean_dimension_change for o in result.outputs)):
        return None
    how = "paired over randomizations" if result.design.get("paired", True) else "independent points"
    return f"{MARK} the 95 % interval of the change excludes 0 ({how}); ± is its half-width."
