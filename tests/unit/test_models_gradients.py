"""Central differences and the gradient capability of backends (audit/models/gradients.py)."""

import numpy as np
import pytest

from audit.models.gradients import central_differences, difference_cost, has_autograd
from audit.models.python import PythonModel


def _model():
    return PythonModel(lambda x: np.column_stack([np.sin(x[:, 0]) * x[:, 1], x[:, 2] ** 3]), 3)


def test_central_differences_match_the_analytic_gradient():
    # exact derivatives (calculus); the error of a central difference is O(h²): common practice, no source
    x = np.random.default_rng(1).standard_normal((20, 3))
    h = 1e-5
    g = central_differences(_model(), x, x - h, x + h)
    exact = np.zeros((20, 2, 3))
    exact[:, 0, 0] = np.cos(x[:, 0]) * x[:, 1]
    exact[:, 0, 1] = np.sin(x[:, 0])
    exact[:, 1, 2] = 3 * x[:, 2] ** 2
    assert g.values.shape == (20, 2)
    np.testing.assert_allclose(g.jacobian, exact, atol=1e-8)
    np.testing.assert_allclose(g.values[:, 1], x[:, 2] ** 3)


def test_one_sided_neighbours_and_chunks_give_the_same_gradient(monkeypatch):
    import audit.models.gradients as grad

    x = np.random.default_rng(2).standard_normal((9, 3))
    whole = central_differences(_model(), x, x - 1e-5, x + 1e-5)
    monkeypatch.setattr(grad, "CHUNK_ROWS", 14)  # two points per call
    parts = central_differences(_model(), x, x - 1e-5, x + 1e-5)
    np.testing.assert_array_equal(whole.jacobian, parts.jacobian)
    one_sided = central_differences(_model(), x, x, x + 1e-6)
    np.testing.assert_allclose(one_sided.jacobian, whole.jacobian, atol=1e-4)


def test_neighbours_must_differ():
    x = np.zeros((2, 3))
    with pytest.raises(ValueError, match="lower < upper"):
        central_differences(_model(), x, x, x)


def test_cost_and_capability():
    assert difference_cost(64) == 129
    assert not has_autograd(_model())
