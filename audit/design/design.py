"""Designs: R randomizations of N points, mapped through the input laws block by block.

For each of R independent randomizations a design draws N points
``U`` in ``[0, 1)^{c d}`` from a point set (:mod:`audit.design.points`) and maps
each block of d columns through the input laws (:func:`map_to_laws`). With
``copies = 2`` (pick-freeze estimators) the two blocks are ``A = F^{-1}(U[:, :d])``
and ``B = F^{-1}(U[:, d:])``; ``A_B^{(j)}`` is ``A`` with column j taken from ``B``.

Any block of rows ``[start, start + n)`` of any randomization can be made on
its own, so blocks can be generated in any order, in other processes or on
other machines, with identical results. Memory is bounded by the block size.

Every workflow maps uniforms through :func:`map_to_laws`, the one place that
clips them away from 0 and 1.

Inputs and model columns: by default every input is one model column. A design
given ``columns`` (the model columns of each input, :class:`audit.inputs.variables.Variables`)
draws one uniform per input and writes d model columns: an input of one column
gets its law's value there; an input of k columns is a one-hot block whose law
is discrete on the codes 0..k−1, and gets a 1 in the column of the drawn code
and 0 in the others (:func:`map_variables`). So rows are always valid one-hot
vectors, and ``A_B^{(j)}`` rows that take a block's columns from B take a whole
category. Without ``columns`` nothing changes: the same uniforms, the same numbers.

References
----------
.. [1] The pick-freeze layout (A, B, A_B^{(j)}): "Variance based sensitivity
   analysis of model output. Design and estimator for the total sensitivity
   index", Computer Physics Communications, 2010.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..inputs.laws import Law
from ..seeds import randomization_seeds
from .points import POINT_SETS, PointSet, Seed, make_point_set

__all__ = ["EPS", "SAMPLERS", "Block", "Design", "map_to_laws", "map_variables", "round_points"]

#: Valid point sets (``sampler`` values).
SAMPLERS = tuple(POINT_SETS)
#: Uniform points are kept in [EPS, 1 - EPS] before the inverse CDF (normal law: |x| ≤ 7.03 sd).
EPS = 1e-12


def round_points(n: int) -> int:
    """Smallest power of two ``>= n`` (scrambled Sobol' points need one)."""
    if n < 1:
        raise ValueError(f"the number of points must be at least 1, got {n}.")
    return 1 << (int(n) - 1).bit_length()


def _law_groups(laws: Sequence[Law]) -> list[tuple[Law, np.ndarray]]:
    """Columns that share a law, so each law maps its columns in one call."""
    groups: dict[tuple[str, tuple[float, ...]], list[int]] = {}
    first: dict[tuple[str, tuple[float, ...]], Law] = {}
    for j, law in enumerate(laws):
        key = (law.kind, tuple(law.params.values()))
        groups.setdefault(key, []).append(j)
        first.setdefault(key, law)
    return [(first[k], np.array(v)) for k, v in groups.items()]


def map_to_laws(u: np.ndarray, laws: Sequence[Law], groups: list[tuple[Law, np.ndarray]] | None = None) -> np.ndarray:
    """Map uniform points through the laws: ``c`` blocks of ``len(laws)`` columns each.

    Parameters
    ----------
    u : ndarray, shape (n, c d)
        Uniform points; every block of d columns is mapped through the d laws.
    laws : sequence of Law
        The d input laws.
    groups : list, optional
        Precomputed column groups of equal laws (what :class:`Design` keeps).

    Returns
    -------
    ndarray, shape (n, c d)

    Notes
    -----
    Points are clipped to ``[EPS, 1 - EPS]`` first: scrambled Sobol' coordinates are
    multiples of 2^-30 and can be exactly 0, where an unbounded law's inverse CDF is infinite.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.design import map_to_laws
    >>> from audit.inputs import Law
    >>> map_to_laws(np.array([[0.5, 0.5]]), [Law("normal"), Law("uniform", {"low": 2, "high": 4})])
    array([[0., 3.]])
    """
    d = len(laws)
    if u.ndim != 2 or u.shape[1] % d:
        raise ValueError(f"expected (n, c·{d}) uniforms, got shape {u.shape}.")
    copies = u.shape[1] // d
    groups = groups if groups is not None else _law_groups(laws)
    u = np.clip(u, EPS, 1 - EPS)
    if len(groups) == 1:  # one law for every input: no columns to gather and scatter
        with np.errstate(over="ignore"):
            return np.asarray(groups[0][0].ppf(u), dtype=np.float64)
    x = np.empty_like(u)
    with np.errstate(over="ignore"):  # an inverse CDF that overflows is reported by the engine, by name
        for law, cols in groups:
            c = cols if copies == 1 else np.concatenate([cols + k * d for k in range(copies)])
            x[:, c] = law.ppf(u[:, c])
    return x


def _check_spans(laws: Sequence[Law], spans: Sequence[tuple[int, ...]]) -> int:
    """The number of model columns of ``spans``; every column written once, one-hot laws on 0..k−1."""
    if len(spans) != len(laws):
        raise ValueError(f"{len(spans)} column spans given for {len(laws)} inputs.")
    cols = sorted(c for span in spans for c in span)
    if cols != list(range(len(cols))):
        raise ValueError("the inputs' columns must cover 0..d−1, each column once.")
    for law, span in zip(laws, spans, strict=True):
        if len(span) > 1 and (not law.discrete or law.params["values"] != tuple(float(v) for v in range(len(span)))):
            raise ValueError(f"a one-hot input of {len(span)} columns needs a discrete law on 0..{len(span) - 1}.")
    return len(cols)


def map_variables(
    u: np.ndarray,
    laws: Sequence[Law],
    spans: Sequence[tuple[int, ...]],
    d: int,
    groups: list[tuple[Law, np.ndarray]] | None = None,
) -> np.ndarray:
    """Map uniforms of the inputs to model columns: ``c`` blocks of ``len(laws)`` uniforms to c blocks of d columns.

    Parameters
    ----------
    u : ndarray, shape (n, c V)
        One uniform per input (V = ``len(laws)``) per block.
    laws : sequence of Law
        The V input laws.
    spans : sequence of tuple of int
        The model columns of each input: one column, or the k columns of a one-hot block.
    d : int
        Model columns.
    groups : list, optional
        Precomputed column groups of equal laws.

    Returns
    -------
    ndarray, shape (n, c d)

    Examples
    --------
    >>> import numpy as np
    >>> from audit.design import map_variables
    >>> from audit.inputs import Law
    >>> colour = Law("discrete", {"values": [0, 1, 2]})
    >>> map_variables(np.array([[0.5, 0.9]]), [Law("uniform"), colour], [(0,), (1, 2, 3)], 4)
    array([[0.5, 0. , 0. , 1. ]])
    """
    v = len(laws)
    values = map_to_laws(u, laws, groups)
    copies = values.shape[1] // v
    n = values.shape[0]
    x = np.zeros((n, copies * d))
    rows = np.arange(n)
    for i, span in enumerate(spans):
        for k in range(copies):
            value = values[:, k * v + i]
            if len(span) == 1:
                x[:, k * d + span[0]] = value
            else:
                x[rows, k * d + np.asarray(span)[value.astype(np.intp)]] = 1.0
    return x


@dataclass
class Block:
    """Rows ``[start, start + n)`` of randomization ``rep``, mapped through the laws.

    ``X`` holds ``copies`` blocks of d columns; ``A`` and ``B`` are the first two.
    """

    rep: int
    start: int
    X: np.ndarray
    d: int
    rep_seed: Seed

    @property
    def n(self) -> int:
        return self.X.shape[0]

    @property
    def A(self) -> np.ndarray:  # noqa: N802 (the design's A and B, as in the literature)
        return self.X[:, : self.d]

    @property
    def B(self) -> np.ndarray:  # noqa: N802
        return self.X[:, self.d : 2 * self.d]


class Design:
    """R randomizations of N points in dimension ``copies · d``, mapped through the laws.

    Parameters
    ----------
    laws : sequence of Law
        One law per input.
    points : int
        N per randomization; a power of two for ``sampler="sobol"`` (use :func:`round_points`).
    replicates : int
        Number R of independent randomizations.
    seed : int
        Root seed; randomization r uses ``randomization_seeds(seed, R)[r]`` (:mod:`audit.seeds`).
    sampler : {"sobol", "mc"}
        Scrambled Sobol' points or plain Monte Carlo (:data:`audit.design.points.POINT_SETS`).
    copies : int
        Blocks of d uniform columns per point: 2 for pick-freeze estimators (A and B), 1 for
        estimators that need A only.
    seeds : sequence of int or SeedSequence, optional
        The per-randomization seeds themselves (default from ``seed`` as above).
    columns : sequence of tuple of int, optional
        The model columns of each input (default: input j is column j). Inputs
        of several columns are one-hot blocks (:func:`map_variables`); ``d`` is
        then the number of model columns and ``inputs`` the number of laws.

    Examples
    --------
    >>> from audit.design import Design
    >>> from audit.inputs import Law
    >>> b = Design([Law("uniform")] * 3, points=8, replicates=2, seed=1).block(1, 4, 4)
    >>> b.A.shape, b.B.shape
    ((4, 3), (4, 3))
    """

    def __init__(
        self,
        laws: Sequence[Law],
        points: int,
        replicates: int,
        seed: int,
        sampler: str = "sobol",
        *,
        copies: int = 2,
        seeds: Sequence[Seed] | None = None,
        columns: Sequence[Sequence[int]] | None = None,
    ) -> None:
        if sampler not in POINT_SETS:
            raise ValueError(f"unknown sampler {sampler!r}; valid choices: {', '.join(POINT_SETS)}.")
        if points < 1:
            raise ValueError(f"points must be at least 1, got {points}.")
        if sampler == "sobol" and points & (points - 1):
            raise ValueError(f"points must be a power of two for scrambled Sobol' points, got {points}.")
        if replicates < 1:
            raise ValueError(f"replicates must be at least 1, got {replicates}.")
        if copies < 1:
            raise ValueError(f"copies must be at least 1, got {copies}.")
        self.laws = list(laws)
        self.inputs = len(self.laws)
        if self.inputs < 1:
            raise ValueError("a design needs at least one input.")
        spans = None if columns is None else [tuple(int(c) for c in span) for span in columns]
        if spans is not None and all(span == (j,) for j, span in enumerate(spans)) and len(spans) == self.inputs:
            spans = None
        self.spans: list[tuple[int, ...]] | None = spans
        self.d = self.inputs if spans is None else _check_spans(self.laws, spans)
        self.points = int(points)
        self.replicates = int(replicates)
        self.seed = int(seed)
        self.sampler = sampler
        self.copies = int(copies)
        self.rep_seeds: Sequence[Seed] = list(seeds) if seeds is not None else randomization_seeds(seed, replicates)
        if len(self.rep_seeds) != self.replicates:
            raise ValueError(f"{len(self.rep_seeds)} seeds given for {self.replicates} randomizations.")
        self.points_set: PointSet = make_point_set(sampler, self.copies * self.inputs, self.rep_seeds)
        self._groups = _law_groups(self.laws)

    @property
    def rqmc(self) -> bool:
        """True for randomized quasi-Monte Carlo points."""
        return bool(self.points_set.rqmc)

    @property
    def ddof(self) -> int:
        """Variance divisor ``count - ddof`` suited to the points (see the point set)."""
        return int(self.points_set.ddof)

    def rep_seed(self, rep: int) -> Seed:
        """The seed of randomization ``rep``."""
        return self.rep_seeds[rep]

    def input_of(self, column: int) -> int:
        """The input that writes model column ``column``."""
        if self.spans is None:
            return column
        return next(i for i, span in enumerate(self.spans) if column in span)

    def uniforms(self, rep: int, start: int, n: int) -> np.ndarray:
        """Rows ``[start, start + n)`` of the uniform points of randomization ``rep``, shape (n, copies·inputs)."""
        if start < 0 or n < 1 or start + n > self.points:
            raise ValueError(f"rows [{start}, {start + n}) are outside [0, {self.points}).")
        return self.points_set.uniforms(rep, start, n)

    def block(self, rep: int, start: int, n: int) -> Block:
        """Rows ``[start, start + n)`` of randomization ``rep``, mapped through the laws."""
        x = self.map(self.uniforms(rep, start, n))
        return Block(rep, start, x, self.d, self.rep_seeds[rep])

    def map(self, u: np.ndarray) -> np.ndarray:
        """Map uniform points (n, c·inputs) through the laws to model columns (see :func:`map_variables`)."""
        if self.spans is None:
            return map_to_laws(u, self.laws, self._groups)
        return map_variables(u, self.laws, self.spans, self.d, self._groups)
