"""Analytic test functions with known ANOVA structure, as Python models.

Each takes an (n, d) float64 array and returns (n,) values, so they can be
audited from the command line, e.g.::

    netdim audit model_zoo.functions:ishigami --inputs model_zoo/ishigami.toml

References
----------
.. [1] Ishigami function: "An importance quantification technique in
   uncertainty analysis for computer models", Proc. ISUMA '90, 1990.
.. [2] g-function: "About the use of rank transformation in sensitivity
   analysis of model output", Reliability Engineering & System Safety, 1995
   (from memory).
"""

from __future__ import annotations

import numpy as np

__all__ = ["G_COEFFICIENTS", "additive", "g_function", "ishigami", "phi_ridge", "product", "relu_ridge", "step_ridge"]

ISHIGAMI_A, ISHIGAMI_B = 7.0, 0.1
#: Coefficients a_j of the g-function used by the checks.
G_COEFFICIENTS = np.array([0.0, 1.0, 4.5, 9.0, 99.0, 99.0, 99.0, 99.0])


def ishigami(x: np.ndarray, a: float = ISHIGAMI_A, b: float = ISHIGAMI_B) -> np.ndarray:
    """sin x1 + a sin² x2 + b x3⁴ sin x1, inputs uniform on [-π, π]³."""
    return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])


def g_function(x: np.ndarray, a: np.ndarray = G_COEFFICIENTS) -> np.ndarray:
    """Π_j (|4 x_j − 2| + a_j) / (1 + a_j), inputs uniform on [0, 1]^d (d = len(a))."""
    a = np.asarray(a, dtype=float)[: x.shape[1]]
    return np.prod((np.abs(4 * x - 2) + a) / (1 + a), axis=1)


def additive(x: np.ndarray) -> np.ndarray:
    """Σ_j sin(x_j) + x_j²: a sum of one-input terms, mean dimension 1."""
    return np.sum(np.sin(x) + x**2, axis=1)


def product(x: np.ndarray) -> np.ndarray:
    """Π_j (x_j − 1/2): a product of centred factors, mean dimension d under U[0, 1]^d."""
    return np.prod(x - 0.5, axis=1)


def _unit(theta: np.ndarray) -> np.ndarray:
    theta = np.asarray(theta, dtype=float)
    return theta / np.linalg.norm(theta)


def phi_ridge(x: np.ndarray, theta: np.ndarray | None = None) -> np.ndarray:
    """Φ(θᵀx) with |θ| = 1 (default θ_j = 1/√d), inputs N(0, 1)."""
    from scipy.special import ndtr  # here only: the other functions need no scipy

    th = _unit(np.ones(x.shape[1]) if theta is None else theta)
    return ndtr(x @ th)


def relu_ridge(x: np.ndarray, theta: np.ndarray | None = None, shift: float = 0.0) -> np.ndarray:
    """max(0, θᵀx − shift) with |θ| = 1 (default θ_j = 1/√d), inputs N(0, 1)."""
    th = _unit(np.ones(x.shape[1]) if theta is None else theta)
    return np.maximum(0.0, x @ th - shift)


def step_ridge(x: np.ndarray, theta: np.ndarray | None = None, threshold: float = 0.0) -> np.ndarray:
    """1{θᵀx > threshold} with |θ| = 1 (default θ_j = 1/√d), inputs N(0, 1)."""
    th = _unit(np.ones(x.shape[1]) if theta is None else theta)
    return (x @ th > threshold).astype(float)
