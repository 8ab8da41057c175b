"""Scrambled Sobol' points equal to scipy's, without importing :mod:`scipy.stats`.

``qmc.Sobol(dim, scramble=True, rng=np.random.default_rng(seed))`` is the
reference: its direction numbers (the Joe–Kuo numbers scipy ships, initialised
as scipy initialises them), its linear matrix scramble and digital shift drawn
from the same generator in the same order, and its Gray-code order of points.
This module reproduces them with numpy alone, because importing
:mod:`scipy.stats` costs about a second, most of the start-up of a small audit,
and because scipy builds an engine in about half a millisecond (a deep copy of its
generator, the scramble one bit at a time) where a small audit needs one per
randomization. Any rows ``[start, start + n)`` come straight from the scrambled
direction numbers (:func:`sobol_rows`): no engine state, no fast-forwarding,
the same values whatever order or thread asks.

The tests compare every piece with scipy's own engines, bit for bit.

References
----------
.. [1] Direction numbers: "Constructing Sobol sequences with better two-dimensional
   projections", SIAM Journal on Scientific Computing, 2008 (scipy's file of them is read).
.. [2] Gray-code order and the recurrence of direction numbers: "Algorithm 659:
   Implementing Sobol's quasirandom sequence generator", ACM Transactions on
   Mathematical Software, 1988.
.. [3] Linear matrix scrambling and a digital shift: "Scrambling Sobol' and
   Niederreiter-Xing points", Journal of Complexity, 1998.

Examples
--------
>>> import numpy as np
>>> from scipy.stats import qmc
>>> from audit.design.scramble import sobol_rows, sobol_state
>>> ours = sobol_rows(sobol_state(3, 7), 0, 8)
>>> theirs = qmc.Sobol(3, scramble=True, rng=np.random.default_rng(7)).random(8)
>>> bool(np.array_equal(ours, theirs))
True
"""

from __future__ import annotations

import functools
import importlib.util
import sys
from pathlib import Path

import numpy as np

__all__ = ["BITS", "MAXDIM", "direction_numbers", "sobol_rows", "sobol_state"]

#: Bits of every coordinate (scipy's default): points are multiples of 2^-30. Even, as
#: :func:`_fair_bits` draws bits in pairs.
BITS = 30
#: Dimensions scipy's direction numbers cover (``qmc.Sobol.MAXDIM``).
MAXDIM = 21201
#: Dimensions scrambled per batched product (bounds its temporary arrays to a few MiB).
CHUNK_DIMS = 1024

State = tuple[np.ndarray, np.ndarray]


@functools.lru_cache(maxsize=1)
def _joe_kuo() -> tuple[np.ndarray, np.ndarray]:
    """Primitive polynomials and initial numbers per dimension, from scipy's data file."""
    spec = importlib.util.find_spec("scipy")
    folder = Path(next(iter(spec.submodule_search_locations or [])))  # type: ignore[union-attr]
    with np.load(folder / "stats" / "_sobol_direction_numbers.npz") as data:
        return data["poly"].astype(np.int64), data["vinit"].astype(np.uint64)


@functools.lru_cache(maxsize=16)
def direction_numbers(dim: int) -> np.ndarray:
    """Unscrambled direction numbers of the first ``dim`` dimensions, shape (dim, BITS), uint32.

    Column j of dimension d is scipy's ``v[d, j]``: the first m_d from the initial
    numbers, the rest by the recurrence of the dimension's primitive polynomial of
    degree m_d, then column j scaled by 2^(BITS - 1 - j).
    """
    dim = int(dim)
    if not 1 <= dim <= MAXDIM:
        raise ValueError(f"scrambled Sobol' points support 1..{MAXDIM} dimensions; got {dim}.")
    v = np.zeros((dim, BITS), dtype=np.uint64)
    v[0, :] = 1
    if dim > 1:
        poly_all, vinit = _joe_kuo()
        poly = poly_all[1:dim]
        degree = np.array([int(p).bit_length() - 1 for p in poly])
        rows = v[1:]  # a view: writes land in v
        for j in range(BITS):
            given = j < degree
            if given.any():
                rows[given, j] = vinit[1:dim][given, j]
            idx = np.flatnonzero(~given)
            if not len(idx):
                continue
            m, p = degree[idx], poly[idx]
            new = rows[idx, j - m]
            for k in range(int(m.max())):
                bit = ((p >> np.maximum(m - 1 - k, 0)) & 1).astype(bool) & (k < m)
                earlier = rows[idx, max(j - k - 1, 0)]
                new = np.where(bit, new ^ (earlier << np.uint64(k + 1)), new)
            rows[idx, j] = new
    v *= np.uint64(1) << np.arange(BITS - 1, -1, -1, dtype=np.uint64)
    out = v.astype(np.uint32)
    out.flags.writeable = False
    return out


def _child(seed: int | np.random.SeedSequence) -> np.random.PCG64:
    """The bit generator ``qmc.Sobol`` draws its scramble from when given ``default_rng(seed)``:
    its first spawned child's. A seed sequence counts as made (children it spawned before are
    ignored), so the same seed always gives the same points."""
    if isinstance(seed, np.random.SeedSequence):
        sequence = np.random.SeedSequence(seed.entropy, spawn_key=(*seed.spawn_key, 0), pool_size=seed.pool_size)
    else:
        sequence = np.random.SeedSequence(seed, spawn_key=(0,))
    return np.random.PCG64(sequence)


def _fair_bits(bitgen: np.random.PCG64, n: int) -> np.ndarray:
    """The next ``n`` (even) values of ``Generator(bitgen).integers(2, dtype=np.uint32)``, as uint8.

    numpy draws each from one 32-bit half of a 64-bit output, low half first, by Lemire's
    method, which for two values keeps the half's top bit and never rejects (numpy's bounded
    integers, from memory): bits 31 and 63 of each raw output, half the raw outputs and none of
    the Generator's per-call cost (a third of a scramble's time at small dimensions). The tests
    hold it equal to the Generator's own draws and the points to scipy's.
    """
    halves = bitgen.random_raw(n // 2).view(np.uint32)  # low half first on a little-endian machine
    if sys.byteorder == "big":
        halves = halves.reshape(-1, 2)[:, ::-1].ravel()
    return (halves >> 31).astype(np.uint8)


@functools.lru_cache(maxsize=4)
def _constants(bits: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Masks and weights of the scramble, columns reversed as scipy reads a matrix row."""
    lower = np.tril(np.ones((bits, bits), dtype=np.uint8), -1)[:, ::-1].copy()
    eye = np.eye(bits, dtype=np.uint8)[:, ::-1].copy()
    powers = 2 ** np.arange(bits, dtype=np.uint32)
    weights = 2.0 ** np.arange(bits - 1, -1, -1)
    return lower, eye, powers, weights


def _as_bits(words: np.ndarray) -> np.ndarray:
    """Direction numbers (dims, column) as bits, shape (dims, bit, column), float32."""
    k = np.arange(BITS, dtype=np.uint32)
    return ((words[:, None, :] >> k[None, :, None]) & 1).astype(np.float32)


@functools.lru_cache(maxsize=8)
def _plain_bits(dim: int) -> np.ndarray:
    """:func:`_as_bits` of the unscrambled numbers, kept up to ``CHUNK_DIMS`` dimensions (3.6 kB a dimension)."""
    bits = _as_bits(direction_numbers(dim))
    bits.flags.writeable = False
    return bits


def sobol_state(dim: int, seed: int | np.random.SeedSequence) -> State:
    """Scrambled direction numbers and digital shift of one randomization.

    Parameters
    ----------
    dim : int
        Dimension of the points, 1 to :data:`MAXDIM`.
    seed : int or numpy.random.SeedSequence
        The seed scipy's engine would be given as ``rng=np.random.default_rng(seed)``.

    Returns
    -------
    (sv, shift) : tuple of ndarray
        uint32 arrays of shape (dim, BITS) and (dim,), for :func:`sobol_rows`.

    Notes
    -----
    scipy draws the shift's bits, then the lower-triangular matrices (unit diagonal);
    it reads row p of a matrix as a word whose bit (BITS - 1 - k) is the matrix's
    column k, and sets bit (BITS - 1 - p) of a new direction number to the parity of
    that word ANDed with the old one: here one batched product modulo 2.
    """
    dim = int(dim)
    plain = direction_numbers(dim)
    bitgen = _child(seed)
    lower, eye, powers, weights = _constants(BITS)
    shift = _fair_bits(bitgen, dim * BITS).reshape(dim, BITS).astype(np.uint32) @ powers
    ltm = _fair_bits(bitgen, dim * BITS * BITS).reshape(dim, BITS, BITS)
    sv = np.empty((dim, BITS), dtype=np.uint32)
    for lo in range(0, dim, CHUNK_DIMS):
        hi = min(dim, lo + CHUNK_DIMS)
        matrix = ((ltm[lo:hi, :, ::-1] & lower) | eye).astype(np.float32)
        v_bits = _plain_bits(dim) if dim <= CHUNK_DIMS else _as_bits(plain[lo:hi])  # (dims, bit, column)
        parity = np.matmul(matrix, v_bits).astype(np.uint8) & 1  # sums ≤ BITS: exact in float32
        sv[lo:hi] = np.matmul(weights, parity.astype(np.float64)).astype(np.uint32)  # distinct powers: exact
    return sv, shift.astype(np.uint32)


def sobol_rows(state: State, start: int, n: int) -> np.ndarray:
    """Points ``start`` to ``start + n - 1`` of a scrambled sequence, shape (n, dim), float64.

    Point i is the shift XOR the direction numbers of the bits set in the Gray code
    ``i ^ (i >> 1)``; consecutive points differ by one direction number (the lowest
    set bit of i), so a block is one cumulative XOR.
    """
    sv, shift = state
    start, n = int(start), int(n)
    if start < 0 or n < 0 or start + n > 1 << BITS:
        raise ValueError(f"rows [{start}, {start + n}) are outside the 2^{BITS} points of the sequence.")
    words = np.empty((n, len(shift)), dtype=np.uint32)
    if n:
        gray = start ^ (start >> 1)
        first = shift.copy()
        for b in range(BITS):
            if (gray >> b) & 1:
                first ^= sv[:, b]
        words[0] = first
        i = np.arange(start + 1, start + n, dtype=np.int64)
        low = np.frexp((i & -i).astype(np.float64))[1] - 1  # the lowest set bit of each index
        words[1:] = sv.T[low]
        np.bitwise_xor.accumulate(words, axis=0, out=words)
    return words * (1.0 / 2**BITS)
