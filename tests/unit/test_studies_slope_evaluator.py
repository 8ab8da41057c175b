"""Values and standardised gradients for the engine (audit/studies/slope_evaluator.py).

References: derivatives by calculus; the chain rule through each law's standardised map
(audit/inputs/scales.py table).
"""

import math

import numpy as np
import pytest

from audit.inputs import Law
from audit.models.python import PythonModel
from audit.studies.slope_evaluator import (
    AUTOGRAD,
    DIFFERENCES,
    GradientEvaluator,
    accuracy,
    cost_per_point,
    pack,
)

LAWS = [Law("lognormal", {"log_mean": 0.0, "log_sd": 0.7}), Law("uniform", {"low": 2.0, "high": 5.0}),
        Law("normal", {"mean": 1.0, "sd": 3.0})]  # fmt: skip


def test_standardised_gradients_follow_the_chain_rule():
    # f = (log x0, x1², x2): ∂f/∂z = (log_sd, 2 x1 (high − low)/π, sd)
    model = PythonModel(lambda x: np.column_stack([np.log(x[:, 0]), x[:, 1] ** 2, x[:, 2]]), 3)
    x = np.column_stack([law.ppf(np.linspace(0.05, 0.95, 7)) for law in LAWS])
    out = GradientEvaluator(model, LAWS, [], None, DIFFERENCES)(x)["outputs"]
    values, grad = out[:, :3], out[:, 3:].reshape(7, 3, 3)
    np.testing.assert_allclose(values[:, 1], x[:, 1] ** 2)
    np.testing.assert_allclose(grad[:, 0, 0], 0.7, rtol=1e-8)
    np.testing.assert_allclose(grad[:, 1, 1], 2 * x[:, 1] * 3.0 / math.pi, rtol=1e-8)
    np.testing.assert_allclose(grad[:, 2, 2], 3.0, rtol=1e-8)
    np.testing.assert_allclose(grad[:, 0, 1:], 0.0, atol=1e-12)


def test_kept_outputs_and_layout():
    model = PythonModel(lambda x: np.column_stack([x[:, 0], 2 * x[:, 1]]), 2)
    x = np.array([[0.5, 0.5]])
    out = GradientEvaluator(model, [Law("normal")] * 2, [], np.array([1]), DIFFERENCES)(x)["outputs"]
    assert out.shape == (1, 3)  # one unit: value and two slopes
    np.testing.assert_allclose(out[0], [1.0, 0.0, 2.0], atol=1e-9)
    np.testing.assert_array_equal(pack(np.ones((2, 1)), np.zeros((2, 1, 2))), [[1, 0, 0], [1, 0, 0]])


def test_costs_and_accuracy():
    assert cost_per_point(DIFFERENCES, 8, 66) == 17
    assert cost_per_point(AUTOGRAD, 8, 66) == 133
    assert accuracy(AUTOGRAD, np.float32) == pytest.approx(2.0**-23)
    assert accuracy(DIFFERENCES, np.float64) == pytest.approx(2.0 ** (-52 * 2 / 3))
    with pytest.raises(ValueError, match="valid methods"):
        GradientEvaluator(PythonModel(lambda x: x[:, 0], 1), [Law("normal")], [], None, "guess")
