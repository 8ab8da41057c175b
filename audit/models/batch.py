"""Which axis of a tensor holds the rows: established by evaluating a probe in two batches.

Every backend evaluates the same probe rows twice, in two batch compositions
(:func:`make_probe`): a *large* batch of distinct rows, and a *small* batch of
some of those rows in other positions (for a model with a dynamic batch axis:
2 rows and 5 rows; for a model with a fixed batch size B: B rows, half of them
replaced). :func:`establish` then reads, for each captured tensor or output,
the :class:`BatchAxis` that holds the rows:

* the one axis whose size follows the number of rows (2 and 5), or, for a
  fixed batch size, an axis of size B; its size may be a multiple of the rows
  (the batch merged with attention heads, ``(batch * heads, L, L)``), in which
  case the rows lead (batch-major) or follow (batch-minor) the other factor;
* confirmed by the values: the rows of the small batch must equal the same rows
  of the large batch to float precision (:func:`same_values`), wherever the
  axis sits. A tensor that passes is read with its rows first
  (:meth:`BatchAxis.rows`); one that does not is refused with a
  :class:`Refusal` saying why (no axis follows the rows, several do, or rows
  that depend on the rest of the batch).

Nothing here knows a backend: arrays in, layouts out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "PROBE_LARGE",
    "PROBE_SMALL",
    "BatchAxis",
    "Probe",
    "Refusal",
    "establish",
    "make_probe",
    "same_values",
]

#: Rows of the two probe batches of a model with a dynamic batch axis (different sizes, neither 1
#: nor 3: 1 is specialised by tracers, and 3 often equals some other dimension).
PROBE_SMALL, PROBE_LARGE = 2, 5

# Probe values: distinct, away from 0 and from the ends of [0, 1] (safe for logs, square roots and
# integer inputs, which round them to 0 or 1).
_LOW, _HIGH = 0.1, 0.9
_SEED = 20_240_607


@dataclass(frozen=True)
class BatchAxis:
    """Where the rows of a batch sit in a tensor.

    Attributes
    ----------
    axis : int
        The axis along which rows vary.
    factor : int
        1 when the axis has one entry per row; m > 1 when it has ``rows * m``
        entries (the batch merged with another axis, as attention heads are).
    minor : bool
        For ``factor > 1``: the row index varies fastest (entry ``j * rows + i``)
        instead of slowest (entry ``i * factor + j``).
    """

    axis: int = 0
    factor: int = 1
    minor: bool = False

    def arrange(self, value: np.ndarray, n: int) -> np.ndarray:
        """``value`` with its ``n`` rows on the first axis, shape (n, ...)."""
        a = np.asarray(value)
        axis = self.axis
        if self.factor > 1:
            split = (self.factor, n) if self.minor else (n, self.factor)
            a = a.reshape(a.shape[:axis] + split + a.shape[axis + 1 :])
            axis += 1 if self.minor else 0
        return np.moveaxis(a, axis, 0) if axis else a

    def rows(self, value: np.ndarray, n: int) -> np.ndarray:
        """``value`` as an (n, units) array, rows first, elements of a row in C order."""
        return self.arrange(value, n).reshape(n, -1)

    def shape(self, value: np.ndarray, n: int) -> tuple[int, ...]:
        """Non-batch shape of ``value`` once its rows come first."""
        return tuple(int(s) for s in self.arrange(value, n).shape[1:])

    @property
    def moved(self) -> bool:
        """True unless the rows already lie along a leading axis of their own."""
        return self.axis != 0 or self.factor != 1

    def describe(self) -> str:
        """In words, for notices: ``axis 1``, ``axis 0 (merged with 4 others, batch-major)``."""
        if self.factor == 1:
            return f"axis {self.axis}"
        order = "batch-minor" if self.minor else "batch-major"
        return f"axis {self.axis} (rows merged with a factor of {self.factor}, {order})"


@dataclass(frozen=True)
class Refusal:
    """Why a tensor's rows could not be found.

    Attributes
    ----------
    kind : str
        ``constant`` (the same values whatever the rows: not computed per row),
        ``per-batch`` (no axis follows the rows, but the values change: a
        statistic of the whole batch), ``shape`` (several axes, or an axis not
        in proportion to the rows, change with the batch size), ``rows`` (the
        same rows give different values in another batch) or ``random`` (the
        same batch gives different values twice).
    reason : str
        One clause for a message (no final full stop).
    """

    kind: str
    reason: str


@dataclass(frozen=True)
class Probe:
    """Two batches of the same rows.

    Attributes
    ----------
    large : ndarray, shape (n_large, d)
    small : ndarray, shape (n_small, d)
        Row ``i < len(pick)`` of ``small`` is row ``pick[i]`` of ``large``.
    pick : ndarray of int
    fixed : bool
        Both batches have the model's fixed batch size (no axis changes size).
    """

    large: np.ndarray
    small: np.ndarray
    pick: np.ndarray
    fixed: bool

    def describe(self) -> str:
        """``2 rows and 5 rows`` or ``two batches of 4 rows``."""
        if self.fixed:
            return f"two batches of {len(self.large)} rows"
        return f"{len(self.small)} rows and {len(self.large)} rows"


def make_probe(d: int, low: int = 1, high: int | None = None) -> Probe:
    """Probe rows for a model taking ``d`` features in batches of ``low`` to ``high`` rows.

    Parameters
    ----------
    d : int
        Number of features per row.
    low, high : int
        Smallest and largest batch the model accepts (``high`` None: unbounded).

    Returns
    -------
    Probe
        Batches of :data:`PROBE_SMALL` and :data:`PROBE_LARGE` rows when the
        range allows two sizes, else two batches of the one size.
    """
    rng = np.random.default_rng(_SEED)
    small = max(low, PROBE_SMALL)
    if high is not None and small > high:
        small = high
    large = max(PROBE_LARGE, small + 1)
    if high is not None:
        large = min(large, high)
    if large > small:
        x = rng.uniform(_LOW, _HIGH, size=(large, d))
        pick = np.arange(large - 1, large - 1 - small, -1)
        return Probe(x, x[pick], pick, fixed=False)
    size = small
    x = rng.uniform(_LOW, _HIGH, size=(size, d))
    if size == 1:
        return Probe(x, x.copy(), np.zeros(1, dtype=int), fixed=True)
    half = math.ceil(size / 2)
    pick = np.arange(size - 1, size - 1 - half, -1)
    other = rng.uniform(_LOW, _HIGH, size=(size - half, d))
    return Probe(x, np.concatenate([x[pick], other]), pick, fixed=True)


def _tolerance(dtype: np.dtype) -> float:
    """Relative agreement of one computation run in two batch sizes: the square root of the
    type's machine epsilon (3e-4 for float32; common practice, no source)."""
    if dtype.kind != "f":
        return 0.0
    return float(np.sqrt(np.finfo(dtype).eps))


def same_values(a: np.ndarray, b: np.ndarray, dtype: np.dtype | None = None) -> tuple[bool, float]:
    """Whether ``a`` equals ``b`` to float precision, and the largest relative difference.

    Differences are measured against the largest finite magnitude in ``b``; NaN
    matches NaN and infinities match themselves.
    """
    a = np.asarray(a)
    b = np.asarray(b)
    if a.shape != b.shape:
        return False, math.inf
    if a.size == 0:
        return True, 0.0
    kind = dtype if dtype is not None else np.result_type(a, b)
    x, y = a.astype(np.float64), b.astype(np.float64)
    finite = np.isfinite(y)
    scale = float(np.max(np.abs(y[finite]))) if finite.any() else 0.0
    both_nan = np.isnan(x) & np.isnan(y)
    with np.errstate(invalid="ignore"):
        diff = np.where(both_nan | (x == y), 0.0, np.abs(x - y))
    diff = np.where(np.isnan(diff), math.inf, diff)
    worst = float(diff.max()) / scale if scale > 0 else float(diff.max())
    return worst <= _tolerance(np.dtype(kind)), worst


def _layouts(s: tuple[int, ...], lg: tuple[int, ...], probe: Probe) -> list[BatchAxis] | Refusal:
    """Layouts the shapes allow, or why none."""
    ns, nl = len(probe.small), len(probe.large)
    if len(s) != len(lg):
        return Refusal("shape", f"its rank changes with the batch ({s} for {ns} rows, {lg} for {nl})")
    if probe.fixed:
        if s != lg:
            return Refusal("shape", f"its shape changes between two batches of {ns} rows ({s}, {lg})")
        axes = [i for i, size in enumerate(s) if size == ns]
        if not axes:
            return Refusal("shape", f"no axis of shape {s} has the batch size {ns}")
        return [BatchAxis(i) for i in axes]
    changed = [i for i in range(len(s)) if s[i] != lg[i]]
    if not changed:
        return Refusal("per-batch", f"its shape {s} is the same for {ns} rows and for {nl} rows")
    if len(changed) > 1:
        return Refusal("shape", f"several of its axes change with the batch size ({s} for {ns} rows, {lg} for {nl})")
    (a,) = changed
    factor = s[a] // ns
    if s[a] % ns or lg[a] % nl or lg[a] // nl != factor:
        return Refusal(
            "shape", f"axis {a} has {s[a]} entries for {ns} rows and {lg[a]} for {nl}, not in proportion to the rows"
        )
    if factor == 1:
        return [BatchAxis(a)]
    return [BatchAxis(a, factor), BatchAxis(a, factor, minor=True)]


def establish(
    small: np.ndarray, large: np.ndarray, probe: Probe, again: np.ndarray | None = None
) -> BatchAxis | Refusal:
    """The axis holding the rows of a tensor, from its values in the two probe batches.

    Parameters
    ----------
    small, large : ndarray
        The tensor computed on ``probe.small`` and ``probe.large``.
    probe : Probe
    again : ndarray, optional
        The tensor computed on ``probe.large`` a second time (to tell randomness
        from batch dependence).

    Returns
    -------
    BatchAxis or Refusal
    """
    small, large = np.asarray(small), np.asarray(large)
    if again is not None and not same_values(np.asarray(again), large)[0]:
        return Refusal("random", "the same batch gives different values when evaluated twice")
    layouts = _layouts(tuple(small.shape), tuple(large.shape), probe)
    if isinstance(layouts, Refusal):
        if layouts.kind == "per-batch" and same_values(small, large)[0]:
            return Refusal("constant", "its values do not depend on the rows")
        return layouts
    ns, nl = len(probe.small), len(probe.large)
    k = len(probe.pick)
    if probe.fixed and ns == 1:
        return layouts[0]  # one row: nothing to compare, the exporter's leading axis of size 1
    worst = math.inf
    for layout in layouts:
        ok, diff = same_values(layout.rows(small, ns)[:k], layout.rows(large, nl)[probe.pick])
        if ok:
            return layout
        worst = min(worst, diff)
    return Refusal(
        "rows",
        f"the same rows differ by up to {worst:.2g} (relative) between {probe.describe()}",
    )
