"""Student-t quantiles for whole degrees of freedom, without importing scipy.

Every interval netdim reports needs ``t_{(1+level)/2, R-1}`` for R randomizations. scipy's
``special.stdtrit`` computes it, but importing :mod:`scipy.special` costs about a quarter of a
second (a third of a small audit's start-up), and an audit of a model whose laws are uniform
needs nothing else from scipy. For a whole number of degrees of freedom the t distribution
function is a finite trigonometric sum, so the quantile is found here to the last bits by
Newton's method on it; any other degrees of freedom go to scipy.

References
----------
.. [1] Closed forms of P(|T| ≤ t) for whole degrees of freedom (26.7.3 and 26.7.4):
   "Handbook of Mathematical Functions", National Bureau of Standards, 1964.

Examples
--------
>>> from audit.estimators.student import t_quantile
>>> round(t_quantile(0.975, 7), 6)  # t_{0.975, 7}, tabulated as 2.365 (from memory)
2.364624
"""

from __future__ import annotations

import functools
import math

__all__ = ["P_MAX", "WHOLE_DF_MAX", "t_quantile"]

#: Largest whole degrees of freedom solved here (each step sums about df / 2 terms; round-off
#: grows with the number of terms); above it, for fractional degrees of freedom and for p above
#: :data:`P_MAX`, scipy.
WHOLE_DF_MAX = 1024
#: Largest p solved here: nearer 1 the sum's round-off weighs on the far tail.
P_MAX = 0.999


def _two_sided(theta: float, df: int) -> float:
    """P(|T| ≤ t) for t = sqrt(df) tan(theta), 0 ≤ theta < π/2 (the closed forms of [1])."""
    c2 = math.cos(theta) ** 2
    s = 0.0
    if df % 2:  # odd: (2/π)(θ + sin θ cos θ Σ_k a_k cos^{2k} θ), a_k = a_{k-1} 2k/(2k+1)
        coef = [1.0]
        for k in range(1, (df - 1) // 2):
            coef.append(coef[-1] * (2 * k) / (2 * k + 1))
        for a in reversed(coef if df > 1 else []):
            s = s * c2 + a
        return (2 / math.pi) * (theta + math.sin(theta) * math.cos(theta) * s)
    coef = [1.0]  # even: sin θ Σ_k b_k cos^{2k} θ, b_k = b_{k-1} (2k-1)/(2k)
    for k in range(1, df // 2):
        coef.append(coef[-1] * (2 * k - 1) / (2 * k))
    for b in reversed(coef):
        s = s * c2 + b
    return math.sin(theta) * s


@functools.lru_cache(maxsize=256)
def _whole(p: float, df: int) -> float:
    level = 2 * p - 1  # P(|T| ≤ t) = 2 P(T ≤ t) - 1
    # d/dθ P(|T| ≤ √df tan θ) = 2 √df f(t) sec²θ = k cos^{df-1} θ, f the t density
    log_k = math.log(2) + math.lgamma((df + 1) / 2) - math.lgamma(df / 2) - 0.5 * math.log(math.pi)
    lo, hi = 0.0, math.pi / 2
    theta = math.pi / 4
    for _ in range(200):
        f = _two_sided(theta, df) - level
        if f > 0:
            hi = theta
        else:
            lo = theta
        slope = math.exp(log_k + (df - 1) * math.log(math.cos(theta)))
        step = theta - f / slope if slope > 0 else (lo + hi) / 2
        if not lo < step < hi:  # Newton left the bracket: bisect
            step = (lo + hi) / 2
        if step == theta or hi - lo <= 4 * math.ulp(theta):
            break
        theta = step
    return math.sqrt(df) * math.tan(theta)


def t_quantile(p: float, df: float) -> float:
    """The p-quantile of Student's t with ``df`` degrees of freedom, for 0.5 < p < 1.

    Parameters
    ----------
    p : float
        Probability, 0.5 < p < 1 (the upper end of a two-sided interval).
    df : float
        Degrees of freedom, > 0.

    Returns
    -------
    float
        t with P(T ≤ t) = p: solved here for whole ``df`` up to :data:`WHOLE_DF_MAX` and
        p up to :data:`P_MAX` (within 1e-12 relative of ``scipy.special.stdtrit``, about 1e-15
        for df below 128; tested), else by scipy.

    References
    ----------
    .. [1] "Handbook of Mathematical Functions", National Bureau of Standards, 1964, 26.7.3-4.

    Examples
    --------
    >>> from audit.estimators.student import t_quantile
    >>> round(t_quantile(0.975, 1), 4)  # Cauchy: tan(0.475 π)
    12.7062
    """
    p, df = float(p), float(df)
    if not 0.5 < p < 1 or not df > 0:
        raise ValueError(f"t_quantile needs 0.5 < p < 1 and df > 0; got p={p}, df={df}.")
    if df.is_integer() and df <= WHOLE_DF_MAX and p <= P_MAX:
        return _whole(p, int(df))
    from scipy import special

    return float(special.stdtrit(df, p))
