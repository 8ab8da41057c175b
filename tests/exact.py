"""Exact ANOVA answers for the reference checks (test helpers, no netdim code).

Ridge functions f(x) = g(θᵀx) of Gaussian inputs with |θ| = 1: expand
g = Σ_k a_k He_k / √k! (probabilists' Hermite polynomials, orthonormal under
N(0, 1)); then Var f = Σ_{k≥1} a_k², the total index of x_j is
Σ_k a_k² (1 − (1 − θ_j²)^k) and the first-order index is Σ_k a_k² θ_j^{2k}
(Hermite expansion of ridge functions; the total-index form is given in the
project's DESIGN.md §2; the orthonormality is common practice, no source).
The coefficients a_k are computed here with scipy.integrate.quad against the
normal density, split at the kink of g when it has one.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from itertools import pairwise

import numpy as np
from scipy import integrate, stats

K_MAX = 60


def hermite_normalised(z: float, kmax: int = K_MAX) -> np.ndarray:
    """He_k(z)/√k! for k = 0..kmax by the stable three-term recurrence."""
    h = np.empty(kmax + 1)
    h[0] = 1.0
    if kmax >= 1:
        h[1] = z
    for k in range(1, kmax):
        h[k + 1] = (z * h[k] - math.sqrt(k) * h[k - 1]) / math.sqrt(k + 1)
    return h


def hermite_coefficients(g: Callable[[float], float], kink: float | None = None, kmax: int = K_MAX) -> np.ndarray:
    """a_k = E[g(Z) He_k(Z)/√k!], Z ~ N(0, 1), by adaptive quadrature (scipy.integrate.quad)."""
    pts = [-np.inf, kink, np.inf] if kink is not None else [-np.inf, np.inf]
    a = np.zeros(kmax + 1)
    for k in range(kmax + 1):
        total = 0.0
        for lo, hi in pairwise(pts):
            val, _ = integrate.quad(
                lambda z, k=k: g(z) * hermite_normalised(z, k)[k] * stats.norm.pdf(z), lo, hi, limit=400
            )
            total += val
        a[k] = total
    return a


def variance_1d(g: Callable[[float], float], kink: float | None = None) -> float:
    """Var g(Z), Z ~ N(0, 1), by quadrature (for the Hermite tail)."""
    pts = [-np.inf, kink, np.inf] if kink is not None else [-np.inf, np.inf]

    def moment(p: int) -> float:
        return sum(
            integrate.quad(lambda z: g(z) ** p * stats.norm.pdf(z), lo, hi, limit=400)[0] for lo, hi in pairwise(pts)
        )

    return moment(2) - moment(1) ** 2


def ridge_indices(g, theta, kink=None) -> dict[str, np.ndarray | float]:
    """Exact variance, normalised total and first-order indices and ν of g(θᵀx)."""
    theta = np.asarray(theta, dtype=float)
    theta = theta / np.linalg.norm(theta)
    a = hermite_coefficients(g, kink)
    var = variance_1d(g, kink)
    k = np.arange(len(a))
    a2 = a**2
    a2[0] = 0.0
    # total index: Var − Σ_{k≤K} a_k² (1−θ_j²)^k − a_0-free; the neglected tail is
    # Σ_{k>K} a_k² (1−θ_j²)^k ≤ (1−θ_j²)^K (Var − Σ_{k≤K} a_k²).
    closed = np.array([var - np.sum(a2 * (1 - t**2) ** k) for t in theta])
    first = np.array([np.sum(a2 * t ** (2 * k)) for t in theta])
    return {"variance": var, "total": closed / var, "first": first / var, "nu": closed.sum() / var}


def ridge_nu_limit(g, kink=None) -> float:
    """ν of g(θᵀx) as d → ∞ with θ_j = 1/√d: Σ_k k a_k² / Var."""
    a = hermite_coefficients(g, kink)
    k = np.arange(len(a))
    var = variance_1d(g, kink)
    tail = var - np.sum(a[1:] ** 2)
    return float((np.sum(k * a**2) + (len(a)) * max(tail, 0.0)) / var)


def ishigami(a: float = 7.0, b: float = 0.1) -> dict[str, np.ndarray | float]:
    """Analytic variance terms of the Ishigami function (Proc. ISUMA '90, 1990)."""
    pi = math.pi
    v1 = 0.5 * (1 + b * pi**4 / 5) ** 2
    v2 = a**2 / 8
    v13 = b**2 * pi**8 * (1 / 18 - 1 / 50)
    var = v1 + v2 + v13
    total = np.array([v1 + v13, v2, v13]) / var
    return {"variance": var, "total": total, "first": np.array([v1, v2, 0.0]) / var, "nu": total.sum()}


def g_function(a: np.ndarray) -> dict[str, np.ndarray | float]:
    """Exact indices of the g-function from V_j = 1/(3(1+a_j)²) and the product formula."""
    a = np.asarray(a, dtype=float)
    vj = 1.0 / (3 * (1 + a) ** 2)
    var = np.prod(1 + vj) - 1
    total = np.array([vj[j] * np.prod(np.delete(1 + vj, j)) for j in range(len(a))]) / var
    return {"variance": var, "total": total, "first": vj / var, "nu": total.sum()}
