"""The empirical law: the quantile function of data, piecewise linear between order statistics.

With sorted data x_(1) ≤ … ≤ x_(m) at probability levels 0 = p_1 < … < p_m = 1
(evenly spaced by default, p_i = (i − 1)/(m − 1)), the inverse CDF is the line
through (p_i, x_(i)) and (p_{i+1}, x_(i+1)) on each [p_i, p_{i+1}]: what
``numpy.quantile(data, u)`` computes with its default (linear) method. The law
puts mass p_{i+1} − p_i uniformly on [x_(i), x_(i+1)] (a point mass where two
order statistics tie), so its support is [min, max] of the data and its CDF is
piecewise linear. Its Gauss rule is the law's own: the panels are written
exactly as Gauss–Legendre points (m per panel) and reduced to an m-point rule
by :func:`audit.inputs.gauss.gauss_rule`.

Knots can be the whole sorted data or quantiles of it (``levels`` then gives
their probabilities).
"""

from __future__ import annotations

import hashlib
from itertools import pairwise
from typing import Any

import numpy as np

from .gauss import gauss_rule, panel_points

__all__ = ["cdf", "check", "describe", "levels", "ppf", "quadrature", "summary"]


def check(p: dict[str, Any]) -> dict[str, Any]:
    """Checked parameters: at least two non-decreasing quantiles, not all equal; levels from 0 to 1."""
    q = p["quantiles"]
    if len(q) < 2:
        raise ValueError(f"empirical law: `quantiles` needs at least 2 values, got {len(q)}.")
    if any(b < a for a, b in pairwise(q)):
        raise ValueError("empirical law: `quantiles` must be sorted from smallest to largest.")
    if q[0] == q[-1]:
        raise ValueError(f"empirical law: every quantile equals {q[0]:g}; a constant needs no law.")
    lv = p.get("levels")
    if lv is not None:
        if len(lv) != len(q):
            raise ValueError(f"empirical law: {len(q)} quantiles but {len(lv)} levels.")
        if lv[0] != 0 or lv[-1] != 1 or any(b <= a for a, b in pairwise(lv)):
            raise ValueError("empirical law: `levels` must increase strictly from 0 to 1.")
    return dict(p)


def levels(p: dict[str, Any]) -> np.ndarray:
    """The probability levels of the knots."""
    lv = p.get("levels")
    return np.asarray(lv) if lv is not None else np.linspace(0.0, 1.0, len(p["quantiles"]))


def ppf(p: dict[str, Any], u: np.ndarray) -> np.ndarray:
    """Inverse CDF: linear between the knots."""
    return np.interp(u, levels(p), np.asarray(p["quantiles"]))


def cdf(p: dict[str, Any], x: np.ndarray) -> np.ndarray:
    """P(X ≤ x): linear between the knots (right-continuous at tied knots)."""
    q, lv = np.asarray(p["quantiles"]), levels(p)
    x = np.asarray(x, dtype=np.float64)
    i = np.searchsorted(q, x, side="right")
    inside = (i > 0) & (i < len(q))
    j = np.clip(i, 1, len(q) - 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        t = (x - q[j - 1]) / (q[j] - q[j - 1])
    mid = lv[j - 1] + (lv[j] - lv[j - 1]) * t
    return np.where(i == 0, 0.0, np.where(inside, mid, 1.0))


def quadrature(p: dict[str, Any], m: int) -> tuple[np.ndarray, np.ndarray]:
    """The law's m-point Gauss rule (exact for polynomials of degree ≤ 2m − 1)."""
    q = np.asarray(p["quantiles"])
    x, w = panel_points(q, np.diff(levels(p)), m)
    return gauss_rule(x, w, m)


def summary(p: dict[str, Any]) -> dict[str, Any]:
    """What a report records of the law: knots, range, median, where from, and a digest of the knots."""
    q = np.asarray(p["quantiles"])
    digest = hashlib.sha256(q.tobytes() + levels(p).tobytes()).hexdigest()[:16]
    out: dict[str, Any] = {
        "knots": len(q),
        "low": float(q[0]),
        "median": float(ppf(p, np.array([0.5]))[0]),
        "high": float(q[-1]),
        "digest": digest,
    }
    if p.get("source"):
        out["source"] = p["source"]
    return out


def describe(p: dict[str, Any]) -> str:
    """``empirical(178 knots, 11 to 14.8)``, with its source when known."""
    q = p["quantiles"]
    where = f"{p['source']}, " if p.get("source") else ""
    return f"empirical({where}{len(q)} knots, {q[0]:g} to {q[-1]:g})"
