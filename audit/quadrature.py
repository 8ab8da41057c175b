"""Pre-integrated evaluators: integrate one input out with a Gauss rule.

For an input x_ℓ with law F_ℓ, the pre-integrated function of the other
inputs is

    f̃(x_{−ℓ}) = Σ_q w_q f(x_{−ℓ}, z_q) ≈ E[f(x) | x_{−ℓ}],

with the nodes z_q and weights w_q (summing to 1) of ``laws[ℓ].quadrature(m)``:
Gauss–Hermite for normal and lognormal laws, Gauss–Legendre for uniform laws,
two Gauss–Legendre panels for triangular laws. f̃ has d − 1 inputs, the
variance σ² − τ̄²_ℓ (τ̄²_ℓ the un-normalised total index of x_ℓ) and often a
much lower mean dimension than f, which helps quasi-Monte Carlo integration.

:class:`PreIntegrated` wraps a plain function ``(n, d) -> (n,) | (n, k)``, an
evaluator ``(n, d) -> {name: (n, units)}`` or a model
(:class:`~audit.models.base.Model`); :func:`preintegrate` builds one, as a model
when given a model. :func:`choose_nodes` checks the rule on a pilot sample and
doubles the node count until two successive rules agree.

References
----------
.. [1] Gauss rules from :func:`numpy.polynomial.hermite_e.hermegauss` and
   :func:`numpy.polynomial.legendre.leggauss`; integrating one variable out
   before quasi-Monte Carlo ("pre-integration", "conditional sampling") is
   common practice, no source.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np

from .errors import UserError
from .inputs import Law
from .models.base import Evaluation, LayerInfo, Model, TensorInfo, feature_count, row_dtype

__all__ = [
    "MAX_NODES",
    "MAX_ROWS",
    "PreIntegrated",
    "PreIntegratedModel",
    "check_index",
    "check_nodes",
    "node_average",
    "preintegrate",
]

#: Largest Gauss rule used: numpy's Gauss–Hermite weights overflow a little beyond 256 nodes.
MAX_NODES = 256
#: Rows (points × nodes) per call of the wrapped function.
MAX_ROWS = 1 << 16

#: One flat buffer of expanded rows per dtype, lent to one call at a time (a dict's pop and
#: store are atomic, so concurrent calls simply make their own): a fresh array of a block's rows
#: for every call cost more in page faults than writing the rows (about 4 against 2 ms for
#: 65,536 rows of 64 float32 inputs).
_SPARE: dict[str, np.ndarray] = {}
#: Largest buffer kept between calls (a larger one, of many inputs, is let go with its call).
_KEEP_BYTES = 64 << 20


def _borrow(size: int, dtype: Any) -> np.ndarray:
    """A flat array of at least ``size`` values of ``dtype``: the spare one when free and large enough."""
    dtype = np.dtype(dtype)
    buf = _SPARE.pop(dtype.str, None)
    if buf is None or buf.size < size:
        buf = np.empty(size, dtype=dtype)
    return buf


def _give_back(buf: np.ndarray) -> None:
    """Keep ``buf`` for the next call (the larger of it and any spare already kept, up to ``_KEEP_BYTES``)."""
    held = _SPARE.get(buf.dtype.str)
    if buf.nbytes <= _KEEP_BYTES and (held is None or held.size < buf.size):
        _SPARE[buf.dtype.str] = buf


def node_average(weights: np.ndarray, y: np.ndarray) -> np.ndarray:
    """The weighted sum over the nodes of rows grouped point by point.

    By ``einsum``, which reads the node axis in place (``tensordot`` copied a transposed array;
    3-4.5x slower at a block's sizes); pre-integrated values in memory and simplified models are
    summed by it alike, so they agree to the bit.

    Parameters
    ----------
    weights : ndarray, shape (m,)
        The rule's weights.
    y : ndarray, shape (n, m, ...)
        Values at the m nodes of each of n points.

    Returns
    -------
    ndarray, shape (n, ...)

    Examples
    --------
    >>> import numpy as np
    >>> from audit.quadrature import node_average
    >>> node_average(np.array([0.25, 0.75]), np.array([[1.0, 3.0], [2.0, 2.0]]))
    array([2.5, 2. ])
    """
    return np.einsum("m,nm...->n...", weights, y)


def check_index(index: int, d: int, names: Sequence[str] | None = None) -> int:
    if isinstance(index, bool) or not isinstance(index, (int, np.integer)):
        raise ValueError(f"index must be an int in 0..{d - 1}, got {index!r}.")
    if not 0 <= index < d:
        listing = f" ({', '.join(names)})" if names else ""
        raise ValueError(f"index {index} is outside the {d} inputs{listing}; valid: 0..{d - 1}.")
    return int(index)


def check_nodes(nodes: int) -> int:
    if isinstance(nodes, bool) or not isinstance(nodes, (int, np.integer)) or not 1 <= nodes <= MAX_NODES:
        raise ValueError(f"nodes must be a whole number in 1..{MAX_NODES}, got {nodes!r}.")
    return int(nodes)


class PreIntegrated:
    """A function, evaluator or model with input ``index`` integrated out.

    Parameters
    ----------
    func : callable or Model
        A function ``(n, d) -> (n,) | (n, k)``, an evaluator
        ``(n, d) -> {name: (n, units)}`` or a model with ``evaluate``.
    laws : sequence of Law
        The d input laws; ``laws[index]`` gives the Gauss rule.
    index : int
        The input to integrate out, 0-based.
    nodes : int, optional
        Nodes m of the Gauss rule (1..:data:`MAX_NODES`, default 32).
    max_rows : int, optional
        At most this many rows (points × nodes) per call of ``func``.

    Notes
    -----
    Calling it with an (n, d − 1) array evaluates ``func`` on n·m rows, in
    batches of at most ``max_rows``, and returns what ``func`` returns for n
    rows: an array of the same trailing shape, or a dict of arrays. For a
    model the call returns the (n, k) outputs; :meth:`evaluate` also averages
    captured hidden tensors.

    Examples
    --------
    >>> import numpy as np
    >>> from audit.inputs import Law
    >>> from audit.quadrature import PreIntegrated
    >>> f = lambda x: x[:, 0] * x[:, 1] ** 2
    >>> g = PreIntegrated(f, [Law("normal"), Law("normal")], index=1, nodes=4)
    >>> g(np.array([[2.0], [3.0]]))             # E[x1 x2^2 | x1] = x1
    array([2., 3.])
    """

    def __init__(
        self,
        func: Callable[[np.ndarray], Any] | Model,
        laws: Sequence[Law],
        index: int,
        nodes: int = 32,
        *,
        max_rows: int = MAX_ROWS,
    ) -> None:
        self.laws = list(laws)
        if not all(isinstance(law, Law) for law in self.laws):
            raise TypeError("laws must be a sequence of audit.inputs.Law.")
        self.d = len(self.laws)
        if self.d < 2:
            raise ValueError(f"pre-integration needs at least 2 inputs, got {self.d}.")
        self.index = check_index(index, self.d)
        self.nodes = check_nodes(nodes)
        if max_rows < 1:
            raise ValueError(f"max_rows must be at least 1, got {max_rows}.")
        self.max_rows = int(max_rows)
        self.func = func
        self.is_model = hasattr(func, "evaluate") and hasattr(func, "inputs")
        if not self.is_model and not callable(func):
            raise TypeError("func must be callable or a model with an evaluate method.")
        z, w = self.laws[self.index].quadrature(self.nodes)
        keep = w > 0  # weights of far Gauss–Hermite nodes can underflow to 0
        self.points, self.weights = (
            np.asarray(z[keep], dtype=np.float64),
            np.asarray(w[keep], dtype=np.float64),
        )
        self.weights = self.weights / self.weights.sum()

    @property
    def cost(self) -> int:
        """Evaluations of the wrapped function per evaluation of this one."""
        return len(self.weights)

    def expand(self, x: np.ndarray, dtype: Any = np.float64, out: np.ndarray | None = None) -> np.ndarray:
        """The (n·m, d) rows ``(x_i, z_q)``, point-major, for (n, d − 1) rows ``x``, in ``dtype``.

        Written in one pass by broadcasting into the result (no repeated copies); a model fed
        float32 gets float32 rows here, the values its own cast of float64 rows would give.
        ``out``: a flat array of ``dtype`` with room for them, written instead of a new one.
        """
        x = np.asarray(x)
        if x.ndim != 2 or x.shape[1] != self.d - 1:
            raise ValueError(f"expected an (n, {self.d - 1}) array, got shape {x.shape}.")
        n, m = len(x), len(self.points)
        shape = (n, m, self.d)
        X = np.empty(shape, dtype=dtype) if out is None else out[: n * m * self.d].reshape(shape)
        x = x.astype(X.dtype, copy=False)  # cast once: the broadcast copies below then move values only
        X[:, :, : self.index] = x[:, None, : self.index]
        X[:, :, self.index] = self.points
        X[:, :, self.index + 1 :] = x[:, None, self.index :]
        return X.reshape(n * m, self.d)

    def _rows_buffer(self, n: int, dtype: Any) -> np.ndarray:
        """A flat buffer for the expanded rows of the largest chunk of ``n`` points (:func:`_borrow`)."""
        per = max(1, self.max_rows // len(self.weights))
        return _borrow(min(n, per) * len(self.weights) * self.d, dtype)

    def _reduce(self, y: np.ndarray, n: int) -> np.ndarray:
        y = np.asarray(y, dtype=np.float64)
        if y.shape[0] != n * len(self.weights):
            raise ValueError(f"the wrapped function returned {y.shape[0]} rows for {n * len(self.weights)}.")
        if not np.all(np.isfinite(y)):
            bad = np.flatnonzero(~np.isfinite(y.reshape(len(y), -1)).all(axis=1))[0]
            z = self.points[bad % len(self.points)]
            raise UserError(
                f"The model returned NaN or infinite values at a quadrature node of input "
                f"#{self.index + 1} (node value {z:.6g}, one of {len(self.points)} Gauss nodes). "
                "Pre-integration evaluates the model at the far nodes of the rule too: make the "
                "model finite on the whole range of that input's law, use a bounded law, or fewer "
                "nodes."
            )
        yr = y.reshape(n, len(self.weights), *y.shape[1:])
        return node_average(self.weights, yr)

    def _chunks(self, n: int) -> list[slice]:
        per = max(1, self.max_rows // len(self.weights))
        return [slice(s, min(s + per, n)) for s in range(0, n, per)]

    def __call__(self, x: np.ndarray) -> Any:
        """Evaluate at (n, d − 1) rows; returns what the wrapped function returns for n rows."""
        x = np.asarray(x, dtype=np.float64)
        parts = []
        dtype = row_dtype(self.func) if self.is_model else np.float64
        buf = self._rows_buffer(len(x), dtype)
        for s in self._chunks(len(x)):
            X = self.expand(x[s], dtype, buf)
            y = self.func.evaluate(X).outputs if self.is_model else self.func(X)
            if isinstance(y, Mapping):
                parts.append({k: self._reduce(v, len(X) // self.cost) for k, v in y.items()})
            else:
                parts.append(self._reduce(y, len(X) // self.cost))
        _give_back(buf)  # the reduced parts are new arrays: nothing refers to the rows any more
        if not parts:
            return self._empty(x)
        if isinstance(parts[0], dict):
            return {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}
        return np.concatenate(parts)

    def _empty(self, x: np.ndarray) -> Any:
        probe = self(np.zeros((1, self.d - 1)))
        if isinstance(probe, dict):
            return {k: v[:0] for k, v in probe.items()}
        return probe[:0]


class PreIntegratedModel(PreIntegrated):
    """A :class:`PreIntegrated` model: itself a :class:`~audit.models.base.Model` with d − 1 inputs.

    Audit it like any model (``audit.studies.prepare(PreIntegratedModel(...))``):
    its outputs, and any captured hidden tensor, are the conditional means
    given the other inputs.

    Parameters
    ----------
    model : Model
        The model to wrap.
    laws, index, nodes, max_rows
        As for :class:`PreIntegrated`.
    feature_names : sequence of str, optional
        Names of the d inputs (default the model's own); the one at ``index``
        is left out of :meth:`feature_names`.
    """

    format = "preintegrated"

    def __init__(
        self,
        model: Model,
        laws: Sequence[Law],
        index: int,
        nodes: int = 32,
        *,
        max_rows: int = MAX_ROWS,
        feature_names: Sequence[str] | None = None,
    ) -> None:
        if not (hasattr(model, "evaluate") and hasattr(model, "inputs")):
            raise TypeError("model must implement the audit.models.base.Model protocol.")
        if feature_count(model) != len(laws):
            raise ValueError(f"the model takes {feature_count(model)} inputs but {len(laws)} laws were given.")
        super().__init__(model, laws, index, nodes, max_rows=max_rows)
        self.model = model
        names = list(feature_names) if feature_names is not None else list(model.feature_names())
        self.integrated = names[self.index]
        self._names = names[: self.index] + names[self.index + 1 :]
        self.source = f"{model.source} with {self.integrated} integrated out ({len(self.weights)} nodes)"
        name = model.inputs[0].name if len(model.inputs) == 1 else "x"
        self.inputs = [TensorInfo(name, (self.d - 1,), "float64")]
        self.outputs = list(model.outputs)
        self.notices = list(getattr(model, "notices", []) or [])

    def layers(self) -> list[LayerInfo]:
        return list(self.model.layers())

    def feature_names(self) -> list[str]:
        return list(self._names)

    def output_names(self) -> list[str]:
        return list(self.model.output_names())

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        """Outputs (and captured hidden tensors) averaged over the Gauss nodes."""
        x = np.asarray(x)
        outs, hidden = [], {name: [] for name in capture}
        dtype = row_dtype(self.model)
        buf = self._rows_buffer(len(x), dtype)
        for s in self._chunks(len(x)):
            X = self.expand(x[s], dtype, buf)
            ev = self.model.evaluate(X, capture)
            n = len(X) // self.cost
            outs.append(self._reduce(ev.outputs, n))
            for name in capture:
                hidden[name].append(self._reduce(ev.hidden[name], n))
        _give_back(buf)  # the reduced parts are new arrays: nothing refers to the rows any more
        if not outs:
            k = sum(t.units for t in self.outputs)
            return Evaluation(np.zeros((0, k)), {name: np.zeros((0, 0)) for name in capture})
        return Evaluation(np.concatenate(outs), {k: np.concatenate(v) for k, v in hidden.items()})


def preintegrate(
    evaluator_or_model: Callable[[np.ndarray], Any] | Model,
    laws: Sequence[Law],
    index: int,
    m: int = 32,
) -> PreIntegrated:
    """Integrate input ``index`` out of a function, evaluator or model with an m-node Gauss rule.

    Parameters
    ----------
    evaluator_or_model : callable or Model
        ``(n, d) -> (n,) | (n, k)``, ``(n, d) -> {name: (n, units)}``, or a model.
    laws : sequence of Law
        The d input laws.
    index : int
        Input to integrate out, 0-based.
    m : int
        Gauss nodes (1..:data:`MAX_NODES`).

    Returns
    -------
    PreIntegrated
        A :class:`PreIntegratedModel` when given a model. It maps (n, d − 1)
        rows to what the wrapped object returns for n rows, at the cost of
        n·m evaluations.
    """
    if hasattr(evaluator_or_model, "evaluate") and hasattr(evaluator_or_model, "inputs"):
        return PreIntegratedModel(evaluator_or_model, laws, index, m)  # type: ignore[arg-type]
    return PreIntegrated(evaluator_or_model, laws, index, m)
