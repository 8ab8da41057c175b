"""Gauss rules of laws that :mod:`numpy.polynomial` has no rule for, from a fine discretization.

A law is first written as a discrete measure of many weighted points whose
moments equal the law's up to a high degree (composite Gauss–Legendre panels
on the pieces where its density is smooth). The m-point Gauss rule of that
measure follows from the three-term recurrence of its orthonormal polynomials
(the discretized Stieltjes procedure) and the eigen-decomposition of their
Jacobi matrix: nodes are the eigenvalues, weights the squared first
components of the eigenvectors. The rule integrates exactly every polynomial
of degree ≤ 2m − 1 against the measure; when the measure reproduces the law's
moments to that degree (as the empirical law's panels do exactly), the rule is
the law's own Gauss rule.

References
----------
.. [1] "Calculation of Gauss quadrature rules", Mathematics of Computation, 1969
   (nodes and weights from the Jacobi matrix).
.. [2] "On generating orthogonal polynomials", SIAM Journal on Scientific and
   Statistical Computing, 1982 (the discretized Stieltjes procedure).
"""

from __future__ import annotations

import numpy as np

__all__ = ["gauss_rule", "panel_points"]


def panel_points(edges: np.ndarray, masses: np.ndarray, q: int) -> tuple[np.ndarray, np.ndarray]:
    """A discrete measure putting mass ``masses[i]`` uniformly on ``[edges[i], edges[i + 1]]``.

    Each panel gets the ``q`` Gauss–Legendre nodes of its interval, so the measure's
    moments up to degree 2q − 1 equal those of the piecewise-uniform law exactly;
    a panel of zero width is a point mass.

    Parameters
    ----------
    edges : ndarray, shape (p + 1,)
        Non-decreasing panel ends.
    masses : ndarray, shape (p,)
        Non-negative masses of the panels.
    q : int
        Nodes per panel.

    Returns
    -------
    x, w : ndarray
        Points and weights (summing to ``masses.sum()``).
    """
    t, tw = np.polynomial.legendre.leggauss(q)
    a, b = edges[:-1, None], edges[1:, None]
    x = a + (b - a) * (t[None] + 1) / 2
    w = masses[:, None] * tw[None] / 2
    return x.ravel(), w.ravel()


def gauss_rule(x: np.ndarray, w: np.ndarray, m: int) -> tuple[np.ndarray, np.ndarray]:
    """The m-point Gauss rule of the discrete measure ``Σ w_i δ(x_i)``.

    Parameters
    ----------
    x, w : ndarray
        Points and non-negative weights of the measure (normalised here); the
        measure needs at least ``m`` points of positive weight.
    m : int
        Nodes of the rule.

    Returns
    -------
    nodes, weights : ndarray, shape (m,)
        Increasing nodes and weights summing to 1.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.inputs.gauss import gauss_rule, panel_points
    >>> x, w = panel_points(np.array([-1.0, 0.0, 1.0]), np.array([0.5, 0.5]), 8)
    >>> nodes, weights = gauss_rule(x, w, 3)       # the uniform law on [-1, 1]
    >>> bool(np.allclose(nodes, np.polynomial.legendre.leggauss(3)[0]))
    True
    """
    from scipy.linalg import eigh_tridiagonal

    if m < 1:
        raise ValueError(f"a quadrature rule needs at least 1 node, got {m}.")
    keep = w > 0
    x, w = np.asarray(x, dtype=np.float64)[keep], np.asarray(w, dtype=np.float64)[keep]
    w = w / w.sum()
    if len(np.unique(x)) < m:
        raise ValueError(f"a measure on {len(np.unique(x))} points has no {m}-point Gauss rule.")
    # work on [-1, 1] for a well-scaled recurrence, then map back
    lo, hi = float(x.min()), float(x.max())
    centre, half = (lo + hi) / 2, (hi - lo) / 2 or 1.0
    s = (x - centre) / half
    alpha, beta = np.zeros(m), np.zeros(m)
    prev, cur = np.zeros_like(s), np.ones_like(s)
    for k in range(m):
        alpha[k] = np.dot(w, s * cur * cur)
        nxt = (s - alpha[k]) * cur - (np.sqrt(beta[k]) * prev if k else 0.0)
        if k + 1 < m:
            beta[k + 1] = np.dot(w, nxt * nxt)
            prev, cur = cur, nxt / np.sqrt(beta[k + 1])
    nodes, vectors = eigh_tridiagonal(alpha, np.sqrt(beta[1:]))
    weights = vectors[0] ** 2
    return centre + half * nodes, weights / weights.sum()
