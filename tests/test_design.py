"""Designs: blocks, seeds, samplers."""

import numpy as np
import pytest
from scipy.stats import qmc

from audit.design import Design, round_points
from audit.inputs import Law
from audit.seeds import resolve_seed

LAWS = [Law("uniform")] * 3


def test_blocks_equal_the_whole_sequence():
    d = Design(LAWS, 256, 2, seed=1)
    whole = d.uniforms(1, 0, 256)
    parts = np.vstack([d.uniforms(1, s, 32) for s in range(0, 256, 32)])
    np.testing.assert_array_equal(whole, parts)


def test_randomizations_differ_and_repeat_with_the_seed():
    a, b = Design(LAWS, 64, 2, seed=5), Design(LAWS, 64, 2, seed=5)
    np.testing.assert_array_equal(a.uniforms(0, 0, 64), b.uniforms(0, 0, 64))
    assert not np.allclose(a.uniforms(0, 0, 64), a.uniforms(1, 0, 64))


def test_scrambled_sobol_points_are_a_balanced_net():
    # each scrambled Sobol' randomization of 2^m points puts exactly one point in each of the
    # 2^m elementary intervals of each coordinate (common practice, no source)
    u = Design(LAWS, 128, 1, seed=2).uniforms(0, 0, 128)
    for j in range(u.shape[1]):
        assert np.array_equal(np.sort(np.floor(u[:, j] * 128)), np.arange(128))
    assert qmc.discrepancy(u) < qmc.discrepancy(np.random.default_rng(0).random(u.shape))


def test_mapping_and_pick_freeze_columns():
    d = Design([Law("normal", {"mean": 5, "sd": 2}), Law("uniform", {"low": -1, "high": 1})], 64, 1, seed=3)
    blk = d.block(0, 0, 64)
    assert blk.A.shape == blk.B.shape == (64, 2)
    assert np.all(np.abs(blk.A[:, 1]) <= 1)
    assert abs(blk.A[:, 0].mean() - 5) < 0.5


def test_monte_carlo_sampler_and_errors():
    d = Design(LAWS, 100, 1, seed=3, sampler="mc")
    assert d.uniforms(0, 0, 100).shape == (100, 6)
    with pytest.raises(ValueError, match="valid choices: sobol, mc"):
        Design(LAWS, 64, 1, seed=1, sampler="halton")
    with pytest.raises(ValueError, match="power of two"):
        Design(LAWS, 100, 1, seed=1)


def test_round_points_and_seeds():
    assert [round_points(n) for n in (1, 2, 3, 1000, 1024)] == [1, 2, 4, 1024, 1024]
    assert resolve_seed(7) == 7
    assert resolve_seed(np.random.default_rng(1)) == resolve_seed(np.random.default_rng(1))
    with pytest.raises(ValueError):
        resolve_seed(-1)


def test_a_zero_coordinate_maps_to_a_finite_value():
    d = Design([Law("normal")], 4, 1, seed=1)
    x = d.map(np.array([[0.0, 0.5], [1.0, 0.25]]))
    assert np.all(np.isfinite(x))
