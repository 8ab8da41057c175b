"""The engine's value checks (audit.finite): sums that vouch for the values they saw."""

import numpy as np
import pytest

from audit.estimators.jansen import JansenSums
from audit.finite import LARGEST_OUTPUT, fits


def _sums(yA, yB, yAB, detail=True):
    s = JansenSums(yA.shape[1], yAB.shape[0], detail)
    with np.errstate(invalid="ignore", over="ignore"):
        s.add_parts(yA, yB, yAB)
    return s


@pytest.mark.parametrize("detail", [True, False])
def test_the_bound_of_the_sums_covers_every_value_added(detail):
    rng = np.random.default_rng(0)
    yA, yB = rng.normal(5, 2, (64, 3)), rng.normal(5, 2, (64, 3))
    yAB = rng.normal(5, 2, (4, 64, 3))
    yAB[2, 10, 1] = 1e6  # one far value, seen only through its difference from y_A
    s = _sums(yA, yB, yAB, detail)
    top = max(np.abs(yA).max(), np.abs(yB).max(), np.abs(yAB).max())
    assert s.magnitude_bound() >= top and fits(s)


@pytest.mark.parametrize("where", ["A", "B", "AB"])
@pytest.mark.parametrize("bad", [np.nan, np.inf, 1e200])
def test_sums_of_non_finite_or_huge_values_do_not_vouch_for_them(where, bad):
    rng = np.random.default_rng(1)
    parts = {"A": rng.random((16, 2)), "B": rng.random((16, 2)), "AB": rng.random((3, 16, 2))}
    parts[where][..., 0, 1] = bad
    s = _sums(parts["A"], parts["B"], parts["AB"])
    assert not fits(s)
    assert bad == 1e200 or not np.isfinite(s.magnitude_bound())


def test_sums_without_a_bound_always_ask_for_the_scan():
    assert not fits(object())
    assert np.finfo(np.float64).max / 2**16 > LARGEST_OUTPUT**2  # squares of a block's rows still sum finitely
