"""Designs (audit.design.design): blocks of R randomizations mapped through the laws, seeds, samplers."""

import numpy as np
import pytest

from audit.design import EPS, Design, map_to_laws, round_points
from audit.inputs import Law
from audit.seeds import randomization_seeds, resolve_seed

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


MIXED = [Law("normal", {"mean": 5, "sd": 2}), Law("uniform", {"low": -1, "high": 3}), Law("lognormal")]


def test_map_to_laws_clips_uniforms_to_eps_before_the_inverse_cdf():
    # Scrambled Sobol' coordinates can be exactly 0 (multiples of 2^-30); the clip keeps them finite
    x = map_to_laws(np.array([[0.0, 1.0]]), [Law("normal")])
    law = Law("normal")
    np.testing.assert_array_equal(x[0], [law.ppf(np.array(EPS)), law.ppf(np.array(1 - EPS))])
    # EPS = 1e-12 puts the normal law's extreme points at about 7.03 sd (the module's note)
    assert 7.0 < -x[0, 0] < 7.04 and 7.0 < x[0, 1] < 7.04
    u = map_to_laws(np.array([[0.0], [1.0]]), [Law("uniform", {"low": 2, "high": 4})])
    assert 2 < u[0, 0] < 2 + 1e-11 and 4 - 1e-11 < u[1, 0] < 4


@pytest.mark.parametrize("copies", [1, 2, 3])
def test_map_to_laws_maps_every_block_of_d_columns_through_the_d_laws(copies):
    d = len(MIXED)
    u = np.random.default_rng(copies).random((50, copies * d))
    x = map_to_laws(u, MIXED)
    assert x.shape == u.shape
    for k in range(copies):
        for j, law in enumerate(MIXED):
            np.testing.assert_array_equal(x[:, k * d + j], law.ppf(u[:, k * d + j]))
    # the column groups a Design keeps give the same map
    design = Design(MIXED, 4, 1, seed=0, copies=copies)
    np.testing.assert_array_equal(design.map(u), x)


def test_map_to_laws_refuses_a_width_that_is_not_a_multiple_of_d():
    with pytest.raises(ValueError, match=r"expected \(n, c·3\) uniforms"):
        map_to_laws(np.zeros((4, 4)), MIXED)
    with pytest.raises(ValueError, match="expected"):
        map_to_laws(np.zeros(6), MIXED)


def test_block_a_and_b_are_the_two_halves_of_the_mapped_uniforms():
    design = Design(MIXED, 64, 3, seed=4)
    blk = design.block(2, 16, 32)
    u = design.uniforms(2, 16, 32)
    assert (blk.rep, blk.start, blk.n, blk.d) == (2, 16, 32, 3)
    assert blk.rep_seed == design.rep_seed(2) == randomization_seeds(4, 3)[2]
    np.testing.assert_array_equal(blk.A, design.map(u)[:, :3])
    np.testing.assert_array_equal(blk.B, design.map(u)[:, 3:])
    np.testing.assert_array_equal(blk.X, np.hstack([blk.A, blk.B]))


def test_one_copy_gives_a_alone():
    design = Design(MIXED, 32, 1, seed=4, copies=1)
    blk = design.block(0, 0, 32)
    assert design.uniforms(0, 0, 32).shape == (32, 3)
    assert blk.A.shape == (32, 3) and blk.B.shape == (32, 0)


def test_design_arguments_are_checked():
    with pytest.raises(ValueError, match="at least 1"):
        Design(LAWS, 0, 1, seed=1)
    with pytest.raises(ValueError, match="replicates must be at least 1"):
        Design(LAWS, 8, 0, seed=1)
    with pytest.raises(ValueError, match="copies must be at least 1"):
        Design(LAWS, 8, 1, seed=1, copies=0)
    with pytest.raises(ValueError, match="at least one input"):
        Design([], 8, 1, seed=1)
    with pytest.raises(ValueError, match="3 seeds given for 2 randomizations"):
        Design(LAWS, 8, 2, seed=1, seeds=[1, 2, 3])
    design = Design(LAWS, 8, 2, seed=1)
    for start, n in ((-1, 2), (0, 0), (4, 5)):
        with pytest.raises(ValueError, match=r"outside \[0, 8\)"):
            design.uniforms(0, start, n)


def test_seeds_given_or_derived_from_the_root():
    derived = Design(LAWS, 16, 3, seed=8)
    assert derived.rep_seeds == randomization_seeds(8, 3)
    given = Design(LAWS, 16, 3, seed=99, seeds=randomization_seeds(8, 3))
    np.testing.assert_array_equal(given.uniforms(1, 0, 16), derived.uniforms(1, 0, 16))
    assert derived.rqmc and derived.ddof == 0
    mc = Design(LAWS, 10, 1, seed=8, sampler="mc")
    assert not mc.rqmc and mc.ddof == 1


def test_one_hot_inputs_give_valid_rows_and_leave_other_columns_as_they_were():
    from audit.inputs import Law as _Law

    colour = _Law("discrete", {"values": [0, 1, 2], "probabilities": [0.2, 0.5, 0.3]})
    laws = [_Law("uniform"), colour, _Law("normal")]
    plain = Design([_Law("uniform"), _Law("uniform"), _Law("normal")], 64, 2, seed=3)
    hot = Design(laws, 64, 2, seed=3, columns=[(0,), (1, 2, 3), (4,)])
    assert (hot.d, hot.inputs) == (5, 3)
    b, p = hot.block(1, 0, 64), plain.block(1, 0, 64)
    for part in (b.A, b.B):
        assert np.isin(part[:, 1:4], (0, 1)).all() and (part[:, 1:4].sum(axis=1) == 1).all()
    # the same uniforms: the other inputs are the values of the plain design, the category its code
    np.testing.assert_array_equal(b.A[:, [0, 4]], p.A[:, [0, 2]])
    np.testing.assert_array_equal(np.argmax(b.A[:, 1:4], axis=1), colour.ppf(p.A[:, 1]))
    assert hot.input_of(3) == 1 and hot.input_of(4) == 2
    with pytest.raises(ValueError, match=r"discrete law on 0\.\.2"):
        Design([_Law("uniform"), _Law("normal")], 8, 2, seed=1, columns=[(0,), (1, 2, 3)])


def test_an_inverse_cdf_that_overflows_gives_infinities_quietly():
    """The engine names the law that overflowed (exit 2); numpy's own warning would only add noise above it."""
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        x = map_to_laws(np.array([[0.999]]), [Law("lognormal", {"log_mean": 0.0, "log_sd": 400.0})])
    assert np.isinf(x).all()
