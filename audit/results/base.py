"""Building blocks of every result: estimates with intervals, JSON helpers, display.

Every number netdim reports is an :class:`Estimate`: a pooled value and a 95 %
Student-t interval over independent randomizations. Results are plain
dataclasses with ``to_dict()`` / ``from_dict()``; the JSON report is
``to_dict()`` written with :func:`json.dump`. ``SCHEMA`` is bumped on any
breaking change of the JSON layout.

Results know nothing of how they are shown. Rich consoles and notebooks ask a
result for ``__rich__``; that goes through the renderer registered with
:func:`set_renderer` (the :mod:`audit` package registers the report layer's),
so the dependency points from the report to the results and never back.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

__all__ = ["SCHEMA", "Displayable", "Estimate", "FeatureEstimate", "set_renderer"]

_RENDERER: Callable[[Any], Any] | None = None


def set_renderer(renderer: Callable[[Any], Any] | None) -> None:
    """Register the function that turns any result into a rich renderable (``None`` to unset)."""
    global _RENDERER
    _RENDERER = renderer


class Displayable:
    """Mix-in: ``__rich__`` through the registered renderer, or a one-line summary without one."""

    def __rich__(self) -> Any:
        if _RENDERER is None:
            return f"{type(self).__name__} (import audit to render it)"
        return _RENDERER(self)


SCHEMA = 1


def _num(x: float | None) -> float | None:
    """JSON-safe float: NaN and infinities become ``None``."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _unnum(x: Any) -> float:
    return math.nan if x is None else float(x)


@dataclass(frozen=True)
class Estimate:
    """A pooled estimate with a confidence interval.

    Attributes
    ----------
    estimate : float
        Mean of the per-randomization values.
    ci_low, ci_high : float
        Ends of the two-sided Student-t interval (``level``) over the
        independent randomizations.
    std_error : float
        Standard error of ``estimate`` (sample sd / sqrt(R)).
    """

    estimate: float
    ci_low: float
    ci_high: float
    std_error: float

    @property
    def width(self) -> float:
        return self.ci_high - self.ci_low

    def covers(self, value: float) -> bool:
        return self.ci_low <= value <= self.ci_high

    def to_dict(self) -> dict[str, Any]:
        return {
            "estimate": _num(self.estimate),
            "ci_low": _num(self.ci_low),
            "ci_high": _num(self.ci_high),
            "std_error": _num(self.std_error),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Estimate:
        return cls(
            _unnum(d["estimate"]),
            _unnum(d["ci_low"]),
            _unnum(d["ci_high"]),
            _unnum(d.get("std_error")),
        )


@dataclass(frozen=True)
class FeatureEstimate:
    """An index of one input feature (normalised by the output's variance)."""

    feature: str
    value: Estimate

    def to_dict(self) -> dict[str, Any]:
        return {"feature": self.feature, **self.value.to_dict()}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> FeatureEstimate:
        return cls(d["feature"], Estimate.from_dict(d))


def _opt_estimate(d: dict[str, Any] | None) -> Estimate | None:
    return None if d is None else Estimate.from_dict(d)


def _opt_dict(e: Estimate | None) -> dict[str, Any] | None:
    return None if e is None else e.to_dict()
