"""Scrambled Sobol' points without scipy's engines, against scipy's own (``scipy.stats.qmc.Sobol``).

The reference is outside the project: scipy's engine with ``rng=default_rng(seed)``
(scrambled) or ``scramble=False`` (its direction numbers); every value must be equal
bit for bit, from the first point and after ``fast_forward``.
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import qmc

from audit.design.scramble import MAXDIM, direction_numbers, sobol_rows, sobol_state


def _scipy(dim: int, seed) -> qmc.Sobol:
    return qmc.Sobol(dim, scramble=True, rng=np.random.default_rng(seed))


@pytest.mark.parametrize("dim", [1, 2, 3, 40, 1111, MAXDIM])
def test_direction_numbers_are_scipys(dim: int) -> None:
    assert np.array_equal(direction_numbers(dim), qmc.Sobol(dim, scramble=False)._sv)


@settings(max_examples=40, deadline=None)
@given(dim=st.integers(1, 80), seed=st.integers(0, 2**63 - 1), skip=st.integers(0, 3000), n=st.integers(1, 70))
def test_points_equal_scipys(dim: int, seed: int, skip: int, n: int) -> None:
    state = sobol_state(dim, seed)
    theirs = _scipy(dim, seed)
    assert np.array_equal(sobol_rows(state, 0, 16), theirs.random(16))
    theirs.fast_forward(skip)
    assert np.array_equal(sobol_rows(state, 16 + skip, n), theirs.random(n))


@pytest.mark.parametrize("dim", [1025, 2500])  # several chunks of the batched scramble
def test_large_dimensions_equal_scipys(dim: int) -> None:
    assert np.array_equal(sobol_rows(sobol_state(dim, 11), 0, 8), _scipy(dim, 11).random(8))


def test_blocks_in_any_order_equal_the_whole() -> None:
    state = sobol_state(5, 3)
    whole = sobol_rows(state, 0, 1000)
    parts = [sobol_rows(state, s, n) for s, n in [(700, 300), (0, 1), (1, 511), (512, 188)]]
    assert np.array_equal(np.concatenate([parts[1], parts[2], parts[3], parts[0]]), whole)
    assert sobol_rows(state, 10, 0).shape == (0, 5)


def test_seed_sequences_give_the_same_points_every_time() -> None:
    seq = np.random.SeedSequence(2024).spawn(3)[1]
    first = sobol_rows(sobol_state(4, seq), 0, 8)
    again = sobol_rows(sobol_state(4, seq), 0, 8)  # scipy alone would spawn a second child here
    fresh = _scipy(4, np.random.SeedSequence(2024).spawn(3)[1]).random(8)
    assert np.array_equal(first, again) and np.array_equal(first, fresh)


def test_limits_are_refused_with_the_valid_range() -> None:
    with pytest.raises(ValueError, match=r"1\.\.21201 dimensions"):
        sobol_state(MAXDIM + 1, 0)
    with pytest.raises(ValueError, match="outside the 2"):
        sobol_rows(sobol_state(2, 0), 2**30 - 1, 2)


def test_points_need_no_scipy_stats() -> None:
    code = (
        "import sys; from audit.design.scramble import sobol_rows, sobol_state; "
        "sobol_rows(sobol_state(3, 1), 0, 4); print('scipy.stats' in sys.modules)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2**32), pairs=st.integers(1, 3000), before=st.integers(0, 50))
def test_fair_bits_are_the_generators_own_draws(seed: int, pairs: int, before: int) -> None:
    """The scramble's bits come from raw outputs; numpy's ``Generator.integers(2, dtype=uint32)``,
    which scipy's engine calls, is the reference, after any even number of earlier draws."""
    from audit.design.scramble import _fair_bits

    mine, theirs = np.random.PCG64(seed), np.random.Generator(np.random.PCG64(seed))
    _fair_bits(mine, 2 * before), theirs.integers(2, size=2 * before, dtype=np.uint32)
    want = theirs.integers(2, size=2 * pairs, dtype=np.uint32)
    np.testing.assert_array_equal(_fair_bits(mine, 2 * pairs), want)
