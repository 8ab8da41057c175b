"""Building blocks of every result: estimates with intervals, JSON helpers, display.

Every number netdim reports is an :class:`Estimate`: a pooled value and a 95 %
Student-t interval over independent randomizations. Results are plain
dataclasses with ``to_dict()`` / ``from_dict()``; the JSON report is
``to_dict()`` written with :func:`json.dump`. ``SCHEMA`` is bumped on any
breaking change of the JSON layout.

Results know nothing of how they are shown. Rich consoles ask a result for
``__rich__``, notebooks for ``_repr_html_``, and ``repr`` gives a summary of a
few lines; each goes through the functions registered with
:func:`set_renderer` (the :mod:`audit` package registers the report layer's),
so the dependency points from the report to the results and never back.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

__all__ = [
    "SCHEMA",
    "Displayable",
    "Estimate",
    "FeatureEstimate",
    "check_header",
    "first_order_position",
    "position",
    "set_renderer",
]

_RENDERER: Callable[[Any], Any] | None = None
_HTML: Callable[[Any], str] | None = None
_SUMMARY: Callable[[Any], str] | None = None


def set_renderer(
    renderer: Callable[[Any], Any] | None,
    *,
    html: Callable[[Any], str] | None = None,
    summary: Callable[[Any], str] | None = None,
) -> None:
    """Register how results are shown (``None`` unsets).

    Parameters
    ----------
    renderer : callable or None
        Any result -> a rich renderable (``__rich__``).
    html : callable, optional
        Any result -> an HTML fragment (``_repr_html_``, a notebook's display).
    summary : callable, optional
        Any result -> a few lines of text (``repr``).
    """
    global _RENDERER, _HTML, _SUMMARY
    _RENDERER, _HTML, _SUMMARY = renderer, html, summary


class Displayable:
    """Mix-in: ``__rich__``, ``_repr_html_`` and a short ``repr`` through the registered functions.

    Without them, ``__rich__`` and ``repr`` are one line and ``_repr_html_``
    is ``None`` (a notebook then shows the ``repr``). Result classes declare
    ``@dataclass(repr=False)`` so that this ``repr`` is theirs.
    """

    def __rich__(self) -> Any:
        if _RENDERER is None:
            return f"{type(self).__name__} (import audit to render it)"
        return _RENDERER(self)

    def _repr_html_(self) -> str | None:
        return None if _HTML is None else _HTML(self)

    def __repr__(self) -> str:
        if _SUMMARY is None:
            outputs = getattr(self, "outputs", [])
            return f"<{type(self).__name__}: {len(outputs)} outputs (import audit for a summary)>"
        return _SUMMARY(self)


SCHEMA = 1


def check_header(d: dict[str, Any], kind: str | None = None, noun: str = "") -> None:
    """Refuse a dict that is not a netdim report of this schema (and, with ``kind``, of that kind)."""
    if d.get("tool") != "netdim":
        raise ValueError('not a netdim report (missing "tool": "netdim")')
    if d.get("schema") != SCHEMA:
        raise ValueError(f"report schema {d.get('schema')!r} is not supported (expected {SCHEMA})")
    if kind is not None and d.get("kind") != kind:
        article = "an" if noun[:1] in "aeiou" else "a"
        raise ValueError(f"not {article} {noun} report (kind {d.get('kind')!r}, expected {kind!r})")


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


def position(e: Estimate, low: float, high: float) -> str:
    """Where ``e`` lies against its possible range [low, high].

    ``"inside"`` the range; outside it, ``"noise"`` when the 95 % interval reaches
    back into the range (sampling noise), else ``"beyond"`` (more than noise).
    Estimates that are not finite are ``"inside"`` (nothing to say); without a
    finite interval an estimate outside the range is ``"beyond"``.
    """
    x = e.estimate
    if not math.isfinite(x) or low <= x <= high:
        return "inside"
    if math.isfinite(e.ci_low) and math.isfinite(e.ci_high) and e.ci_low <= high and e.ci_high >= low:
        return "noise"
    return "beyond"


def first_order_position(e: Estimate, total: Estimate | None) -> str:
    """:func:`position` of a first-order index in [0, 1], and at or below the total index of its input
    (``"noise"`` when its interval reaches the total's)."""
    where = position(e, 0.0, 1.0)
    if where == "inside" and total is not None and math.isfinite(total.estimate) and e.estimate > total.estimate:
        reach = total.ci_high if math.isfinite(total.ci_high) else total.estimate
        where = "noise" if math.isfinite(e.ci_low) and e.ci_low <= reach else "beyond"
    return where
