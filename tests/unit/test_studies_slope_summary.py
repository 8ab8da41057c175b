"""Eigen-structure of the gradient matrices and the per-output bounds (audit/studies/slope_summary.py).

References: eigenvalues and eigenvectors of constructed symmetric matrices (numpy.linalg; exact by
construction); the bounds are means of the stated moments (common practice, no source).
"""

import math

import numpy as np
import pytest

from audit.estimators.gradient import GradientMoments
from audit.studies.slope_summary import RESIDUAL_SHARE, directions, output_slopes

NAMES = [f"x{j}" for j in range(5)]


def _matrix(eigenvalues, seed=0):
    q, _ = np.linalg.qr(np.random.default_rng(seed).standard_normal((5, 5)))
    return q @ np.diag(eigenvalues) @ q.T, q


def test_rank_one_matrices_give_one_direction_with_its_vector():
    m, q = _matrix([2.0, 0, 0, 0, 0])
    out = directions(np.stack([m, 1.1 * m, 0.9 * m]), np.array([1.0, 1.1, 0.9]), NAMES, 1e-7, True)
    assert out.count == 1 and out.nonzero == 1 and out.residual_share == pytest.approx(0.0, abs=1e-12)
    assert out.eigenvalues[0].estimate == pytest.approx(2.0)
    assert abs(float(np.asarray(out.directions[0].vector) @ q[:, 0])) == pytest.approx(1.0)
    assert out.spread_degrees == pytest.approx(0.0, abs=1e-5)
    assert out.ridge_error.estimate == pytest.approx(0.0, abs=1e-12)
    assert max(out.directions[0].vector, key=abs) > 0  # sign: the largest component positive


def test_count_follows_the_share_of_trace_and_reports_the_gap():
    lam = [10.0, 5.0, 0.3, 0.02, 0.0]
    m, _ = _matrix(lam, seed=1)
    out = directions(np.stack([m, m]), np.ones(2), NAMES, 1e-7, False)
    tail = np.cumsum(lam[::-1])[::-1] / sum(lam)
    assert out.count == 3 and tail[3] <= RESIDUAL_SHARE < tail[2]
    assert out.gap == pytest.approx(0.3 / 0.02)
    assert out.largest_gap_at == 2  # among k ≤ r: λ_2/λ_3 = 16.7 beats λ_1/λ_2 = 2 and λ_3/λ_4 = 15
    assert out.gap_share == pytest.approx(15 / 15.32) and out.few  # r = 3 ≤ max(3, d / 4)
    assert out.nonzero == 4 and out.ridge_error is None
    assert out.shares[:2] == pytest.approx([10 / 15.32, 5 / 15.32])


def test_output_bounds_are_the_moments_over_the_variance():
    reps = [
        GradientMoments(np.zeros(1), np.array([v]), np.array([[v * 0.5, v * 0.25, 0, 0, 0]]), None, np.array([2.0 * v]))
        for v in (1.0, 2.0, 4.0)
    ]
    (o,) = output_slopes(reps, NAMES, ["y"], np.array([2.0**-52]), 1e-7, True)
    assert [b.bound.estimate for b in o.bounds[:2]] == pytest.approx([0.5, 0.25])
    assert o.bound_sum.estimate == pytest.approx(0.75)
    assert o.lipschitz == pytest.approx(math.sqrt(8.0)) and o.lipschitz_bound == pytest.approx(8.0 / (7 / 3))
    assert o.directions is None
