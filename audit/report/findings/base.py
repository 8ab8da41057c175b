"""What every finding is: a kind, a sentence, the subjects it is about, suggested commands."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ...results import AuditResult, Estimate, OutputResult
from ..text import finite

__all__ = ["Finding", "active_outputs", "relative_half_width"]


@dataclass(frozen=True)
class Finding:
    """One plain-language observation.

    Attributes
    ----------
    kind : str
        What the finding is about; each rule module lists its kinds.
    text : str
        The sentence(s) shown to the user.
    subjects : tuple of str
        Outputs, inputs or layers the finding is about.
    commands : tuple of str
        Command lines suggested as the next step (shown on lines of their own).
    """

    kind: str
    text: str
    subjects: tuple[str, ...] = ()
    commands: tuple[str, ...] = ()


def active_outputs(result: AuditResult) -> list[OutputResult]:
    """Outputs that vary (not inert, with a mean dimension) and are not an exact function of earlier ones."""
    return [o for o in result.outputs if not o.inert and o.mean_dimension is not None and not o.relation]


def relative_half_width(e: Estimate | Any) -> float:
    """Half the width of ``e``'s interval over ``|estimate|``; NaN without a finite interval."""
    if not (finite(e.ci_low) and finite(e.ci_high) and finite(e.estimate)) or e.estimate == 0:
        return math.nan
    return 0.5 * (e.ci_high - e.ci_low) / abs(e.estimate)
