"""What every chart is: a title in words, a caption saying how to read it, the SVG, and where it goes."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from ...results import Estimate
from ..text import finite

__all__ = ["Chart", "error_bars", "finite_or_zero"]


@dataclass(frozen=True)
class Chart:
    """One picture of the HTML report.

    Attributes
    ----------
    key : str
        Unique within a page (it prefixes the SVG's element ids and names the figure).
    title : str
        What the chart shows, in words.
    caption : str
        How to read it: what bars, marks and lines stand for.
    svg : str
        The ``<svg>`` element (:func:`audit.report.charts.svg.to_svg`).
    section : str
        Title of the report section the chart belongs to; "" for a section of its own.
    shape : tuple of int
        The grid a heat map is drawn in (rows, columns); empty for other charts.
    heading : str
        The heading inside the section the chart follows ("": before the section's first table).
    """

    key: str
    title: str
    caption: str
    svg: str
    section: str = ""
    shape: tuple[int, ...] = ()
    heading: str = ""


def finite_or_zero(x: float) -> float:
    """``x`` when finite, else 0 (for drawing only: a missing value draws nothing visible)."""
    return float(x) if finite(x) else 0.0


def error_bars(estimates: Sequence[Estimate]) -> tuple[list[float], list[list[float]]]:
    """Centres and ``[below, above]`` lengths of 95 % intervals for matplotlib's ``xerr`` / ``yerr``.

    An interval missing an end draws no bar (length 0); the centre is the estimate.
    """
    centres, below, above = [], [], []
    for e in estimates:
        c = finite_or_zero(e.estimate)
        ok = finite(e.ci_low) and finite(e.ci_high)
        centres.append(c)
        below.append(max(0.0, c - e.ci_low) if ok else 0.0)
        above.append(max(0.0, e.ci_high - c) if ok else 0.0)
    return centres, [below, above]
