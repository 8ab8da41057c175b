"""Point sets on the unit cube, any block of rows of any randomization on its own.

A point set draws, for each of R independent randomizations, N points in
``[0, 1)^dim``; :meth:`~ScrambledSobol.uniforms` returns rows ``[start, start + n)``
of one randomization, so blocks can be made in any order, in other processes or
on other machines, with identical values.

``POINT_SETS`` is the registry: a point set is one class here with a ``name``,
whether its replicates are randomized quasi-Monte Carlo (``rqmc``), the variance
divisor its points call for (``ddof``) and ``uniforms``. Adding one touches this
module, the registry and its tests.

References
----------
.. [1] Scrambled Sobol' points are :class:`scipy.stats.qmc.Sobol` with
   ``scramble=True`` (made by :mod:`audit.design.scramble`, the same points without
   scipy's engines); independent scramblings give independent replicates of an
   unbiased estimate (randomized quasi-Monte Carlo: common practice, no source).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Protocol

import numpy as np

from .scramble import MAXDIM, sobol_rows, sobol_state

__all__ = ["POINT_SETS", "MonteCarlo", "PointSet", "ScrambledSobol", "make_point_set"]

#: scipy's Sobol' engines support at most this many dimensions (``qmc.Sobol.MAXDIM``).
SOBOL_MAXDIM = MAXDIM

Seed = int | np.random.SeedSequence


class PointSet(Protocol):
    """What a design needs of a point set."""

    name: str
    rqmc: bool
    ddof: int
    dim: int

    def uniforms(self, rep: int, start: int, n: int) -> np.ndarray:
        """Rows ``[start, start + n)`` of randomization ``rep``, shape (n, dim)."""
        ...


class ScrambledSobol:
    """Independently scrambled Sobol' sequences, one per randomization.

    Parameters
    ----------
    dim : int
        Dimension of the points.
    seeds : sequence of int or SeedSequence
        One seed per randomization (:mod:`audit.seeds`).
    parts : int, optional
        Split the columns into this many independently scrambled engines of
        (nearly) equal width; by default one engine, or as many as the engine's
        dimension limit needs (each randomization's engines are seeded from its seed).

    Notes
    -----
    The points are scipy's (``qmc.Sobol(w, scramble=True, rng=default_rng(seed))``),
    made by :mod:`audit.design.scramble` without importing :mod:`scipy.stats`. Each
    randomization's scramble is kept between calls; any block comes straight from it
    (no engine position), so blocks may be drawn in any order and from any thread.
    Scrambled Sobol' coordinates are multiples of 2^-30 and may be exactly 0.
    """

    name = "sobol"
    rqmc = True
    #: The sample mean of RQMC points varies far less than sigma^2 / n, so the sum of squares
    #: about it estimates n sigma^2 (divide by N), not (n - 1) sigma^2.
    ddof = 0

    def __init__(self, dim: int, seeds: Sequence[Seed], parts: int | None = None) -> None:
        self.dim = int(dim)
        self.seeds = seeds
        self.parts = int(parts) if parts is not None else -(-self.dim // SOBOL_MAXDIM)
        self.widths = [len(c) for c in np.array_split(np.arange(self.dim), self.parts)]
        if min(self.widths) < 1 or max(self.widths) > SOBOL_MAXDIM:
            raise ValueError(
                f"scrambled Sobol' points support 1..{SOBOL_MAXDIM} dimensions per engine; "
                f"got {self.dim} in {self.parts} part(s)."
            )
        self._states: dict[tuple[int, int], tuple[np.ndarray, np.ndarray]] = {}

    def _part_seeds(self, rep: int) -> list[Seed]:
        seed = self.seeds[rep]
        if self.parts == 1:
            return [seed]
        sequence = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(int(seed))
        words = sequence.generate_state(self.parts, np.uint64)
        return [int(w) for w in words]

    def _rows(self, key: tuple[int, int], dim: int, seed: Seed, start: int, n: int) -> np.ndarray:
        state = self._states.get(key)
        if state is None:
            state = sobol_state(dim, seed)
            if len(self._states) >= max(4, 2 * self.parts):  # few randomizations are in use at a time
                self._states.clear()
            self._states[key] = state
        return sobol_rows(state, start, n)

    def uniforms(self, rep: int, start: int, n: int) -> np.ndarray:
        seeds = self._part_seeds(rep)
        blocks = [self._rows((rep, p), w, seeds[p], start, n) for p, w in enumerate(self.widths)]
        return blocks[0] if len(blocks) == 1 else np.hstack(blocks)

    def __getstate__(self) -> dict:
        state = dict(self.__dict__)
        state["_states"] = {}  # scrambles are redrawn where the point set is sent (another process)
        return state


class MonteCarlo:
    """Plain Monte Carlo points: independent uniforms from one seeded stream per chunk of rows.

    Rows are drawn in fixed chunks of :attr:`CHUNK` (chunk c from the stream seeded by
    ``[seed, c]``), so any block of rows has the same values however the rows are split.

    Parameters
    ----------
    dim : int
    seeds : sequence of int
        One seed per randomization.
    """

    name = "mc"
    rqmc = False
    ddof = 1
    #: Rows per independently seeded chunk.
    CHUNK = 1024

    def __init__(self, dim: int, seeds: Sequence[Seed], parts: int | None = None) -> None:
        self.dim = int(dim)
        self.seeds = seeds

    def uniforms(self, rep: int, start: int, n: int) -> np.ndarray:
        first, last = start // self.CHUNK, (start + n - 1) // self.CHUNK
        seed = int(self.seeds[rep])
        chunks = [np.random.default_rng([seed, c]).random((self.CHUNK, self.dim)) for c in range(first, last + 1)]
        rows = chunks[0] if len(chunks) == 1 else np.concatenate(chunks)
        offset = start - first * self.CHUNK
        return rows[offset : offset + n]


#: Valid point sets, by name.
POINT_SETS: dict[str, type] = {"sobol": ScrambledSobol, "mc": MonteCarlo}


def make_point_set(name: str, dim: int, seeds: Sequence[Seed]) -> PointSet:
    """The point set ``name`` of dimension ``dim`` with one seed per randomization.

    Raises
    ------
    ValueError
        For an unknown name (listing the valid ones).

    Examples
    --------
    >>> from audit.design.points import make_point_set
    >>> make_point_set("sobol", 3, [1, 2]).uniforms(0, 0, 4).shape
    (4, 3)
    """
    if name not in POINT_SETS:
        raise ValueError(f"unknown point set {name!r}; valid choices: {', '.join(POINT_SETS)}.")
    return POINT_SETS[name](dim, seeds)
