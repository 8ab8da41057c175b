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


def additive6(x):
    """Σ_j a_j x_j with a = (1, 2, 3, 1, 2, 3): additive, variance 28 under N(0, I)."""
    return x @ np.array([1.0, 2.0, 3.0, 1.0, 2.0, 3.0])


def additive6_plus_product(x):
    """additive6 + 2 x0 x1 x2: adds a pure three-way term of variance 4 under N(0, I)."""
    return additive6(x) + 2.0 * x[:, 0] * x[:, 1] * x[:, 2]


def slow_sum(x):
    """x0 + x1 x2, slowly (0.2 s a call): for checkpoint tests."""
    import time

    time.sleep(0.2)
    return x[:, 0] + x[:, 1] * x[:, 2]


def slow_sum_v2(x):
    """A retrained slow_sum: x0 + 1.1 x1 x2, slowly (0.2 s a call): for checkpoint tests of compare."""
    import time

    time.sleep(0.2)
    return x[:, 0] + 1.1 * x[:, 1] * x[:, 2]


def slow_ridge(x):
    """tanh(x0 + 0.5 x1 - 0.2 x2) + 1e-4 x3, slowly (0.1 s a call): for checkpoint tests of advise."""
    import time

    time.sleep(0.1)
    return np.tanh(x[:, 0] + 0.5 * x[:, 1] - 0.2 * x[:, 2]) + 1e-4 * x[:, 3]


def chatty(x):
    """x0 + x1, printing a line each call (as a careless model might)."""
    print("evaluating", len(x), "rows")
    return x[:, 0] + x[:, 1]


def exits(x):
    """Calls sys.exit(3) (the gate-failed code) from inside the model."""
    import sys

    sys.exit(3)


def soil_and_weather(x):
    """(t + w) · level[soil] with soil one-hot in columns 2..4: a function of a category and two measures."""
    level = np.array([1.0, 2.0, 4.0])
    return (x[:, 0] + x[:, 1]) * level[np.argmax(x[:, 2:5], axis=1)]
