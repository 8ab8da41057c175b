"""Values to freeze at: the median, the best of the quantiles, and the measured change against exact values.

f(x) = x0 + (x1 − 0.3)², x ~ U(0, 1)²: freezing x1 at c changes f by g(x1) − g(c), g(t) = (t − 0.3)²,
with mean square E g² − 2 g(c) E g + g(c)², E g = (0.7³ + 0.3³)/3, E g² = (0.7⁵ + 0.3⁵)/5; the smallest
is at g(c) = E g, c = 0.3 + √(E g) (common practice, no source).
"""

import math

import numpy as np

from audit.design import Design
from audit.inputs import Law
from audit.models.python import PythonModel
from audit.studies.simplify.values import CANDIDATES, best_values, measured_change, median

LAWS = [Law("uniform")] * 2
EG, EG2 = (0.7**3 + 0.3**3) / 3, (0.7**5 + 0.3**5) / 5


def f(x):
    return x[:, 0] + (x[:, 1] - 0.3) ** 2


def change(c):
    g = (c - 0.3) ** 2
    return EG2 - 2 * g * EG + g * g


def test_median_of_each_law():
    assert median(Law("uniform", {"low": 2, "high": 6})) == 4.0
    assert median(Law("normal", {"mean": -1, "sd": 3})) == -1.0
    assert math.isclose(median(Law("lognormal", {"log_mean": 0.5, "log_sd": 1})), math.exp(0.5))


def test_best_value_is_the_nearest_quantile_to_the_exact_minimiser():
    found = best_values(PythonModel(f, 2), LAWS, [1], seed=3)
    value, err = found[1]
    assert abs(value - (0.3 + math.sqrt(EG))) <= 1 / CANDIDATES
    var = 1 / 12 + (EG2 - EG**2)  # Var f: the two terms are independent
    assert abs(err - change(value) / var) < 0.05 * change(value) / var  # 256 search points


def test_measured_change_covers_the_exact_value():
    design = Design(LAWS, 1024, 8, 5, copies=1)
    raw, share = measured_change(PythonModel(f, 2), LAWS, {1: 0.5}, design)
    assert raw[0].covers(change(0.5)) and share[0].estimate > 0
    assert np.isfinite(share[0].std_error)
