"""Seeds (audit.seeds): every stream derived from one recorded root seed, stable and distinct.

References: numpy.random.SeedSequence (spawning independent streams) defines the derivations;
the values below are recomputed from numpy, never copied from a run.
"""

import itertools

import numpy as np
import pytest

from audit.seeds import (
    CANDIDATE,
    FREEZE,
    GAIN,
    PILOT,
    child_seed,
    independent_seed,
    randomization_seeds,
    randomization_streams,
    resolve_seed,
)


def test_randomization_seeds_are_the_first_words_of_the_spawned_children():
    children = np.random.SeedSequence(5).spawn(4)
    assert randomization_seeds(5, 4) == [int(c.generate_state(1, np.uint64)[0]) for c in children]
    streams = randomization_streams(5, 4)
    assert [s.spawn_key for s in streams] == [(r,) for r in range(4)]
    assert [int(s.generate_state(1, np.uint64)[0]) for s in streams] == randomization_seeds(5, 4)


def test_randomization_seeds_are_stable_and_more_replicates_keep_the_first_ones():
    assert randomization_seeds(3, 8) == randomization_seeds(3, 8)
    assert randomization_seeds(3, 8)[:3] == randomization_seeds(3, 3)


def test_randomization_seeds_are_distinct_within_and_across_root_seeds():
    seeds = [s for root in range(50) for s in randomization_seeds(root, 8)]
    assert len(set(seeds)) == len(seeds)
    assert all(0 <= s < 2**64 for s in seeds)


def test_child_seeds_are_stable_and_distinct_per_phase_and_index():
    # the tags the workflows use: a pilot and a candidate per input, one gain, one freeze check. (A tag
    # alone equals the tag with index 0: SeedSequence ignores trailing zero words; netdim never uses both.)
    root = 2026
    tags = [(GAIN,), (FREEZE,), *[(PILOT, j) for j in range(5)], *[(CANDIDATE, j) for j in range(5)]]
    seeds = [child_seed(root, *t) for t in tags]
    assert seeds == [child_seed(root, *t) for t in tags]
    assert len(set(seeds)) == len(seeds)
    assert seeds[2] == int(np.random.SeedSequence([root, PILOT, 0]).generate_state(1, np.uint64)[0])
    assert set(seeds).isdisjoint(randomization_seeds(root, 64))
    assert len({PILOT, CANDIDATE, GAIN, FREEZE}) == 4


def test_independent_seed_gives_other_points():
    for root in (0, 1, 2**63 - 1):
        other = independent_seed(root)
        assert other != root and 0 <= other < 2**63 and other == independent_seed(root)
    assert set(randomization_seeds(7, 8)).isdisjoint(randomization_seeds(independent_seed(7), 8))


def test_resolve_seed_accepts_ints_generators_and_none():
    assert resolve_seed(7) == 7 and type(resolve_seed(np.int64(7))) is int
    fresh = [resolve_seed(None) for _ in range(4)]
    assert all(isinstance(s, int) and 0 <= s < 2**63 for s in fresh)
    assert len(set(fresh)) == 4  # fresh entropy each time (a repeat has probability ~1e-18)
    rng = np.random.default_rng(3)
    a, b = resolve_seed(rng), resolve_seed(rng)
    assert a != b  # the generator advances
    assert a == resolve_seed(np.random.default_rng(3))


@pytest.mark.parametrize("bad", [-1, True, np.bool_(False), 1.0, "3", [1]])
def test_resolve_seed_refuses_anything_else(bad):
    with pytest.raises(ValueError, match="non-negative int"):
        resolve_seed(bad)


def test_every_phase_of_a_run_draws_other_points():
    # the randomizations of the audit, its pilot, candidates, gain and freeze check never share a seed
    root = 11
    pools = [randomization_seeds(root, 8)]
    pools += [randomization_seeds(child_seed(root, tag), 8) for tag in (GAIN, FREEZE)]
    pools += [randomization_seeds(child_seed(root, CANDIDATE, j), 8) for j in range(3)]
    for a, b in itertools.combinations(pools, 2):
        assert set(a).isdisjoint(b)
