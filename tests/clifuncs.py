"""Small Python models for the command-line tests."""

import numpy as np


def log_first(x):
    """log(x0): NaN / -inf for x0 <= 0 (non-finite under a normal law)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.log(x[:, 0]) + x[:, 1]


def two_outputs(x):
    return np.stack([x.sum(axis=1), x[:, 0] * x[:, 1]], axis=1)


def bad_shape(x):
    return np.ones((3, 3, 3))


NOT_CALLABLE = 3
