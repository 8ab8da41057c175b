"""Gradients of a model's outputs and hidden units: autograd where a backend has it, central differences otherwise.

Gradients are an optional capability: a backend that can differentiate itself
(the Torch backends) has a method ``gradients(x, capture)`` returning
:class:`Gradients`; every other model (ONNX, Python functions) is
differentiated here by central differences, ``(f(x + h e_j) − f(x − h e_j)) /
(2h)``, from one batch of ``2d + 1`` rows per point (the point itself and its two
neighbours along each input). The neighbours are given by the caller (a step
scaled to each input's law, :func:`audit.inputs.scales.stencil`); the divisor is
the distance between the two rows *as the model receives them* (after the cast
to its input type), so a float32 model's rounding of the step does not bias the
difference.

Gradients here are in the model's own input coordinates; the chain rule to
standardised coordinates is the caller's (:mod:`audit.studies.slope_evaluator`).

References
----------
.. [1] Central differences and the step of order ``eps^(1/3)`` that balances their
   truncation and rounding errors: common practice, no source.

Examples
--------
>>> import numpy as np
>>> from audit.models.python import PythonModel
>>> from audit.models.gradients import central_differences
>>> m = PythonModel(lambda x: x[:, 0] * x[:, 1], 2)
>>> x = np.array([[1.0, 2.0]])
>>> g = central_differences(m, x, x - 1e-4, x + 1e-4)
>>> np.round(g.jacobian[0, 0], 6).tolist()
[2.0, 1.0]
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from .base import Model, check_rows, feature_count, row_dtype

__all__ = ["AutogradUnavailableError", "Gradients", "central_differences", "difference_cost", "has_autograd"]


class AutogradUnavailableError(Exception):
    """The backend cannot differentiate this request (a caller falls back to central differences)."""


@dataclass
class Gradients:
    """Values and gradients at n rows.

    Attributes
    ----------
    values : ndarray, shape (n, k)
        The outputs, float64.
    jacobian : ndarray, shape (n, k, d)
        ``∂ output_u / ∂ x_j`` in the model's input coordinates, float64.
    hidden : dict of str to (ndarray (n, units), ndarray (n, units, d))
        Values and gradients of each captured hidden layer.
    """

    values: np.ndarray
    jacobian: np.ndarray
    hidden: dict[str, tuple[np.ndarray, np.ndarray]] = field(default_factory=dict)


def has_autograd(model: Model) -> bool:
    """True when ``model`` differentiates itself (it has a callable ``gradients``)."""
    return callable(getattr(model, "gradients", None))


def difference_cost(d: int) -> int:
    """Model evaluations of central differences at one point: the point and two neighbours per input."""
    return 2 * int(d) + 1


#: Most rows one evaluation call of the differences receives (bounds memory for large d).
CHUNK_ROWS = 1 << 14


def central_differences(
    model: Model, x: np.ndarray, lower: np.ndarray, upper: np.ndarray, capture: Sequence[str] = ()
) -> Gradients:
    """Gradients of every output (and captured layer) of ``model`` by central differences.

    Parameters
    ----------
    model : Model
    x : ndarray, shape (n, d)
        The points.
    lower, upper : ndarray, shape (n, d)
        For each point and input j, the values of input j in the two neighbours
        (the other inputs keep their values). ``lower < upper`` everywhere.
    capture : sequence of str
        Hidden layers to differentiate as well.

    Returns
    -------
    Gradients
        ``values`` at ``x``; ``jacobian[i, u, j] = (f_u(upper) − f_u(lower)) / (upper − lower)``
        with the distance taken after the rows are cast to the model's input type.
    """
    d = feature_count(model)
    x = check_rows(x, d)
    n = len(x)
    dtype = row_dtype(model)
    x = x.astype(dtype)
    lo, hi = np.asarray(lower, dtype=dtype), np.asarray(upper, dtype=dtype)
    span = hi.astype(np.float64) - lo.astype(np.float64)
    if np.any(span <= 0):
        raise ValueError("every neighbour pair must satisfy lower < upper after the cast to the model's input type.")
    per_point = difference_cost(d)
    points = max(1, CHUNK_ROWS // per_point)
    parts: list[tuple[np.ndarray, np.ndarray, dict[str, tuple[np.ndarray, np.ndarray]]]] = []
    for start in range(0, n, points):
        sl = slice(start, start + points)
        parts.append(_chunk(model, x[sl], lo[sl], hi[sl], span[sl], capture))
    values = np.concatenate([p[0] for p in parts])
    jac = np.concatenate([p[1] for p in parts])
    hidden = {
        name: (np.concatenate([p[2][name][0] for p in parts]), np.concatenate([p[2][name][1] for p in parts]))
        for name in capture
    }
    return Gradients(values, jac, hidden)


def _chunk(
    model: Model, x: np.ndarray, lo: np.ndarray, hi: np.ndarray, span: np.ndarray, capture: Sequence[str]
) -> tuple[np.ndarray, np.ndarray, dict[str, tuple[np.ndarray, np.ndarray]]]:
    n, d = x.shape
    rows = np.empty((2 * d + 1, n, d), dtype=x.dtype)
    rows[:] = x
    j = np.arange(d)
    rows[1 + j, :, j] = lo.T
    rows[1 + d + j, :, j] = hi.T
    ev = model.evaluate(rows.reshape(-1, d), list(capture))

    def split(y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        y = np.asarray(y, dtype=np.float64).reshape(2 * d + 1, n, -1)
        diff = (y[1 + d :] - y[1 : 1 + d]) / span.T[:, :, None]  # (d, n, k)
        return y[0], np.ascontiguousarray(diff.transpose(1, 2, 0))

    values, jac = split(ev.outputs)
    return values, jac, {name: split(ev.hidden[name]) for name in capture}
