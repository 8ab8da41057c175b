"""Many rows through an onnxruntime session in chunks, each chunk's tensors written in place.

A block of a few thousand rows or more, with hidden tensors returned, ran faster
in calls of about a thousand rows than in one call (its tensors stay in the cache
while the next node reads them), but joining the chunks' hidden tensors would copy
them all once more. Here the first chunk is run as usual, which gives every
tensor's shape per row and element type; arrays for all the rows are made from
it, and every later chunk writes its tensors straight into their rows of those
arrays (onnxruntime's IOBinding with the arrays' memory as the outputs). The
arrays come from :func:`audit.buffers.take`: the last task's, when the engine lends
them (:func:`audit.buffers.lending`), else new.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np
import onnxruntime as ort

from ..buffers import take

__all__ = ["run_in_place"]


def run_in_place(
    session: ort.InferenceSession,
    input_names: Sequence[str],
    feeds: Callable[[np.ndarray], list[np.ndarray]],
    names: Sequence[str],
    x: np.ndarray,
    chunk: int,
    run: Callable[[np.ndarray], list[np.ndarray]],
) -> list[np.ndarray] | None:
    """Tensors ``names`` on rows ``x``, ``chunk`` rows per call, rows along each tensor's first axis.

    Parameters
    ----------
    session : onnxruntime.InferenceSession
    input_names : sequence of str
        The session's inputs, in the order ``feeds`` returns their arrays.
    feeds : callable
        Rows (m, d) -> one C-contiguous array per input.
    names : sequence of str
        Tensors to return; each must have one entry per row along its first axis.
    x : ndarray, shape (n, d)
    chunk : int
        Rows per call.
    run : callable
        Rows -> the tensors ``names`` by an ordinary call (the first chunk, and a chunk
        whose bound call failed: it raises the model's own failure).

    Returns
    -------
    list of ndarray or None
        One array of shape (n, ...) per name, as one call on all of ``x`` returns it;
        None when a chunk's tensors came out with another shape per row (the caller
        then runs the rows as before and says which tensor changed).
    """
    n = len(x)
    first = run(x[:chunk])
    out = []
    for value in first:
        full = take((n, *value.shape[1:]), value.dtype)  # lent by the engine between its tasks, else new
        full[: len(value)] = value
        out.append(full)
    binding = session.io_binding()
    for start in range(chunk, n, chunk):
        stop = min(start + chunk, n)
        parts = feeds(x[start:stop])
        for name, part in zip(input_names, parts, strict=True):
            binding.bind_cpu_input(name, part)
        for name, full in zip(names, out, strict=True):
            rows = full[start:stop]
            binding.bind_output(name, "cpu", 0, full.dtype, list(rows.shape), rows.ctypes.data)
        try:
            session.run_with_iobinding(binding)
        except Exception:
            values = run(x[start:stop])
            for full, value in zip(out, values, strict=True):
                if value.shape != full[start:stop].shape:
                    return None
                full[start:stop] = value
        del parts
    return out
