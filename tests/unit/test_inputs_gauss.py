"""Gauss rules from a discretized measure (audit.inputs.gauss)."""

import numpy as np
import pytest

from audit.inputs.gauss import gauss_rule, panel_points


@pytest.mark.parametrize("m", [1, 4, 32, 128])
def test_uniform_panels_give_gauss_legendre(m):
    # reference: numpy.polynomial.legendre.leggauss, the Gauss rule of the uniform law on [-1, 1]
    x, w = panel_points(np.linspace(-1, 1, 41), np.full(40, 1 / 40), max(m, 2))
    nodes, weights = gauss_rule(x, w, m)
    t, tw = np.polynomial.legendre.leggauss(m)
    np.testing.assert_allclose(nodes, t, atol=1e-13)
    np.testing.assert_allclose(weights, tw / 2, atol=1e-13)


def test_rule_integrates_polynomials_of_degree_2m_minus_1_against_the_measure():
    # exactness of Gauss rules for degree ≤ 2m − 1 (common practice, no source); the measure: a skewed sample
    rng = np.random.default_rng(2)
    data = np.sort(rng.lognormal(size=300))
    x, w = panel_points(data, np.full(299, 1 / 299), 10)
    nodes, weights = gauss_rule(x, w, 10)
    s = data.max()
    for k in range(20):
        assert np.dot(weights, (nodes / s) ** k) == pytest.approx(np.dot(w, (x / s) ** k), rel=1e-10, abs=1e-14)
    assert nodes.min() >= data.min() and nodes.max() <= data.max()


def test_too_few_points_or_nodes_are_refused():
    with pytest.raises(ValueError, match="no 3-point Gauss rule"):
        gauss_rule(np.array([0.0, 1.0]), np.array([0.5, 0.5]), 3)
    with pytest.raises(ValueError, match="at least 1 node"):
        gauss_rule(np.array([0.0, 1.0]), np.array([0.5, 0.5]), 0)
