"""The one interface every model backend implements.

A model takes one or more input tensors. Each row of features is the
concatenation of the input tensors' elements, tensor after tensor in feed order,
each flattened in C order, so a model has ``d = Σ units`` features. A model
returns one or more output tensors, flattened and concatenated in the same way
to ``k`` scalar output units, and offers a list of probe-able hidden layers,
named by the module path of their origin in every format
(:mod:`audit.models.graph`). Outputs and layers are read rows first, whichever
axis of the tensor holds the rows (:mod:`audit.models.batch`).

Rows come in any floating dtype; a backend casts each tensor's columns to the
tensor's own element type (integer tensors: rounded to the nearest integer
first) and returns outputs and hidden tensors in the precision the runtime
produced them (float16, float32 or float64; bfloat16 as float32). Converting to
float64 is the job of whoever accumulates. Python-function models compute, and
return, float64.

Backends know nothing of estimators, designs, studies or reports.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Protocol, runtime_checkable

import numpy as np

from ..errors import UserError, suggest

__all__ = [
    "Evaluation",
    "LayerInfo",
    "Model",
    "TensorInfo",
    "check_rows",
    "element_names",
    "feature_count",
    "index_names",
    "output_units",
    "row_dtype",
]


@dataclass(frozen=True)
class TensorInfo:
    """Name, non-batch shape and element type of an input or output tensor.

    Attributes
    ----------
    name : str
        Tensor name (the graph's, the forward argument's, or ``y``, ``y0``...).
    shape : tuple of int
        Non-batch shape; ``()`` for one scalar per row.
    dtype : str
        Element type as numpy or Torch spell it: ``float32``, ``float64``,
        ``float16``, ``bfloat16``, ``int64``...
    """

    name: str
    shape: tuple[int, ...]
    dtype: str = "float32"

    @property
    def units(self) -> int:
        """Number of scalar elements per row."""
        return int(math.prod(self.shape)) if self.shape else 1


@dataclass(frozen=True)
class LayerInfo:
    """A hidden tensor that can be captured.

    Attributes
    ----------
    name : str
        Name used with ``capture`` and on the command line: the module path of
        its origin, the same in every format (``body.1``, ``encoder.attn``,
        ``block/add#2``; see :mod:`audit.models.graph` for the rule).
    op : str
        Operation that produced it, in lower case (``tanh``, ``gelu``,
        ``layer_norm``, ``linear``, ``gemm``...); an activation that exporters
        split into several nodes is named once for the whole function.
    shape : tuple of int
        Non-batch shape, rows first (a tensor whose rows lie along another axis
        is read with them moved first).
    activation : bool
        True for the output of a nonlinearity (captured by default).
    tensor : str
        The format's own name of the tensor (ONNX tensor name, ``torch.export``
        node name, TorchScript value, module path of an eager module), shown as
        a detail.
    """

    name: str
    op: str
    shape: tuple[int, ...]
    activation: bool = False
    tensor: str = ""

    @property
    def units(self) -> int:
        """Number of scalar elements per row."""
        return int(math.prod(self.shape)) if self.shape else 1


@dataclass
class Evaluation:
    """What one batch evaluation returns.

    Attributes
    ----------
    outputs : ndarray, shape (n, k)
        All output tensors, flattened in C order and concatenated, in the
        model's own floating dtype.
    hidden : dict of str to ndarray, shape (n, units)
        Captured hidden tensors, flattened, in the model's own floating dtype.
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
    inputs : list of TensorInfo
        The input tensors in feed order; the features are their elements,
        tensor after tensor, each in C order (:func:`feature_count` of them).
    outputs : list of TensorInfo
        The output tensors, in order.
    notices : list of str
        Remarks of the backend for the user (outputs left out, slow batching...).
    """

    source: str
    format: str
    inputs: list[TensorInfo]
    outputs: list[TensorInfo]
    notices: list[str]

    def layers(self) -> list[LayerInfo]:
        """Probe-able hidden layers, in graph / execution order."""
        ...

    def feature_names(self) -> list[str]:
        """Default feature names, per input tensor element (``x[0,3,4]``)."""
        ...

    def output_names(self) -> list[str]:
        """Default names of the flattened output units."""
        ...

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        """Evaluate rows ``x`` of shape (n, d), any float dtype; capture named hidden layers."""
        ...


def feature_count(model: Model) -> int:
    """Number of features d of ``model``: the units of all its input tensors.

    Parameters
    ----------
    model : Model

    Returns
    -------
    int
    """
    return sum(t.units for t in model.inputs)


def row_dtype(model: Model) -> type[np.floating]:
    """Row type to build for ``model``: float32 when every input tensor is float32 or float16.

    Rows of float32 carry every value a float32 or float16 input can hold, so
    building them in float64 would only cost a cast. Any other input (float64,
    integers, bfloat16) gets float64 rows.

    Parameters
    ----------
    model : Model

    Returns
    -------
    type
        ``numpy.float32`` or ``numpy.float64``.
    """
    small = ("float32", "float16")
    return np.float32 if model.inputs and all(t.dtype in small for t in model.inputs) else np.float64


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


def element_names(tensors: Sequence[TensorInfo]) -> list[str]:
    """Names of the elements of ``tensors``, tensor after tensor: features or output units."""
    names: list[str] = []
    for tensor in tensors:
        names.extend(index_names(tensor.name or "x", tensor.shape))
    return names


def output_units(model: Model, names: Sequence[str]) -> list[int]:
    """Positions of the output units (columns of ``Evaluation.outputs``) that ``names`` select.

    Parameters
    ----------
    model : Model
    names : sequence of str
        Output tensor names (every unit of the tensor: ``y``) or output unit
        names (``y[1]``, as :meth:`Model.output_names` gives them), in any mix.

    Returns
    -------
    list of int
        Unit positions in the order asked for, each once.

    Raises
    ------
    UserError
        For a name that is neither, listing the valid names.
    """
    units = model.output_names()
    by_unit = {name: i for i, name in enumerate(units)}
    by_tensor: dict[str, list[int]] = {}
    start = 0
    for tensor in model.outputs:
        by_tensor[tensor.name] = list(range(start, start + tensor.units))
        start += tensor.units
    chosen: list[int] = []
    for name in names:
        found = by_tensor.get(name)
        if found is None and name in by_unit:
            found = [by_unit[name]]
        if found is None:
            valid = [*by_tensor, *(u for u in units if u not in by_tensor)]
            shown = ", ".join(f"'{v}'" for v in valid[:12])
            shown += f" and {len(valid) - 12} more" if len(valid) > 12 else ""
            raise UserError(
                f"The model '{model.source}' has no output named '{name}'."
                + suggest(name, valid)
                + f" Its outputs are {shown}: give output tensor names or unit names."
            )
        chosen.extend(i for i in found if i not in chosen)
    return chosen
