"""The one interface every model backend implements.

A model has one input tensor whose non-batch shape is flattened in C order to
``d`` features, one or more output tensors flattened (and concatenated, in
order) to scalar output units, and a list of probe-able hidden layers. It is
evaluated in batches of float64 rows; it runs in its own precision (float32
for stored networks) and always returns float64 arrays.

Backends know nothing of estimators, designs or reports.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Protocol, runtime_checkable

import numpy as np

__all__ = ["Evaluation", "LayerInfo", "Model", "TensorInfo", "index_names"]


@dataclass(frozen=True)
class TensorInfo:
    """Name and non-batch shape of an input or output tensor."""

    name: str
    shape: tuple[int, ...]
    dtype: str = "float32"

    @property
    def units(self) -> int:
        return int(math.prod(self.shape)) if self.shape else 1


@dataclass(frozen=True)
class LayerInfo:
    """A hidden tensor that can be captured.

    Attributes
    ----------
    name : str
        Name used with ``capture`` and on the command line.
    op : str
        Operation or module type that produced it (``Relu``, ``Tanh``, ``Linear``...).
    shape : tuple of int
        Non-batch shape.
    activation : bool
        True for the output of a nonlinearity (captured by default).
    """

    name: str
    op: str
    shape: tuple[int, ...]
    activation: bool = False

    @property
    def units(self) -> int:
        return int(math.prod(self.shape)) if self.shape else 1


@dataclass
class Evaluation:
    """What one batch evaluation returns.

    Attributes
    ----------
    outputs : ndarray, shape (n, k)
        All output tensors, flattened in C order and concatenated, float64.
    hidden : dict of str to ndarray, shape (n, units)
        Captured hidden tensors, flattened, float64.
    """

    outputs: np.ndarray
    hidden: dict[str, np.ndarray] = field(default_factory=dict)


@runtime_checkable
class Model(Protocol):
    """What studies need of a model.

    Attributes
    ----------
    source : str
        Path or reference the model was opened from.
    format : str
        ``onnx``, ``torchscript``, ``torch-export``, ``state-dict``, ``torch-module`` or ``python``.
    input : TensorInfo
        The input tensor; ``input.units`` is the number of features d.
    outputs : list of TensorInfo
        The output tensors, in order.
    """

    source: str
    format: str
    input: TensorInfo
    outputs: list[TensorInfo]

    def layers(self) -> list[LayerInfo]:
        """Probe-able hidden layers, in graph / execution order."""
        ...

    def feature_names(self) -> list[str]:
        """Default feature names (by index, e.g. ``x[0,3,4]``)."""
        ...

    def output_names(self) -> list[str]:
        """Default names of the flattened output units."""
        ...

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        """Evaluate rows ``x`` of shape (n, d), float64; capture named hidden layers."""
        ...


def check_rows(x: np.ndarray, d: int) -> np.ndarray:
    """``x`` as an array of shape (n, d), or a ValueError naming the shape expected."""
    x = np.asarray(x)
    if x.ndim != 2 or x.shape[1] != d:
        raise ValueError(f"x must have shape (n, {d}), got {x.shape}.")
    return x


def index_names(prefix: str, shape: tuple[int, ...]) -> list[str]:
    """Names of the C-order flattened elements of a tensor: ``x[0,3,4]``.

    A 1-d tensor gives ``x[0]``, ``x[1]``...; a scalar gives ``[prefix]``.
    """
    if not shape:
        return [prefix]
    return [f"{prefix}[{','.join(map(str, idx))}]" for idx in np.ndindex(*shape)]


def integer_output_error(source: str, name: str, dtype: str) -> str:
    """The message for a model file whose output holds integers (labels, counts)."""
    return (
        f"The output '{name}' of '{source}' holds integers ({dtype}), such as class labels from an "
        "argmax. Sobol' indices of a label measure which inputs flip the label, which is rarely what "
        "is wanted: export the scores (logits or probabilities) instead, or wrap the model in a Python "
        "function that returns floats if the integers are meaningful numbers."
    )
