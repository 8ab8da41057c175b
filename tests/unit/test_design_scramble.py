"""Fast scrambled Sobol' engines against scipy's own (``scipy.stats.qmc.Sobol``, scramble=True).

The reference is outside the project: scipy's constructor with ``rng=default_rng(seed)``;
every point must be equal bit for bit, before and after ``fast_forward``.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import qmc

from audit.design import scramble
from audit.design.scramble import sobol_engine


def _scipy(dim: int, seed) -> qmc.Sobol:
    return qmc.Sobol(dim, scramble=True, rng=np.random.default_rng(seed))


@settings(max_examples=40, deadline=None)
@given(dim=st.integers(1, 80), seed=st.integers(0, 2**63 - 1), skip=st.integers(0, 300), n=st.integers(1, 70))
def test_points_equal_scipys(dim: int, seed: int, skip: int, n: int) -> None:
    ours, theirs = sobol_engine(dim, seed), _scipy(dim, seed)
    assert np.array_equal(ours.random(16), theirs.random(16))
    ours.fast_forward(skip)
    theirs.fast_forward(skip)
    assert np.array_equal(ours.random(n), theirs.random(n))


@pytest.mark.parametrize("dim", [1, 1025, 2500])  # one and several chunks of the batched product
def test_large_dimensions_equal_scipys(dim: int) -> None:
    assert np.array_equal(sobol_engine(dim, 11).random(8), _scipy(dim, 11).random(8))


def test_seed_sequences_give_the_same_engine_every_time() -> None:
    seq = np.random.SeedSequence(2024).spawn(3)[1]
    first = sobol_engine(4, seq).random(8)
    again = sobol_engine(4, seq).random(8)  # scipy alone would spawn a second child here
    fresh = _scipy(4, np.random.SeedSequence(2024).spawn(3)[1]).random(8)
    assert np.array_equal(first, again)
    assert np.array_equal(first, fresh)


def test_engines_are_independent_of_each_other() -> None:
    a, b = sobol_engine(3, 5), sobol_engine(3, 5)
    a.random(32)
    assert np.array_equal(b.random(4), _scipy(3, 5).random(4))
    assert not np.array_equal(sobol_engine(3, 6).random(4), b.random(4))


def test_a_scipy_that_scrambles_otherwise_falls_back(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(scramble, "_verified", {})
    real = scramble._scrambled_state

    def wrong(plain, v_bits, rng):
        sv, shift = real(plain, v_bits, rng)
        return sv ^ np.uint32(1), shift

    monkeypatch.setattr(scramble, "_scrambled_state", wrong)
    engine = sobol_engine(7, 3)
    assert scramble._verified[7] is False
    assert np.array_equal(engine.random(8), _scipy(7, 3).random(8))
    assert np.array_equal(sobol_engine(7, 4).random(8), _scipy(7, 4).random(8))  # scipy's from then on


def test_too_many_dimensions_raise_scipys_error() -> None:
    with pytest.raises(ValueError, match="dimensionality"):
        sobol_engine(qmc.Sobol.MAXDIM + 1, 0)
