"""A quick model with large sums, for the kill-and-resume tests (imports numpy only, so a process starts fast)."""

import numpy as np


def wide(x):
    """40 outputs of 4 inputs: y_k = tanh(a_k x0 + (1 - a_k) x1) + a_k x2 x3 with a_k = k / 40."""
    k = np.arange(1, 41, dtype=float)[None, :] / 40.0
    return np.tanh(k * x[:, [0]] + (1.0 - k) * x[:, [1]]) + k * x[:, [2]] * x[:, [3]]
