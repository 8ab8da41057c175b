"""Scrambled Sobol' engines equal to scipy's, built without its per-engine costs.

``qmc.Sobol(dim, scramble=True, rng=np.random.default_rng(seed))`` spends about
half a millisecond making an engine: a deep copy of its generator (kept for
``reset``) and the linear matrix scramble, one bit at a time. An audit of a cheap
function at small d makes one engine per randomization and spent half its time
there. :func:`sobol_engine` draws the same random bits from the same generator
(the child scipy spawns from it), applies the same linear matrix scramble as one
batched product modulo 2 and the same digital shift, and puts the result into a
shallow copy of an unscrambled engine of that dimension: the points are scipy's,
bit for bit, from the same ``random`` and ``fast_forward``.

The first engine of each dimension in a process is compared with scipy's own
(direction numbers and shift, bit for bit); if they differ, or an attribute is
missing (a scipy release that scrambles otherwise), scipy's constructor is used
for that dimension from then on. Either way the points are scipy's.

References
----------
.. [1] The scramble is scipy's (:class:`scipy.stats.qmc.Sobol`, ``scramble=True``):
   a random lower-triangular binary matrix with unit diagonal applied to the
   direction numbers ("linear matrix scrambling") and a random digital shift
   ("Scrambling Sobol' and Niederreiter-Xing points", Journal of Complexity, 1998).

Examples
--------
>>> import numpy as np
>>> from scipy.stats import qmc
>>> from audit.design.scramble import sobol_engine
>>> ours = sobol_engine(3, 7).random(8)
>>> theirs = qmc.Sobol(3, scramble=True, rng=np.random.default_rng(7)).random(8)
>>> bool(np.array_equal(ours, theirs))
True
"""

from __future__ import annotations

import copy
import functools
import threading

import numpy as np

__all__ = ["sobol_engine"]

#: Dimensions scrambled per batched product (bounds its temporary arrays to a few MiB).
CHUNK_DIMS = 1024
#: Unscrambled engines kept, one per dimension in use.
TEMPLATES_KEPT = 16

_lock = threading.Lock()
_templates: dict[int, tuple[object, np.ndarray]] = {}
_verified: dict[int, bool] = {}  # dimension -> the fast engines equal scipy's


def _fresh(seed: int | np.random.SeedSequence) -> int | np.random.SeedSequence:
    """A seed sequence as it was made: the engine spawns a child from it, and a used one
    would give another child each time (points that depend on what ran before)."""
    if isinstance(seed, np.random.SeedSequence):
        return np.random.SeedSequence(seed.entropy, spawn_key=seed.spawn_key, pool_size=seed.pool_size)
    return seed


def _scipy_engine(dim: int, seed) -> object:
    from scipy.stats import qmc

    return qmc.Sobol(dim, scramble=True, rng=np.random.default_rng(seed))


def _template(dim: int) -> tuple[object, np.ndarray]:
    """An unscrambled engine of this dimension and its direction numbers as bits (dim, bit, column)."""
    from scipy.stats import qmc

    with _lock:
        kept = _templates.get(dim)
        if kept is None:
            if len(_templates) >= TEMPLATES_KEPT:
                _templates.clear()
            engine = qmc.Sobol(dim, scramble=False, rng=np.random.default_rng(0))
            sv = engine._sv  # type: ignore[attr-defined]
            k = np.arange(sv.shape[1], dtype=sv.dtype)
            kept = (engine, ((sv[:, None, :] >> k[None, :, None]) & 1).astype(np.float32))
            _templates[dim] = kept
    return kept


@functools.lru_cache(maxsize=4)
def _constants(bits: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Masks and weights of the scramble for ``bits`` bits, column order reversed as scipy reads a row."""
    lower = np.tril(np.ones((bits, bits), dtype=np.uint32), -1)[:, ::-1].copy()
    eye = np.eye(bits, dtype=np.uint32)[:, ::-1].copy()
    powers = 2 ** np.arange(bits, dtype=np.uint32)
    weights = 2.0 ** np.arange(bits - 1, -1, -1)
    return lower, eye, powers, weights


def _scrambled_state(plain: object, v_bits: np.ndarray, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Direction numbers and shift scrambled as scipy scrambles them, from the same draws.

    scipy reads row p of the lower-triangular matrix (unit diagonal) as a word whose
    bit (bits - 1 - k) is the matrix's column k, and sets bit (bits - 1 - p) of a new
    direction number to the parity of that word ANDed with the old one.
    """
    dim, bits = plain._sv.shape  # type: ignore[attr-defined]
    dtype = plain._sv.dtype  # type: ignore[attr-defined]
    lower, eye, powers, weights = _constants(bits)
    shift = rng.integers(2, size=(dim, bits), dtype=dtype) @ powers.astype(dtype)
    ltm = rng.integers(2, size=(dim, bits, bits), dtype=dtype)  # the same draws, in scipy's order
    sv = np.empty((dim, bits), dtype=dtype)
    for lo in range(0, dim, CHUNK_DIMS):
        hi = min(dim, lo + CHUNK_DIMS)
        matrix = ((ltm[lo:hi, :, ::-1] & lower) | eye).astype(np.float32)
        parity = np.matmul(matrix, v_bits[lo:hi]).astype(np.uint8) & 1  # (dims, p, j); sums ≤ bits: exact
        sv[lo:hi] = np.matmul(weights, parity.astype(np.float64)).astype(dtype)  # sums of distinct powers: exact
    return sv, shift.astype(dtype)


def _child(seed: int | np.random.SeedSequence) -> np.random.Generator:
    """What ``qmc.Sobol`` draws from when given ``default_rng(seed)``: its first spawned child."""
    if isinstance(seed, np.random.SeedSequence):
        sequence = np.random.SeedSequence(seed.entropy, spawn_key=(*seed.spawn_key, 0), pool_size=seed.pool_size)
    else:
        sequence = np.random.SeedSequence(seed, spawn_key=(0,))
    return np.random.Generator(np.random.PCG64(sequence))


def _fast_engine(dim: int, seed) -> object:
    plain, v_bits = _template(dim)
    rng = _child(seed)
    sv, shift = _scrambled_state(plain, v_bits, rng)
    engine = copy.copy(plain)
    engine.rng = engine.rng_seed = rng  # type: ignore[attr-defined]
    engine.scramble = True  # type: ignore[attr-defined]
    engine.num_generated = 0  # type: ignore[attr-defined]
    engine._sv = sv  # type: ignore[attr-defined]
    engine._shift = shift  # type: ignore[attr-defined]
    engine._quasi = shift.copy()  # type: ignore[attr-defined]
    engine._first_point = (shift * engine._scale).reshape(1, -1).astype(np.float64)  # type: ignore[attr-defined]
    return engine


def _same(fast: object, reference: object) -> bool:
    names = ("_sv", "_shift", "_quasi", "_first_point", "_scale", "maxn", "bits")
    try:
        return all(np.array_equal(getattr(fast, a), getattr(reference, a)) for a in names)
    except AttributeError:
        return False


def sobol_engine(dim: int, seed: int | np.random.SeedSequence) -> object:
    """A fresh scrambled Sobol' engine equal to ``qmc.Sobol(dim, scramble=True, rng=default_rng(seed))``.

    Parameters
    ----------
    dim : int
        Dimension of the points, 1 to ``qmc.Sobol.MAXDIM``.
    seed : int or numpy.random.SeedSequence
        Seed of the generator the scramble is drawn from. A seed sequence is used as
        made (its children spawned so far are ignored), so the same seed always gives
        the same engine.

    Returns
    -------
    engine : scipy.stats.qmc.Sobol
        An engine at position 0 whose ``random`` and ``fast_forward`` give the
        points of scipy's engine of that dimension and seed, bit for bit.

    Examples
    --------
    >>> from audit.design.scramble import sobol_engine
    >>> sobol_engine(2, 1).random(4).shape
    (4, 2)
    """
    dim, seed = int(dim), _fresh(seed)
    state = _verified.get(dim)
    if state is False:
        return _scipy_engine(dim, seed)
    try:
        fast = _fast_engine(dim, seed)
    except (AttributeError, TypeError, ValueError):
        _verified[dim] = False
        return _scipy_engine(dim, seed)
    if state is None:
        reference = _scipy_engine(dim, _fresh(seed))
        _verified[dim] = _same(fast, reference)
        if not _verified[dim]:
            return reference
    return fast
