"""When a unit is constant (inert), and when its estimates cannot be trusted.

A unit is **inert** when its standard deviation is within a few roundings of
its mean in the precision of the values the model returned: a float32 network
cannot resolve relative changes below its machine epsilon (2^-23 ≈ 1.2e-7),
a float64 function can (2^-52 ≈ 2.2e-16), so the rule follows the dtype:

    sd ≤ INERT_ROUNDINGS · eps(dtype) · |mean|   (or the variance is below the
    dtype's smallest normal number, for a unit constant at 0).

A unit that varies has 1 ≤ ν ≤ d. Its estimate is **unreliable** when the
interval of ν lies wholly outside [1, d], or is wider than that whole range:
then the estimate says nothing, and summaries leave it out. The reason is
numerical noise when the unit's sd is within ``NOISE_ROUNDINGS`` roundings of
its mean (a near-constant unit whose rounding dominates the differences), and
too few points otherwise.

References
----------
.. [1] Machine epsilons from :class:`numpy.finfo`; the multiples of it used
   here leave room for accumulated rounding (common practice, no source).
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["INERT_ROUNDINGS", "NOISE_ROUNDINGS", "inert_rule", "is_inert", "machine_eps", "unreliable"]

#: sd within this many machine epsilons of |mean|: the unit is constant.
INERT_ROUNDINGS = 8
#: sd within this many machine epsilons of |mean|: an unreliable estimate is blamed on rounding.
NOISE_ROUNDINGS = 1e4


def machine_eps(dtype: Any) -> float:
    """Machine epsilon of a float dtype (bfloat16's 2^-7 by name; float64's for anything else)."""
    if str(dtype).removeprefix("torch.") == "bfloat16":
        return 2.0**-7
    try:
        return float(np.finfo(np.dtype(dtype)).eps)
    except (TypeError, ValueError):
        return float(np.finfo(np.float64).eps)


def _tiny(eps: np.ndarray) -> np.ndarray:
    return np.where(eps > np.finfo(np.float32).eps, float(np.finfo(np.float16).tiny),
                    np.where(eps > np.finfo(np.float64).eps, float(np.finfo(np.float32).tiny),
                             float(np.finfo(np.float64).tiny)))  # fmt: skip


def is_inert(mean: np.ndarray, variance: np.ndarray, eps: float | np.ndarray = 2.0**-23) -> np.ndarray:
    """Units whose variance is zero up to the precision ``eps`` of the values they came in.

    Parameters
    ----------
    mean, variance : ndarray, shape (k,)
    eps : float or ndarray, shape (k,)
        Machine epsilon of each unit's values (:func:`machine_eps`).

    Examples
    --------
    >>> import numpy as np
    >>> from audit.estimators.inert import is_inert
    >>> is_inert(np.array([1e7]), np.array([2.0]), eps=2.0**-52).tolist()     # a float64 function
    [False]
    >>> is_inert(np.array([1e7]), np.array([1e-4]), eps=2.0**-23).tolist()    # a float32 unit
    [True]
    """
    eps = np.broadcast_to(np.asarray(eps, dtype=np.float64), np.shape(mean))
    return variance <= (INERT_ROUNDINGS * eps * np.abs(mean)) ** 2 + _tiny(eps)


def inert_rule(eps: float) -> str:
    """The inert rule in words, for a report."""
    return (
        f"a unit is constant when its sd is at most {INERT_ROUNDINGS} × {eps:.2g} (the machine epsilon of "
        "its values) × |mean|"
    )


def unreliable(low: float, high: float, d: int, mean: float, variance: float, eps: float, lower: float = 1.0) -> str:
    """Why an interval ``[low, high]`` of a quantity that must lie in ``[lower, d]`` says nothing ("" when it does).

    Examples
    --------
    >>> from audit.estimators.inert import unreliable
    >>> unreliable(1.1, 1.3, 8, 0.0, 1.0, 2.0**-52)
    ''
    >>> unreliable(-43.0, 204.0, 64, 1.0, 1e-12, 2.0**-23)
    'numerical noise of a near-constant unit'
    """
    if not (np.isfinite(low) and np.isfinite(high)):
        return ""
    outside = high < lower or low > d
    too_wide = d > lower and (high - low) > (d - lower)
    if not (outside or too_wide):
        return ""
    sd = float(np.sqrt(max(variance, 0.0)))
    if sd <= NOISE_ROUNDINGS * eps * abs(mean):
        return "numerical noise of a near-constant unit"
    return "too few points for this unit"
