"""The discrete law: finitely many values (whole numbers, or codes of named categories).

``values`` are the numbers a model is fed; ``probabilities`` (default equal)
their chances; ``labels`` optional names of the values (categories: the values
are then their codes, ``0, 1, ..., k − 1`` when not given). The inverse CDF
maps u to the smallest value whose cumulative probability reaches u, so every
design point is one of the values. Its quadrature rule is the law itself:
every value with its probability, so pre-integrating a discrete input sums
exactly over its values.

:func:`rounded` is the law of a continuous input rounded to whole numbers:
what an integer-typed model input receives (the backends round to the nearest
whole number).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

__all__ = ["MAX_ROUNDED_VALUES", "cdf", "check", "describe", "ppf", "rounded_parameters"]

#: Probabilities may add up to 1 within this before they are normalised.
SUM_TOLERANCE = 1e-6
#: A rounded law with more whole numbers than this is left continuous.
MAX_ROUNDED_VALUES = 100_000
_LISTED = 6


def check(p: dict[str, Any]) -> dict[str, Any]:
    """Checked and normalised parameters: values sorted and distinct, probabilities summing to 1."""
    labels = p.get("labels")
    values = p.get("values")
    if values is None:
        if labels is None:
            raise ValueError("discrete law: give its `values` (or the `labels` of its categories).")
        values = tuple(float(i) for i in range(len(labels)))
    k = len(values)
    if k == 0:
        raise ValueError("discrete law: `values` is empty.")
    probs = p.get("probabilities")
    probs = tuple([1.0 / k] * k) if probs is None else probs
    if len(probs) != k:
        raise ValueError(f"discrete law: {k} values but {len(probs)} probabilities.")
    if labels is not None and len(labels) != k:
        raise ValueError(f"discrete law: {k} values but {len(labels)} labels.")
    if len(set(values)) != k:
        dup = next(v for v in values if values.count(v) > 1)
        raise ValueError(f"discrete law: the value {dup:g} is listed twice.")
    if labels is not None and len(set(labels)) != k:
        dup = next(s for s in labels if labels.count(s) > 1)
        raise ValueError(f"discrete law: the label {dup!r} is listed twice.")
    if min(probs) < 0:
        raise ValueError(f"discrete law: probabilities must be ≥ 0, got {min(probs):g}.")
    total = math.fsum(probs)
    if abs(total - 1) > SUM_TOLERANCE:
        raise ValueError(f"discrete law: probabilities must add up to 1, they add up to {total:.9g}.")
    order = sorted(range(k), key=lambda i: values[i])
    out = {
        "values": tuple(values[i] for i in order),
        "probabilities": tuple(probs[i] / total for i in order),
    }
    if labels is not None:
        out["labels"] = tuple(labels[i] for i in order)
    return out


def _cumulative(p: dict[str, Any]) -> np.ndarray:
    cum = np.cumsum(p["probabilities"])
    cum[-1] = 1.0
    return cum


def ppf(p: dict[str, Any], u: np.ndarray) -> np.ndarray:
    """Inverse CDF: the smallest value whose cumulative probability is ≥ u."""
    values = np.asarray(p["values"])
    index = np.searchsorted(_cumulative(p), u, side="left")
    return values[np.minimum(index, len(values) - 1)]


def cdf(p: dict[str, Any], x: np.ndarray) -> np.ndarray:
    """P(X ≤ x)."""
    index = np.searchsorted(np.asarray(p["values"]), x, side="right")
    cum = np.concatenate([[0.0], _cumulative(p)])
    return cum[index]


def describe(p: dict[str, Any]) -> str:
    """``discrete(0, 1, 2)``, ``discrete(clay, loam, sand)`` or ``discrete(12 values, 1..12)``."""
    names = p.get("labels") or tuple(f"{v:g}" for v in p["values"])
    if len(names) <= _LISTED:
        return f"discrete({', '.join(names)})"
    return f"discrete({len(names)} values, {names[0]}..{names[-1]})"


def rounded_parameters(
    ppf_: Callable[[np.ndarray], np.ndarray], cdf_: Callable[[np.ndarray], np.ndarray], eps: float
) -> dict[str, Any] | None:
    """Parameters of the discrete law of round(X) for a continuous X (given by its ppf and cdf).

    The whole numbers span round(ppf(eps)) .. round(ppf(1 − eps)), the range the
    design reaches; P(round(X) = v) = F(v + ½) − F(v − ½), the two ends taking the
    tails. ``None`` when that range holds more than :data:`MAX_ROUNDED_VALUES` numbers.
    """
    lo, hi = (float(np.rint(ppf_(np.array([q]))[0])) for q in (eps, 1 - eps))
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi - lo + 1 > MAX_ROUNDED_VALUES:
        return None
    values = np.arange(lo, hi + 1)
    edges = cdf_(values[:-1] + 0.5)
    cum = np.concatenate([[0.0], edges, [1.0]])
    probs = np.maximum(np.diff(cum), 0.0)
    keep = probs > 0
    if not keep.any():
        return None
    probs = probs[keep] / probs[keep].sum()
    return {"values": tuple(values[keep].tolist()), "probabilities": tuple(probs.tolist())}
