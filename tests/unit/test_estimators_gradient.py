"""The gradient-moments estimator (audit/estimators/gradient.py)."""

import numpy as np
import pytest

from audit.design import Design
from audit.estimators.gradient import GradientEstimator, GradientSums
from audit.inputs import Law


def _rows(n=64, k=2, d=3, seed=0):
    rng = np.random.default_rng(seed)
    return rng.standard_normal((n, k * (d + 1)))


@pytest.mark.parametrize("mode", GradientSums.MODES)
def test_merge_of_halves_equals_the_whole(mode):
    y = _rows()
    whole = GradientSums(2, 3, mode)
    whole.add(y)
    a, b = GradientSums(2, 3, mode), GradientSums(2, 3, mode)
    a.add(y[:20])
    b.add(y[20:])
    a.merge(b)
    fw, fa = whole.finish(0), a.finish(0)
    for name in ("mean", "variance", "square", "top"):
        np.testing.assert_allclose(getattr(fa, name), getattr(fw, name), rtol=1e-12, atol=1e-12)
    if mode != "none":
        np.testing.assert_allclose(fa.outer, fw.outer, rtol=1e-12, atol=1e-12)
    else:
        assert fa.outer is None


@pytest.mark.parametrize("mode", GradientSums.MODES)
def test_state_round_trip(mode):
    s = GradientSums(2, 3, mode)
    s.add(_rows())
    r = GradientEstimator(3).restore(s.state())
    assert r.rows == s.rows and r.mode == mode
    np.testing.assert_array_equal(r.finish(1).square, s.finish(1).square)


def test_moments_are_what_they_say():
    y = _rows(n=32, k=1, d=3)
    s = GradientSums(1, 3, "unit")
    s.add(y)
    m = s.finish(0)
    g = y[:, 1:]
    np.testing.assert_allclose(m.square[0], (g**2).mean(axis=0))
    np.testing.assert_allclose(m.outer[0], g.T @ g / 32)
    np.testing.assert_allclose(m.top[0], (g**2).sum(axis=1).max())
    np.testing.assert_allclose(np.trace(m.outer[0]), m.square[0].sum())
    np.testing.assert_allclose(m.variance[0], y[:, 0].var())


def test_group_mode_sums_the_units():
    y = _rows(n=16, k=2, d=3)
    unit, group = GradientSums(2, 3, "unit"), GradientSums(2, 3, "group")
    unit.add(y)
    group.add(y)
    np.testing.assert_allclose(group.finish(0).outer[0], unit.finish(0).outer.sum(axis=0))


def test_block_size_does_not_change_the_sums():
    # the rows of a design block are the points A themselves; any split gives the same sums
    design = Design([Law("normal")] * 3, 64, 1, seed=4, copies=1)
    est = GradientEstimator(3)

    def run(block):
        total = None
        for start in range(0, 64, block):
            x, _ = est.layout(design.block(0, start, block), np.float64)
            s = est.sums(est.columns(1), True)
            s.add(np.column_stack([x @ [1.0, 2.0, 3.0], np.tile([1.0, 2.0, 3.0], (len(x), 1)) * x[:, :1]]))
            total = s if total is None else (total.merge(s) or total)
        return total.finish(0)

    a, b = run(64), run(16)
    np.testing.assert_allclose(a.square, b.square, rtol=1e-12)
    np.testing.assert_allclose(a.variance, b.variance, rtol=1e-12)


def test_shapes_and_errors():
    est = GradientEstimator(4, directions=False)
    assert est.columns(3) == 15
    assert est.sums(15, True).outer is None
    assert est.state_size(15, True) == 3 * 7
    assert GradientEstimator(4).state_size(15, False) == 3 * 7 + 16
    with pytest.raises(ValueError, match="columns"):
        est.sums(14, True)
    with pytest.raises(ValueError, match="valid modes"):
        GradientSums(1, 1, "every")
    with pytest.raises(ValueError, match="different shapes"):
        GradientSums(1, 2).merge(GradientSums(1, 3))
