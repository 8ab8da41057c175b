"""Between rows and tensors: what every backend does the same way.

* :func:`split_features` cuts (n, d) rows into one array per input tensor, in
  the tensor's element type and shape (integer tensors: rounded first);
* :func:`gather` flattens output or hidden tensors to (n, units) rows without
  changing their dtype;
* :func:`input_shapes` reads the ``input_shape`` argument (one shape, or one per
  input tensor by name);
* :func:`output_notice` and :func:`no_output_error` word what happens to outputs
  that do not hold real numbers (class labels, sequences of maps).
"""

from __future__ import annotations

import operator
from collections.abc import Mapping, Sequence

import numpy as np

from ..errors import UserError, suggest
from .base import TensorInfo

__all__ = [
    "FEEDABLE_KINDS",
    "InputShape",
    "Skipped",
    "gather",
    "input_shapes",
    "integer_output_error",
    "no_output_error",
    "numpy_dtype",
    "output_notice",
    "split_features",
]

#: Kinds of numpy dtypes rows can be fed as: floats, signed and unsigned integers, booleans.
FEEDABLE_KINDS = "fiub"

#: The ``input_shape`` argument: one non-batch shape, or one per input tensor name.
InputShape = Sequence[int] | Mapping[str, Sequence[int]]

#: An output left out: (name, what it holds), e.g. ``("label", "int64")``.
Skipped = tuple[str, str]

# Integers beyond 2**53 are not all representable as float64 features anyway.
_INT_LIMIT = 2.0**53


def numpy_dtype(name: str) -> np.dtype:
    """The numpy dtype rows are fed as for a tensor of element type ``name``.

    numpy has no bfloat16: such tensors are fed float32, and the backend casts.
    """
    return np.dtype("float32" if name == "bfloat16" else name)


def _integers(part: np.ndarray, dtype: np.dtype) -> np.ndarray:
    """Round to the nearest integer (ties to even), clip to the type's range, cast."""
    rounded = np.rint(part)
    if dtype.kind == "b":
        return np.ascontiguousarray(rounded != 0)
    info = np.iinfo(dtype)
    low, high = max(float(info.min), -_INT_LIMIT), min(float(info.max), _INT_LIMIT)
    return np.ascontiguousarray(np.clip(rounded, low, high).astype(dtype))


def split_features(x: np.ndarray, inputs: Sequence[TensorInfo]) -> list[np.ndarray]:
    """One array of shape (n, *tensor.shape) per input tensor, in its element type.

    Parameters
    ----------
    x : ndarray, shape (n, d)
        Rows of features, any float dtype; the columns of each tensor follow
        those of the tensor before it.
    inputs : sequence of TensorInfo
        The input tensors, in feed order.

    Returns
    -------
    list of ndarray
        C-contiguous; a view of ``x`` when one tensor takes every column in
        ``x``'s own dtype.
    """
    n = len(x)
    arrays = []
    start = 0
    for tensor in inputs:
        stop = start + tensor.units
        part = x if len(inputs) == 1 else x[:, start:stop]
        dtype = numpy_dtype(tensor.dtype)
        part = _integers(part, dtype) if dtype.kind in "iub" else np.ascontiguousarray(part, dtype=dtype)
        arrays.append(part.reshape((n, *tensor.shape)))
        start = stop
    return arrays


def gather(arrays: Sequence[np.ndarray], n: int) -> np.ndarray:
    """Flatten each array to (n, units) and concatenate them, keeping their dtype.

    One array is reshaped without a copy when its memory allows; several are
    concatenated (mixed float types promote to the wider one).
    """
    parts = [np.asarray(a).reshape(n, -1) for a in arrays]
    if len(parts) == 1:
        return parts[0]
    return np.concatenate(parts, axis=1)


def input_shapes(
    input_shape: InputShape | None, names: Sequence[str], source: str
) -> dict[str, tuple[int, ...]]:
    """The ``input_shape`` argument as ``{tensor name: shape}``, checked against ``names``.

    Parameters
    ----------
    input_shape : sequence of int, mapping of str to sequence of int, or None
        One non-batch shape (only for a model with one input tensor), or a
        shape per input tensor name.
    names : sequence of str
        The model's input tensor names, in feed order.
    source : str
        The model file, for messages.

    Returns
    -------
    dict of str to tuple of int
        Empty when ``input_shape`` is None.
    """
    if input_shape is None:
        return {}
    if isinstance(input_shape, Mapping):
        shapes = {}
        for name, shape in input_shape.items():
            if name not in names:
                listed = ", ".join(f"'{n}'" for n in names)
                raise UserError(
                    f"The input shape given for tensor '{name}' does not fit '{source}': its input "
                    f"tensors are {listed}." + suggest(str(name), names) + " Key the shapes by these names."
                )
            shapes[str(name)] = _shape(shape, source)
        return shapes
    if len(names) != 1:
        listed = ", ".join(f"'{n}'" for n in names)
        raise UserError(
            f"'{source}' takes {len(names)} input tensors ({listed}), so one input shape "
            f"{tuple(input_shape)} is ambiguous. Give the shape of each tensor by name, e.g. "
            f"input_shape={{'{names[0]}': (3,), '{names[-1]}': (1, 8, 8)}}."
        )
    return {names[0]: _shape(input_shape, source)}


def _shape(shape: object, source: str) -> tuple[int, ...]:
    try:
        dims = tuple(operator.index(s) for s in shape)  # type: ignore[union-attr]
        valid = not isinstance(shape, str | bytes) and all(d > 0 for d in dims)
    except (TypeError, ValueError):
        valid = False
    if not valid:
        raise UserError(
            f"The input shape {shape!r} given for '{source}' is not a list of positive whole "
            "numbers. Give the shape of one input row without the batch axis, e.g. (8,) or (1, 8, 8)."
        )
    return dims


def integer_output_error(source: str, name: str, dtype: str) -> str:
    """The message for a model file whose only output holds integers (labels, counts)."""
    return (
        f"The output '{name}' of '{source}' holds integers ({dtype}), such as class labels from an "
        "argmax. Sobol' indices of a label measure which inputs flip the label, which is rarely what "
        "is wanted: export the scores (logits or probabilities) instead, or wrap the model in a Python "
        "function that returns floats if the integers are meaningful numbers."
    )


_ZIPMAP = (
    "convert the scikit-learn model with skl2onnx option options={id(model): {'zipmap': False}} "
    "so that the probabilities come as a float tensor"
)


def _describe(skipped: Sequence[Skipped]) -> str:
    return ", ".join(f"'{name}' ({what})" for name, what in skipped)


def _maps(skipped: Sequence[Skipped]) -> bool:
    return any(not what.startswith(("int", "uint", "bool")) for _, what in skipped)


def output_notice(skipped: Sequence[Skipped]) -> str:
    """One line naming the outputs left out because they hold no real numbers."""
    line = f"Outputs that hold no real numbers are left out: {_describe(skipped)}."
    if _maps(skipped):
        line += f" For a sequence of maps (a ZipMap operator), {_ZIPMAP}."
    return line


def no_output_error(source: str, skipped: Sequence[Skipped]) -> UserError:
    """The error for a model none of whose outputs holds real numbers."""
    if len(skipped) == 1 and not _maps(skipped):
        return UserError(integer_output_error(source, *skipped[0]))
    fix = _ZIPMAP if _maps(skipped) else "export the scores (logits or probabilities) as float tensors"
    return UserError(
        f"The model '{source}' has no output netdim can audit: {_describe(skipped)} hold no real "
        f"numbers (class labels, sequences or maps). Sobol' indices need float outputs: {fix}."
    )
