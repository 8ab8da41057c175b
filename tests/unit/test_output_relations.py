"""Outputs noted as exact affine functions of another output: only where their indices follow.

An output y = a + b·z (b ≠ 0) has exactly the Sobol' indices and ν of z (indices are
ratios of variances, which an affine map scales alike; common practice, no source); a
combination of several outputs, such as the last class of a softmax, has its own.
"""

from __future__ import annotations

import numpy as np

from audit import audit_function


def _three(x: np.ndarray) -> np.ndarray:
    a = np.sin(np.pi * x[:, 0]) + 0.3 * x[:, 1]
    b = x[:, 1] ** 2 + x[:, 2]
    return np.column_stack([a, b, 72.5 - 0.38 * a + 1.46 * b, 3.0 - 2.0 * a])


def _softmax(x: np.ndarray) -> np.ndarray:
    z = np.column_stack([2 * x[:, 0], x[:, 1] - x[:, 2], x[:, 2] * x[:, 0]])
    e = np.exp(z - z.max(axis=1, keepdims=True))
    return e / e.sum(axis=1, keepdims=True)


def _saturated(x: np.ndarray) -> np.ndarray:
    p = 1.0 / (1.0 + np.exp(-(45.0 + x[:, 0])))  # 1 to the last bit but a few
    return np.column_stack([np.sin(x[:, 0]) + x[:, 1], p])


def test_only_a_function_of_one_output_is_noted():
    r = audit_function(_three, "uniform", dim=3, points=256, replicates=4, seed=1)
    relations = [o.relation for o in r.outputs]
    assert relations == ["", "", "", "= 3 − 2 × y[0]"]  # y[2], a combination of two outputs, keeps its own
    assert any(n.startswith("y[3] = 3 − 2 × y[0] exactly") and "are that output's" in n for n in r.notices)


def test_the_last_class_of_a_softmax_keeps_its_own_indices():
    r = audit_function(_softmax, "uniform", dim=3, points=256, replicates=4, seed=1)
    assert [o.relation for o in r.outputs] == ["", "", ""]


def test_an_output_that_does_not_move_above_its_rounding_is_no_relation():
    r = audit_function(_saturated, "normal", dim=2, points=256, replicates=4, seed=1)
    assert [o.relation for o in r.outputs] == ["", ""]
    assert not any("exactly" in n for n in r.notices)
