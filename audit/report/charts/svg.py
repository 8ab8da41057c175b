"""Figures drawn with matplotlib and written as SVG text for a self-contained page.

Every chart of the HTML report is a :class:`matplotlib.figure.Figure` made
here (:func:`new_figure`: no pyplot, no display, no global state) and turned
into an ``<svg>`` element by :func:`to_svg`. The SVG keeps its text as text
(``svg.fonttype = "none"``: searchable, small), carries no date, creator or
metadata, and its element ids are prefixed with the chart's own key so that
several charts can sit in one page without clashing; it references nothing
outside itself (rasters, such as heat maps, are embedded as ``data:`` URIs).

Names read from files are drawn as plain text: control characters as escapes
(:func:`audit.report.text.visible`), ``$`` never read as mathematics, and
long names shortened in the middle (:func:`label`).

Grey-scale rule: no chart tells two things apart by hue alone. Series differ
in lightness (:data:`INK`, :data:`MID`, :data:`LIGHT`), hatching or marker
shape; colour maps are sequential with lightness rising monotonically.
"""

from __future__ import annotations

import functools
import io
import re
from collections.abc import Callable
from typing import Any, TypeVar

from ..text import shorten, visible

__all__ = ["COLOUR_MAP", "INK", "LABEL_LIMIT", "LIGHT", "MID", "RC", "label", "new_figure", "style", "styled", "to_svg"]

INK = "#1b1b1b"
MID = "#6e6e6e"
LIGHT = "#c9c9c9"
#: Sequential colour map whose lightness rises monotonically (readable in grey-scale).
COLOUR_MAP = "viridis"
#: Longest label drawn on an axis (cells); longer names are shortened in the middle.
LABEL_LIMIT = 30

#: matplotlib settings of every chart.
RC: dict[str, Any] = {
    "svg.fonttype": "none",
    "svg.hashsalt": "netdim",
    "text.parse_math": False,
    "font.family": "sans-serif",
    "font.size": 9.0,
    "axes.titlesize": 9.5,
    "axes.labelsize": 9.0,
    "axes.edgecolor": MID,
    "axes.labelcolor": INK,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "xtick.color": INK,
    "ytick.color": INK,
    "hatch.color": MID,
    "hatch.linewidth": 0.6,
    "legend.frameon": False,
    "legend.fontsize": 8.5,
    "image.cmap": COLOUR_MAP,
}

_HEADER = re.compile(r"^.*?(?=<svg)", re.S)
_METADATA = re.compile(r"\s*<metadata>.*?</metadata>", re.S)
_STYLE = re.compile(r"\s*<style type=\"text/css\">.*?</style>", re.S)
_IDS = re.compile(r'(\sid=")([^"]+)(")')
_REFS = re.compile(r'((?:xlink:)?href="#|url\(#)([^")]+)')
_KEY = re.compile(r"[^A-Za-z0-9_-]+")


def label(name: str, limit: int = LABEL_LIMIT) -> str:
    """``name`` safe and short enough for an axis: escapes shown, the middle cut with ``…`` beyond ``limit``."""
    return shorten(visible(str(name)), limit)


def new_figure(width: float, height: float) -> Any:
    """A matplotlib figure of ``width`` × ``height`` inches, laid out to fit its labels.

    Draw on it inside :func:`style`, so that its axes take the report's settings.

    Parameters
    ----------
    width, height : float
        Size in inches (a page shows about 96 CSS pixels per inch).

    Returns
    -------
    matplotlib.figure.Figure
        Not attached to pyplot: it is collected like any object.
    """
    from matplotlib.figure import Figure

    with style():
        return Figure(figsize=(width, height), layout="constrained")


def style() -> Any:
    """A context in which matplotlib uses :data:`RC` (and nothing else changes outside it)."""
    import matplotlib

    return matplotlib.rc_context(RC)


_F = TypeVar("_F", bound=Callable[..., Any])


def styled(func: _F) -> _F:
    """Decorator: ``func`` draws its charts inside :func:`style`."""

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        with style():
            return func(*args, **kwargs)

    return wrapper  # type: ignore[return-value]


def to_svg(figure: Any, key: str) -> str:
    """``figure`` as one ``<svg>`` element for an HTML page.

    Parameters
    ----------
    figure : matplotlib.figure.Figure
        A figure from :func:`new_figure`.
    key : str
        Unique within the page; every element id (and every reference to one)
        is prefixed with it.

    Returns
    -------
    str
        The SVG element, without XML declaration, doctype or metadata; it
        scales with the page up to its drawn width (class ``chart-image``);
        ids prefixed by ``key``.
    """
    prefix = _KEY.sub("-", key).strip("-") or "chart"
    buffer = io.StringIO()
    with style():
        figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None, "Format": None, "Type": None})
    text = _HEADER.sub("", buffer.getvalue(), count=1)
    text = _METADATA.sub("", text)
    text = _STYLE.sub("", text)
    text = _IDS.sub(lambda m: f"{m.group(1)}{prefix}-{m.group(2)}{m.group(3)}", text)
    text = _REFS.sub(lambda m: f"{m.group(1)}{prefix}-{m.group(2)}", text)
    text = re.sub(
        r'<svg ([^>]*?)width="([0-9.]+)pt" height="[0-9.]+pt"',
        r'<svg \1class="chart-image" style="max-width: \2pt" role="img"',
        text,
        count=1,
    )
    return text.strip()
