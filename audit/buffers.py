"""Arrays lent to the tasks of one thread, so that a task's large tensors reuse the last task's memory.

A fresh array of a block's hidden tensors (tens to hundreds of MB) costs a page
fault per page on every task; reused, it costs nothing after the first. Reuse is
safe only where nothing keeps a task's arrays once the task is done: the engine
says so by running the task inside :func:`lending` (each task evaluated and
summed in the same thread, nothing but its sums kept). Within one task every
:func:`take` gets an array of its own (slot by slot, in the order of the calls),
so a model evaluated twice in a task (a comparison of a model with itself) never
shares one. Outside :func:`lending`, :func:`take` is ``np.empty``.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

import numpy as np

__all__ = ["lending", "take"]

_LOCAL = threading.local()


@contextmanager
def lending() -> Iterator[None]:
    """Within this block (one task, in this thread), :func:`take` lends the arrays kept from the last task."""
    slots: list[np.ndarray] = getattr(_LOCAL, "slots", None) or []
    _LOCAL.slots, _LOCAL.used, _LOCAL.active = slots, 0, True
    try:
        yield
    finally:
        _LOCAL.active = False


def take(shape: tuple[int, ...], dtype: Any) -> np.ndarray:
    """An uninitialised array of ``shape`` and ``dtype``: the next lent one inside :func:`lending`, else new."""
    if not getattr(_LOCAL, "active", False):
        return np.empty(shape, dtype=dtype)
    slots: list[np.ndarray] = _LOCAL.slots
    i = _LOCAL.used
    _LOCAL.used = i + 1
    dtype = np.dtype(dtype)
    size = int(np.prod(shape, dtype=np.int64)) * dtype.itemsize
    if i < len(slots) and slots[i].nbytes >= size:
        return slots[i][:size].view(dtype).reshape(shape)
    array = np.empty(size, dtype=np.uint8)
    if i < len(slots):
        slots[i] = array
    else:
        slots.append(array)
    return array.view(dtype).reshape(shape)
