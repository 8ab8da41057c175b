"""Standardised coordinates of each law and its Poincaré constant, for derivative-based bounds.

Every input ``x`` of law ``F`` is written ``x = T(z)`` in a *standardised*
coordinate ``z`` whose law has Poincaré constant 1: for any smooth ``f``,
``Var f(z) ≤ E[f'(z)²]``. A Sobol' total index does not change under a
one-to-one change of an input's coordinate, so the unnormalised total index of
input j is at most ``E[(∂f/∂z_j)²]`` ([1]_, [2]_), and gradients in these
coordinates are comparable between inputs of any law.

=============  ========================================  =======================  ============
law            standardised coordinate z                 dx/dz                    constant C
=============  ========================================  =======================  ============
normal         (x − mean) / sd                           sd                       sd²
uniform        π (x − low) / (high − low)                (high − low) / π         (high − low)²/π²
triangular     π (x − low) / (high − low)                (high − low) / π         (high − low)²/π²
lognormal      (log x − log_mean) / log_sd  (normal)     log_sd · x               none
=============  ========================================  =======================  ============

``C`` is the law's own Poincaré constant in ``x``: the bound on the total index
is ``C · E[(∂f/∂x)²]`` and equals ``E[(∂f/∂z)²]``. The normal constant is the
Gaussian Poincaré inequality; the uniform one the first Neumann eigenvalue of an
interval ([1]_); the triangular density is log-concave, for which the constant
of an interval of length D is at most D²/π² ([3]_; from memory). The lognormal
law has no Poincaré constant (a law with one has exponentially decaying tails,
and the lognormal's decay more slowly; from memory): its bound is taken in the
normal coordinate ``log x`` instead, where the constant is log_sd².

References
----------
.. [1] "Derivative based global sensitivity measures and their link with global
   sensitivity indices", Mathematics and Computers in Simulation, 2009.
.. [2] "Mean dimension of ridge functions", SIAM J. Numer. Anal., 2020.
.. [3] "An optimal Poincaré inequality for convex domains", Archive for Rational
   Mechanics and Analysis, 1960.

Examples
--------
>>> import numpy as np
>>> from audit.inputs import Law
>>> from audit.inputs.scales import poincare_constant, slope
>>> poincare_constant(Law("normal", {"sd": 2.0}))
4.0
>>> float(slope(Law("uniform", {"low": 0.0, "high": np.pi}), np.array([1.0]))[0])
1.0
"""

from __future__ import annotations

import math

import numpy as np

from .laws import Law

__all__ = ["bound_note", "poincare_constant", "slope", "stencil", "support"]


def poincare_constant(law: Law) -> float | None:
    """The law's Poincaré constant in its own coordinate, or ``None`` where it has none.

    Parameters
    ----------
    law : Law

    Returns
    -------
    float or None
        ``sd²`` (normal), ``(high − low)²/π²`` (uniform, triangular), ``None`` (lognormal).
    """
    p = law.params
    if law.kind == "normal":
        return p["sd"] ** 2
    if law.kind in ("uniform", "triangular"):
        return (p["high"] - p["low"]) ** 2 / math.pi**2
    return None


def bound_note(law: Law) -> str:
    """How the bound of an input of this law is made, in words (for reports)."""
    if law.kind == "normal":
        return "sd² · E[(∂f/∂x)²]"
    if law.kind == "uniform":
        return "(high − low)²/π² · E[(∂f/∂x)²]"
    if law.kind == "triangular":
        return "(high − low)²/π² · E[(∂f/∂x)²] (log-concave law)"
    return "log_sd² · E[(x ∂f/∂x)²] (no Poincaré constant in x: taken in log x)"


def slope(law: Law, x: np.ndarray) -> np.ndarray:
    """``dx/dz`` at ``x``: the chain-rule factor from ∂f/∂x to ∂f/∂z (see the module table).

    Parameters
    ----------
    law : Law
    x : ndarray
        Values of the input.

    Returns
    -------
    ndarray of float64, shape of ``x``
    """
    x = np.asarray(x, dtype=np.float64)
    p = law.params
    if law.kind == "normal":
        return np.full_like(x, p["sd"])
    if law.kind in ("uniform", "triangular"):
        return np.full_like(x, (p["high"] - p["low"]) / math.pi)
    return p["log_sd"] * x


def support(law: Law) -> tuple[float, float]:
    """Smallest and largest value the law can give (``±inf`` where unbounded)."""
    p = law.params
    if law.kind in ("uniform", "triangular"):
        return p["low"], p["high"]
    if law.kind == "lognormal":
        return 0.0, math.inf
    return -math.inf, math.inf


def stencil(law: Law, x: np.ndarray, h: float) -> tuple[np.ndarray, np.ndarray]:
    """The two points ``T(z ± h)`` of a central difference of step ``h`` in the standardised coordinate.

    Points beyond the law's support are moved onto its edge, so a function is never
    evaluated where the law puts no mass (the difference there is one-sided).

    Parameters
    ----------
    law : Law
    x : ndarray of float64
        Centres.
    h : float
        Step in the standardised coordinate (``z`` has unit scale for every law).

    Returns
    -------
    (ndarray, ndarray)
        Lower and upper points, float64.
    """
    x = np.asarray(x, dtype=np.float64)
    if law.kind == "lognormal":
        factor = math.exp(law.params["log_sd"] * h)
        return x / factor, x * factor
    step = slope(law, x) * h
    low, high = support(law)
    return np.maximum(x - step, low), np.minimum(x + step, high)
