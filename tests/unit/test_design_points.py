"""Point sets (audit.design.points): any block of rows of any randomization, on its own, gives the same values."""

import itertools
import pickle

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import qmc

from audit.design import Design
from audit.design.points import POINT_SETS, SOBOL_MAXDIM, MonteCarlo, ScrambledSobol, make_point_set
from audit.inputs import Law
from audit.seeds import randomization_seeds, randomization_streams

LAWS = [Law("uniform")] * 3
N = 128
SEEDS = randomization_seeds(11, 3)
# blocks of any size are the point here; scipy warns that only powers of two are balanced
pytestmark = pytest.mark.filterwarnings("ignore:The balance properties of Sobol:UserWarning")


def test_scrambled_sobol_points_are_a_balanced_net():
    # each scrambled Sobol' randomization of 2^m points puts exactly one point in each of the
    # 2^m elementary intervals of each coordinate (common practice, no source)
    u = Design(LAWS, 128, 1, seed=2).uniforms(0, 0, 128)
    for j in range(u.shape[1]):
        assert np.array_equal(np.sort(np.floor(u[:, j] * 128)), np.arange(128))
    assert qmc.discrepancy(u) < qmc.discrepancy(np.random.default_rng(0).random(u.shape))


def test_scrambled_sobol_rows_are_scipys_scrambled_sobol_sequence():
    # the module's reference: scipy.stats.qmc.Sobol with scramble=True, one engine per randomization
    points = ScrambledSobol(5, SEEDS)
    for rep, seed in enumerate(SEEDS):
        ref = qmc.Sobol(5, scramble=True, rng=np.random.default_rng(seed)).random(N)
        np.testing.assert_array_equal(points.uniforms(rep, 0, N), ref)


def _splits(n: int):
    """Any split of rows 0..n-1 into consecutive blocks, made in any order."""
    cuts = st.lists(st.integers(1, n - 1), unique=True, max_size=8).map(sorted)
    return cuts.map(lambda c: list(itertools.pairwise([0, *c, n]))).flatmap(st.permutations)


@settings(max_examples=25, deadline=None)
@given(blocks=_splits(N), rep=st.integers(0, 2), parts=st.sampled_from([None, 2, 3]))
def test_any_split_of_rows_gives_identical_scrambled_sobol_uniforms(blocks, rep, parts):
    whole = ScrambledSobol(7, SEEDS, parts=parts).uniforms(rep, 0, N)
    points = ScrambledSobol(7, SEEDS, parts=parts)  # one instance for every block: scrambles are reused
    got = np.empty_like(whole)
    for a, b in blocks:
        got[a:b] = points.uniforms(rep, a, b - a)
    np.testing.assert_array_equal(got, whole)


def test_interleaved_randomizations_and_blocks_going_back_give_the_same_rows():
    points = ScrambledSobol(4, SEEDS)
    ref = {rep: ScrambledSobol(4, SEEDS).uniforms(rep, 0, N) for rep in range(3)}
    requests = [(0, 0, 32), (1, 0, 16), (0, 32, 32), (2, 64, 64), (1, 16, 100), (0, 8, 8), (2, 0, 64), (0, 64, 64)]
    for rep, start, n in requests:
        np.testing.assert_array_equal(points.uniforms(rep, start, n), ref[rep][start : start + n])


def test_a_pickled_point_set_redraws_its_scrambles_and_gives_the_same_rows():
    points = ScrambledSobol(4, SEEDS, parts=2)
    first = points.uniforms(1, 0, 64)
    copy = pickle.loads(pickle.dumps(points))
    assert copy._states == {}  # scrambles are not sent to another process
    np.testing.assert_array_equal(copy.uniforms(1, 32, 32), first[32:])


def test_multi_engine_split_scrambles_each_part_from_the_randomization_seed():
    points = ScrambledSobol(7, SEEDS, parts=3)
    assert points.parts == 3 and points.widths == [3, 2, 2]
    u = points.uniforms(2, 0, N)
    assert u.shape == (N, 7)
    # part p is its own scrambled Sobol' engine, seeded by word p of SeedSequence(seed)
    words = np.random.SeedSequence(SEEDS[2]).generate_state(3, np.uint64)
    bounds = np.cumsum([0, *points.widths])
    for p, (a, b) in enumerate(itertools.pairwise(bounds)):
        ref = qmc.Sobol(b - a, scramble=True, rng=np.random.default_rng(int(words[p]))).random(N)
        np.testing.assert_array_equal(u[:, a:b], ref)
    # every column of every part is a balanced net on its own (see the first test)
    for j in range(7):
        assert np.array_equal(np.sort(np.floor(u[:, j] * N)), np.arange(N))


def test_parts_follow_the_engine_dimension_limit():
    # no engine is built until rows are asked for, so wide point sets cost nothing here
    assert ScrambledSobol(SOBOL_MAXDIM, [1]).parts == 1
    wide = ScrambledSobol(SOBOL_MAXDIM + 1, [1])
    assert wide.parts == 2 and wide.widths == [10601, 10601]
    assert ScrambledSobol(3 * SOBOL_MAXDIM + 1, [1]).parts == 4
    assert max(ScrambledSobol(3 * SOBOL_MAXDIM + 1, [1]).widths) <= SOBOL_MAXDIM
    with pytest.raises(ValueError, match="dimensions per engine"):
        ScrambledSobol(SOBOL_MAXDIM + 1, [1], parts=1)
    with pytest.raises(ValueError, match="dimensions per engine"):
        ScrambledSobol(3, [1], parts=4)  # a part without columns


def test_multi_engine_split_accepts_seed_sequences():
    points = ScrambledSobol(4, randomization_streams(1, 2), parts=2)
    assert points.uniforms(0, 0, 8).shape == (8, 4)


def test_monte_carlo_rows_repeat_with_the_seed_and_differ_between_randomizations():
    a, b = MonteCarlo(3, SEEDS), MonteCarlo(3, SEEDS)
    np.testing.assert_array_equal(a.uniforms(1, 32, 16), b.uniforms(1, 32, 16))
    assert not np.allclose(a.uniforms(0, 0, 16), a.uniforms(1, 0, 16))
    u = a.uniforms(2, 0, 1000)
    assert u.shape == (1000, 3) and u.min() >= 0 and u.max() < 1


def test_any_split_of_rows_gives_identical_monte_carlo_uniforms():
    points = MonteCarlo(3, SEEDS)
    whole = points.uniforms(0, 0, 64)
    np.testing.assert_array_equal(np.vstack([points.uniforms(0, 0, 32), points.uniforms(0, 32, 32)]), whole)


def test_registry_names_and_properties():
    assert set(POINT_SETS) == {"sobol", "mc"}
    sobol, mc = make_point_set("sobol", 3, SEEDS), make_point_set("mc", 3, SEEDS)
    assert (sobol.name, sobol.rqmc, sobol.ddof, sobol.dim) == ("sobol", True, 0, 3)
    assert (mc.name, mc.rqmc, mc.ddof, mc.dim) == ("mc", False, 1, 3)
    with pytest.raises(ValueError, match="valid choices: sobol, mc"):
        make_point_set("halton", 3, SEEDS)
