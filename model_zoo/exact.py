"""Exact ANOVA quantities of the zoo's validation networks.

The validation networks (:class:`model_zoo.nets.RidgeNet`,
:class:`model_zoo.nets.AdditiveNet`) take independent standard normal inputs
x ~ N(0, I). Their variance, total and first-order Sobol' indices and mean
dimension are known up to one-dimensional quadrature:

* ridge ``y = g(W)``, ``g(w) = link(s w − t)``, ``W = θᵀx`` with ``|θ| = 1``.
  Resampling the inputs in a set u leaves ``W'`` standard normal with
  correlation ``ρ = 1 − Σ_{j∈u} θ_j²`` to ``W``. With ``C(ρ) = Cov(g(W), g(W'))``
  the variance is ``C(1)``, the total index of ``x_j`` is ``C(1) − C(1 − θ_j²)``
  and the first-order index is ``C(θ_j²)``. ``C`` is one integral over ``w``
  because the conditional mean ``E[g(W') | W = w]`` has a closed form for both
  links (Φ and max(0, ·)).
* additive ``y = Σ_j h_j(x_j)``: each input's total and first-order index equal
  ``Var h_j(x_j)``, and the mean dimension is exactly 1.

Integrals use :func:`scipy.integrate.quad` on [−12, 12] (the normal mass outside
is below 1e-32) with the kink of the ReLU link as a break point.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from scipy import integrate, special

__all__ = [
    "ExactAnova",
    "additive_exact",
    "ridge_covariance",
    "ridge_exact",
    "ridge_mean",
]

LINKS = ("phi", "relu")
_LIMIT = 12.0


@dataclass(frozen=True)
class ExactAnova:
    """Exact ANOVA summary of one scalar output under independent N(0, 1) inputs.

    Attributes
    ----------
    mean, variance : float
        Mean and variance of the output.
    total_index, first_order : list of float
        Normalised (divided by ``variance``) total and first-order Sobol' indices,
        input order.
    mean_dimension : float
        Sum of the normalised total indices.
    """

    mean: float
    variance: float
    total_index: list[float]
    first_order: list[float]
    mean_dimension: float

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


def _norm_pdf(z: float) -> float:
    return math.exp(-0.5 * z * z) / math.sqrt(2.0 * math.pi)


def _norm_cdf(z: float) -> float:
    return 0.5 * special.erfc(-z / math.sqrt(2.0))


def _check_link(link: str) -> None:
    if link not in LINKS:
        raise ValueError(f"link must be one of {list(LINKS)}, got {link!r}")


def _link(link: str, z: float) -> float:
    return _norm_cdf(z) if link == "phi" else max(z, 0.0)


def _conditional_mean(link: str, scale: float, shift: float, rho: float, w: float) -> float:
    """E[link(s W' − t) | W = w] for W' = ρ w + √(1 − ρ²) Z."""
    m = scale * rho * w - shift
    sd = scale * math.sqrt(max(1.0 - rho * rho, 0.0))
    if link == "phi":
        return _norm_cdf(m / math.sqrt(1.0 + sd * sd))
    if sd == 0.0:
        return max(m, 0.0)
    return m * _norm_cdf(m / sd) + sd * _norm_pdf(m / sd)


def ridge_mean(link: str, scale: float, shift: float) -> float:
    """Mean of ``link(s W − t)`` for W ~ N(0, 1).

    Parameters
    ----------
    link : {"phi", "relu"}
        Outer function.
    scale, shift : float
        s and t.

    Returns
    -------
    float
    """
    _check_link(link)
    return _conditional_mean(link, scale, shift, 0.0, 0.0)


def ridge_covariance(link: str, scale: float, shift: float, rho: float) -> float:
    """``Cov(g(W), g(W'))`` for standard normal W, W' with correlation ``rho``.

    Parameters
    ----------
    link : {"phi", "relu"}
        Outer function; ``g(w) = link(scale * w − shift)``.
    scale, shift : float
        s and t.
    rho : float
        Correlation in [0, 1].

    Returns
    -------
    float
    """
    _check_link(link)
    if not 0.0 <= rho <= 1.0:
        raise ValueError(f"rho must lie in [0, 1], got {rho}")
    points = [shift / scale] if link == "relu" and scale != 0 else None

    def integrand(w: float) -> float:
        g = _link(link, scale * w - shift)
        return g * _conditional_mean(link, scale, shift, rho, w) * _norm_pdf(w)

    second, _ = integrate.quad(integrand, -_LIMIT, _LIMIT, points=points, epsabs=1e-14, epsrel=1e-12, limit=400)
    mean = ridge_mean(link, scale, shift)
    return second - mean * mean


def ridge_exact(theta: Sequence[float], scale: float, shift: float, link: str) -> ExactAnova:
    """Exact ANOVA of ``y = link(s θᵀx − t)`` for x ~ N(0, I).

    Parameters
    ----------
    theta : sequence of float
        Unit-length direction θ.
    scale, shift : float
        s and t.
    link : {"phi", "relu"}
        Outer function.

    Returns
    -------
    ExactAnova
    """
    _check_link(link)
    th = np.asarray(theta, dtype=np.float64)
    if th.ndim != 1 or abs(float(th @ th) - 1.0) > 1e-12:
        raise ValueError("theta must be a 1-d unit-length vector")
    variance = ridge_covariance(link, scale, shift, 1.0)
    total = [variance - ridge_covariance(link, scale, shift, 1.0 - t * t) for t in th]
    first = [ridge_covariance(link, scale, shift, t * t) for t in th]
    return ExactAnova(
        mean=ridge_mean(link, scale, shift),
        variance=variance,
        total_index=[v / variance for v in total],
        first_order=[v / variance for v in first],
        mean_dimension=float(sum(total) / variance),
    )


def additive_exact(
    inner_weight: Sequence[Sequence[float]],
    inner_bias: Sequence[Sequence[float]],
    outer_weight: Sequence[Sequence[float]],
    outer_bias: float = 0.0,
) -> ExactAnova:
    """Exact ANOVA of ``y = Σ_j Σ_i a_ji tanh(w_ji x_j + c_ji) + b`` for x ~ N(0, I).

    Parameters
    ----------
    inner_weight, inner_bias, outer_weight : sequence of sequence of float
        Arrays of shape (d, per_input): ``w_ji``, ``c_ji``, ``a_ji``.
    outer_bias : float
        b.

    Returns
    -------
    ExactAnova
    """
    w = np.asarray(inner_weight, dtype=np.float64)
    c = np.asarray(inner_bias, dtype=np.float64)
    a = np.asarray(outer_weight, dtype=np.float64)
    if w.ndim != 2 or w.shape != c.shape or w.shape != a.shape:
        raise ValueError("inner_weight, inner_bias and outer_weight must share a (d, k) shape")

    def moment(j: int, power: int) -> float:
        def integrand(x: float) -> float:
            return float(np.dot(a[j], np.tanh(w[j] * x + c[j]))) ** power * _norm_pdf(x)

        value, _ = integrate.quad(integrand, -_LIMIT, _LIMIT, epsabs=1e-14, epsrel=1e-12, limit=400)
        return value

    means = [moment(j, 1) for j in range(w.shape[0])]
    parts = [moment(j, 2) - m * m for j, m in enumerate(means)]
    variance = float(sum(parts))
    shares = [p / variance for p in parts]
    return ExactAnova(
        mean=float(sum(means) + outer_bias),
        variance=variance,
        total_index=shares,
        first_order=list(shares),
        mean_dimension=1.0,
    )
