"""A task's rows through the model a call at a time, each call's values summed while in the cache.

An ONNX network called on a thousand rows at a time (its ``call_rows``) ran
fastest, and a plain script that throws each call's hidden tensors away keeps
them in the cache from the node that wrote them to the next. Summing those
tensors only once the whole task is evaluated reads them all back from memory.
Here every call's arrays of the groups whose sums take a block in parts (their
``streams``: the Jansen sums of hidden layers) are added at once
(:meth:`~audit.estimators.jansen.JansenSums.add_rows`), and only the other
groups' arrays (the outputs, a few columns) are joined for the usual sums.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping

import numpy as np

from .buffers import take

__all__ = ["STREAM_BYTES", "call_size", "stream"]

#: Most bytes of values one call returns for its sums (the task's groups, all of a row's units):
#: they are read back while in the cache. Measured on 2 cores, two tasks side by side, the digits
#: CNN's every layer (1536 units, 6 KiB a row): 0.64 s in calls of 1024 rows, 0.51 s of 512 and of
#: 256, 0.58 s of 128; its activation layers (2.5 KiB a row) and a 64-256-256-10 MLP's (every
#: layer 4 KiB a row, activations 2 KiB) within 5 % of their best at 512-1024 rows.
STREAM_BYTES = 4 << 20
#: Fewest rows per call (fewer cost more in calls than they save in the cache).
MIN_CALL_ROWS = 256


def call_size(rows: int, row_bytes: int) -> int:
    """Rows per call: ``rows`` (the model's), halved while a call's values exceed :data:`STREAM_BYTES`."""
    while rows // 2 >= MIN_CALL_ROWS and rows * row_bytes > STREAM_BYTES:
        rows //= 2
    return rows


def stream(
    evaluator: Callable[[np.ndarray], Mapping[str, np.ndarray]],
    x: np.ndarray,
    rows: int,
    parts: Mapping[str, object],
    units: Mapping[str, int],
    points: int,
) -> dict[str, np.ndarray] | None:
    """Evaluate ``x`` in calls of ``rows`` rows; sum the arrays named in ``parts`` call by call.

    Parameters
    ----------
    evaluator : callable
        (m, d) rows -> dict of (m, units) arrays.
    x : ndarray, shape (n, d)
        A task's rows, laid out as its estimator says.
    rows : int
        Rows per call.
    parts : mapping of str to sums
        Sums with ``add_rows(y, start, points)``, by array name: each gets every call's array.
    units : mapping of str to int
        Columns of every array the evaluator returns that is measured (``parts`` included).
    points : int
        Design points of the task (``add_rows``'s ``points``).

    Returns
    -------
    dict of str to ndarray or None
        The arrays not in ``parts``, each of all ``n`` rows. None when an array holds no
        floats, has other columns than ``units`` says or is missing: the caller then runs
        the task whole, whose checks name the problem.
    """
    n = len(x)
    whole: dict[str, np.ndarray] = {}
    for start in range(0, n, rows):
        stop = min(start + rows, n)
        out = evaluator(x[start:stop])
        for name, k in units.items():
            if name not in out:
                return None
            y = np.asarray(out[name])
            if y.dtype.kind != "f" or y.size != (stop - start) * k:
                return None
            y = y.reshape(stop - start, k)
            if name in parts:
                with np.errstate(invalid="ignore", over="ignore"):
                    parts[name].add_rows(y, start, points)  # type: ignore[attr-defined]
                continue
            if name not in whole:
                whole[name] = take((n, k), y.dtype)
            elif whole[name].dtype != y.dtype:
                return None
            whole[name][start:stop] = y
    return whole
