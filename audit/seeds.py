"""Every seed netdim derives, in one place.

A run has one root seed (an int, recorded in every report so the run can be
repeated exactly). Everything random is derived from it here:

* :func:`randomization_seeds` -- one int per independent randomization of a
  design: the first 64-bit word of each child of ``SeedSequence(seed)``;
* :func:`randomization_streams` -- the same children as ``SeedSequence``
  objects, which seed the engines of the RQMC gain measurement of ``advise``
  (the form netdim 0.1 used there; kept so that saved reports reproduce);
* :func:`child_seed` -- an int for a phase of a workflow (a pilot, each
  pre-integrated audit, the gain, the freezing check, the pairs of an
  audit; tags ``PILOT``, ``CANDIDATE``, ``GAIN``, ``FREEZE``, ``PAIRS``), so that the phases use independent
  points: ``SeedSequence([seed, *tags])``;
* :func:`independent_seed` -- the second model's seed when a comparison is run
  on independent points rather than the same ones.

References
----------
.. [1] :class:`numpy.random.SeedSequence` (spawning independent streams); the
   practice of deriving every stream from one recorded root seed is common
   practice, no source.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

__all__ = [
    "CANDIDATE",
    "EXPORTED",
    "FREEZE",
    "GAIN",
    "PAIRS",
    "PILOT",
    "SCREENED",
    "SEARCH",
    "SLOPES",
    "SOURCE_CHECK",
    "RandomizationSeeds",
    "child_seed",
    "independent_seed",
    "randomization_seeds",
    "randomization_stream",
    "randomization_streams",
    "resolve_seed",
]

#: Tags of the phases of ``advise`` and of the pairs of an audit (see :func:`child_seed`).
PILOT, CANDIDATE, GAIN, FREEZE, PAIRS = 1, 2, 3, 4, 5
#: Tags of the phases of ``simplify``: the search for freezing values, the checks on the source, the
#: audit of the written model.
SEARCH, SOURCE_CHECK, EXPORTED = 6, 7, 8
#: Tags of the phases of ``slopes``: the gradient points, and the screened audit.
SLOPES, SCREENED = 17, 18


def resolve_seed(seed: int | np.random.Generator | None) -> int:
    """An int seed from an int, a Generator, or fresh entropy (``None``).

    The int is what reports record, so that a run can be repeated exactly.

    Raises
    ------
    ValueError
        For anything else (a negative int, a float, a string).

    Examples
    --------
    >>> from audit.seeds import resolve_seed
    >>> resolve_seed(7)
    7
    """
    if seed is None:
        return int(np.random.SeedSequence().entropy % (2**63))
    if isinstance(seed, np.random.Generator):
        return int(seed.integers(2**63))
    if isinstance(seed, (bool, np.bool_)) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise ValueError(f"seed must be a non-negative int, a numpy Generator or None, got {seed!r}.")
    return int(seed)


def randomization_stream(seed: int, rep: int) -> np.random.SeedSequence:
    """Child ``rep`` of ``SeedSequence(seed)`` (what ``spawn`` would give), made on its own."""
    return np.random.SeedSequence(int(seed), spawn_key=(int(rep),))


def randomization_streams(seed: int, replicates: int) -> list[np.random.SeedSequence]:
    """The ``replicates`` independent children of ``SeedSequence(seed)``."""
    return [randomization_stream(seed, r) for r in range(int(replicates))]


class RandomizationSeeds(Sequence[int]):
    """One int seed per randomization, each made when first asked for: the first 64-bit word of
    child ``r`` of ``SeedSequence(seed)`` (so a design of a million randomizations costs nothing
    until it runs)."""

    def __init__(self, seed: int, replicates: int) -> None:
        self.seed, self.replicates = int(seed), int(replicates)
        self._cache: dict[int, int] = {}

    def __len__(self) -> int:
        return self.replicates

    def __eq__(self, other: object) -> bool:
        if isinstance(other, RandomizationSeeds):
            return (self.seed, self.replicates) == (other.seed, other.replicates)
        return isinstance(other, Sequence) and list(self) == list(other)

    def __hash__(self) -> int:
        return hash((self.seed, self.replicates))

    def __repr__(self) -> str:
        return f"RandomizationSeeds(seed={self.seed}, replicates={self.replicates})"

    def __getitem__(self, rep):  # type: ignore[override]
        if isinstance(rep, slice):
            return [self[r] for r in range(*rep.indices(self.replicates))]
        rep = int(rep)
        if rep < 0:
            rep += self.replicates
        if not 0 <= rep < self.replicates:
            raise IndexError(f"randomization {rep} of {self.replicates}")
        if rep not in self._cache:
            self._cache[rep] = int(randomization_stream(self.seed, rep).generate_state(1, np.uint64)[0])
        return self._cache[rep]


def randomization_seeds(seed: int, replicates: int) -> RandomizationSeeds:
    """One int seed per randomization: the first 64-bit word of each child stream.

    Examples
    --------
    >>> from audit.seeds import randomization_seeds
    >>> len(randomization_seeds(1, 4)), list(randomization_seeds(1, 4)) == list(randomization_seeds(1, 4))
    (4, True)
    """
    return RandomizationSeeds(seed, replicates)


def child_seed(seed: int, *tags: int) -> int:
    """An int seed for one phase of a workflow, independent of the root's other uses."""
    return int(np.random.SeedSequence([int(seed), *(int(t) for t in tags)]).generate_state(1, np.uint64)[0])


def independent_seed(seed: int) -> int:
    """The root seed of the second model in a comparison on independent points."""
    return (int(seed) + 0x5EED) % 2**63
