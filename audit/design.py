"""Point sets for pick-freeze estimation, generated block by block.

For each of R independent randomizations, a design draws N points
``U`` in ``[0, 1)^{2d}`` -- scrambled Sobol' points (randomized quasi-Monte
Carlo) or plain Monte Carlo -- and maps them through the input laws:
``A = F^{-1}(U[:, :d])``, ``B = F^{-1}(U[:, d:])``. ``A_B^{(j)}`` is ``A`` with
column j taken from ``B``.

Any block of rows ``[start, start + n)`` of any randomization can be made on
its own (scrambled Sobol' engines are seeded per randomization and fast
forwarded), so blocks can be generated in any order, in other processes or on
other machines, with identical results. Memory is bounded by the block size.

References
----------
.. [1] "Making a Sobol' sequence: scrambling", common practice, no source;
   the engine is :class:`scipy.stats.qmc.Sobol` with ``scramble=True``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.stats import qmc

from .inputs import Law

__all__ = ["SAMPLERS", "Block", "Design", "resolve_seed", "round_points"]

#: Valid point samplers.
SAMPLERS = ("sobol", "mc")

_MAXDIM = qmc.Sobol.MAXDIM
#: Uniform points are kept in [EPS, 1 - EPS] before the inverse CDF (normal law: |x| ≤ 7.03 sd).
EPS = 1e-12


def round_points(n: int) -> int:
    """Smallest power of two ``>= n`` (scrambled Sobol' points need one)."""
    if n < 1:
        raise ValueError(f"the number of points must be at least 1, got {n}.")
    return 1 << (int(n) - 1).bit_length()


def resolve_seed(seed: int | np.random.Generator | None) -> int:
    """An int seed from an int, a Generator, or fresh entropy (``None``).

    The int is what reports record, so that a run can be repeated exactly.
    """
    if seed is None:
        return int(np.random.SeedSequence().entropy % (2**63))
    if isinstance(seed, np.random.Generator):
        return int(seed.integers(2**63))
    if isinstance(seed, (bool, np.bool_)) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise ValueError(f"seed must be a non-negative int, a numpy Generator or None, got {seed!r}.")
    return int(seed)


@dataclass
class Block:
    """Rows ``[start, start + n)`` of randomization ``rep``, mapped through the laws."""

    rep: int
    start: int
    A: np.ndarray
    B: np.ndarray

    @property
    def n(self) -> int:
        return self.A.shape[0]


class Design:
    """Pick-freeze design with R randomizations of N points in dimension d.

    Parameters
    ----------
    laws : sequence of Law
        One law per feature.
    points : int
        N per randomization; must be a power of two for ``sampler="sobol"``
        (use :func:`round_points`).
    replicates : int
        Number R of independent randomizations.
    seed : int
        Root seed; randomization r uses a child of ``SeedSequence(seed)``.
    sampler : {"sobol", "mc"}
        Scrambled Sobol' points or plain Monte Carlo.

    Notes
    -----
    With ``sampler="sobol"`` one 2d-dimensional engine is used; when 2d
    exceeds scipy's limit (21201) A and B come from two independent
    d-dimensional engines.
    """

    def __init__(
        self,
        laws: Sequence[Law],
        points: int,
        replicates: int,
        seed: int,
        sampler: str = "sobol",
    ) -> None:
        if sampler not in SAMPLERS:
            raise ValueError(f"unknown sampler {sampler!r}; valid choices: {', '.join(SAMPLERS)}.")
        if points < 1:
            raise ValueError(f"points must be at least 1, got {points}.")
        if sampler == "sobol" and points & (points - 1):
            raise ValueError(f"points must be a power of two for scrambled Sobol' points, got {points}.")
        if replicates < 1:
            raise ValueError(f"replicates must be at least 1, got {replicates}.")
        self.laws = list(laws)
        self.d = len(self.laws)
        if self.d < 1:
            raise ValueError("a design needs at least one input.")
        if sampler == "sobol" and self.d > _MAXDIM:
            raise ValueError(f"scrambled Sobol' points support at most {_MAXDIM} inputs, got {self.d}.")
        self.points = int(points)
        self.replicates = int(replicates)
        self.seed = int(seed)
        self.sampler = sampler
        children = np.random.SeedSequence(self.seed).spawn(self.replicates)
        self._rep_seeds = [int(c.generate_state(1, np.uint64)[0]) for c in children]
        self._groups = _group_laws(self.laws)
        self._engines: dict[tuple[int, int], qmc.Sobol] = {}

    def rep_seed(self, rep: int) -> int:
        """The int seed of randomization ``rep``."""
        return self._rep_seeds[rep]

    def uniforms(self, rep: int, start: int, n: int) -> np.ndarray:
        """Rows ``[start, start + n)`` of the uniform points of randomization ``rep``, shape (n, 2d)."""
        if start < 0 or n < 1 or start + n > self.points:
            raise ValueError(f"rows [{start}, {start + n}) are outside [0, {self.points}).")
        seed = self._rep_seeds[rep]
        if self.sampler == "mc":
            rng = np.random.default_rng([seed, start])
            return rng.random((n, 2 * self.d))
        if 2 * self.d <= _MAXDIM:
            return self._sobol_rows(2 * self.d, seed, start, n)
        sa, sb = np.random.SeedSequence(seed).generate_state(2, np.uint64)
        return np.hstack([self._sobol_rows(self.d, int(sa), start, n), self._sobol_rows(self.d, int(sb), start, n)])

    def _sobol_rows(self, dim: int, seed: int, start: int, n: int) -> np.ndarray:
        """Rows of a seeded scrambled Sobol' engine; engines are kept, so consecutive blocks cost no rescrambling."""
        engine = self._engines.get((dim, seed))
        if engine is None or engine.num_generated > start:
            engine = qmc.Sobol(dim, scramble=True, rng=np.random.default_rng(seed))
            if len(self._engines) >= 4:  # one or two engines per randomization in use at a time
                self._engines.clear()
            self._engines[(dim, seed)] = engine
        if engine.num_generated < start:
            engine.fast_forward(start - engine.num_generated)
        return engine.random(n)

    def __getstate__(self) -> dict:
        state = dict(self.__dict__)
        state["_engines"] = {}  # engines are rebuilt where the design is sent (another process)
        return state

    def block(self, rep: int, start: int, n: int) -> Block:
        """Rows ``[start, start + n)`` of A and B for randomization ``rep``."""
        u = self.uniforms(rep, start, n)
        x = self.map(u)
        return Block(rep, start, x[:, : self.d], x[:, self.d :])

    def map(self, u: np.ndarray) -> np.ndarray:
        """Map uniform points (n, d) or (n, 2d) through the laws, column by column.

        Points are clipped to ``[EPS, 1 - EPS]`` first: scrambled Sobol' coordinates are
        multiples of 2^-30 and can be exactly 0, where an unbounded law's inverse CDF is infinite.
        """
        u = np.clip(u, EPS, 1 - EPS)
        x = np.empty_like(u)
        for law, cols in self._groups:
            c = cols if u.shape[1] == self.d else np.concatenate([cols, cols + self.d])
            x[:, c] = law.ppf(u[:, c])
        return x


def _group_laws(laws: Sequence[Law]) -> list[tuple[Law, np.ndarray]]:
    """Group columns that share a law, so each law maps its columns in one call."""
    groups: dict[tuple[str, tuple[float, ...]], list[int]] = {}
    first: dict[tuple[str, tuple[float, ...]], Law] = {}
    for j, law in enumerate(laws):
        key = (law.kind, tuple(law.params.values()))
        groups.setdefault(key, []).append(j)
        first.setdefault(key, law)
    return [(first[k], np.array(v)) for k, v in groups.items()]
