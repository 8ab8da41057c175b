"""The memory plan of a run: points per task from a memory budget, and a job's peak.

A task's block takes its design rows, the model's outputs for them and the
estimator's buffers; :func:`plan_block` picks the largest power of two of points
whose block fits the budget (a share of the memory available, at most
:data:`BLOCK_BYTES`), and :func:`estimate_memory` adds the sums of every
randomization and the :data:`IN_FLIGHT` blocks the local executor holds at once.
"""

from __future__ import annotations

import os
from typing import Any

__all__ = [
    "BLOCK_BYTES",
    "IN_FLIGHT",
    "MAX_ROWS",
    "MEMORY_SHARE",
    "available_memory",
    "estimate_memory",
    "native_outputs",
    "plan_block",
]

#: Default share of available memory a run may use for its blocks.
MEMORY_SHARE = 0.25
#: Most model rows (points × rows per point) one task evaluates: bounds peak memory
#: independently of N, and keeps progress and checkpoints fine-grained.
MAX_ROWS = 1 << 16
#: Blocks in memory at once: the local executor runs two side by side, or sums one while the next is evaluated.
IN_FLIGHT = 2


def available_memory() -> int:
    """Bytes of memory available to this process now (Linux ``MemAvailable``)."""
    try:
        with open("/proc/meminfo") as f:
            for line in f:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    try:
        return os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_AVPHYS_PAGES")
    except (ValueError, OSError, AttributeError):
        return 4 << 30


#: Most bytes one task's block may take by default, whatever memory is free: beyond it
#: larger blocks gain nothing but page faults.
BLOCK_BYTES = 256 << 20


def _bytes_per_point(d: int, units: int, rows_per_point: int, native: bool = False) -> int:
    # inputs (float64 + a float32 copy) and outputs as the model returns them (at most 8 bytes);
    # then either two (n, units) float64 rows and two reused buffers per point (an estimator
    # taking the rows as they are), or a float64 copy and the differences per row
    if native:
        return rows_per_point * (12 * d + 8 * units) + 32 * units
    return rows_per_point * (12 * d + 24 * units)


def plan_block(
    points: int, d: int, units: int, rows_per_point: int, budget: int | None = None, native: bool = False
) -> int:
    """Points per task: the largest power of two whose block fits the memory budget.

    Parameters
    ----------
    points : int
        N per randomization.
    d, units : int
        Inputs, and units captured in all groups together.
    rows_per_point : int
        Model rows per design point (the estimator's).
    budget : int, optional
        Bytes a block may use; default ``MEMORY_SHARE`` of available memory, at most
        ``BLOCK_BYTES``.
    native : bool
        The estimator takes the model's rows in their own float type (``native_outputs``).
    """
    if budget is None:
        budget = min(int(MEMORY_SHARE * available_memory()), BLOCK_BYTES)
    per = _bytes_per_point(d, units, rows_per_point, native)
    n = max(1, min(budget // per, MAX_ROWS // rows_per_point))
    n = 1 << (int(n).bit_length() - 1)
    return int(min(n, points))


def estimate_memory(job: Any, block: int) -> int:
    """Peak bytes of a job: sums for every randomization, plus ``IN_FLIGHT`` blocks."""
    state = sum(8 * job.estimator.state_size(g.units, g.detail) for g in job.groups)
    rows = job.estimator.rows_per_point()
    expanded = 0 if job.cost == 1 else MAX_ROWS * 8 * (2 * job.design.d + job.units)
    per = _bytes_per_point(job.design.d, job.units, rows, native_outputs(job.estimator))
    return state * (job.design.replicates + 2) + IN_FLIGHT * block * per + expanded


def native_outputs(estimator: Any) -> bool:
    """Whether ``estimator``'s sums take the model's float rows as they are (no float64 copy)."""
    return bool(getattr(estimator, "native_outputs", False))
