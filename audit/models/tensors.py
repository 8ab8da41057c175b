"""Between rows and tensors: what every backend does the same way.

* :func:`split_features` cuts (n, d) rows into one array per input tensor, in
  the tensor's element type and shape (integer tensors: rounded first);
* :func:`gather` flattens output or hidden tensors to (n, units) rows without
  changing their dtype;
* :func:`input_shapes` reads the ``input_shape`` argument (one shape, or one per
  input tensor by name);
* :func:`output_notice` and :func:`no_output_error` word what happens to outputs
  that do not hold real numbers (class labels, sequences of maps);
* :func:`check_features` refuses inputs that hold no features;
* :func:`refused_output`, :func:`moved_notice` and :func:`left_out_notice` word
  what the batch probe (:mod:`.batch`) found: outputs whose rows cannot be
  found, outputs read along another axis, hidden tensors left out.
"""

from __future__ import annotations

import operator
from collections.abc import Mapping, Sequence

import numpy as np

from ..errors import UserError, suggest
from .base import Evaluation, LayerInfo, TensorInfo
from .batch import BatchAxis, Probe, Refusal

__all__ = [
    "FEEDABLE_KINDS",
    "InputShape",
    "Skipped",
    "check_features",
    "empty_evaluation",
    "gather",
    "input_shapes",
    "integer_output_error",
    "left_out_notice",
    "moved_notice",
    "no_output_error",
    "numpy_dtype",
    "output_notice",
    "read_rows",
    "refused_output",
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


def input_shapes(input_shape: InputShape | None, names: Sequence[str], source: str) -> dict[str, tuple[int, ...]]:
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
    """Whether an output left out is a map or a sequence of maps (what skl2onnx's ZipMap makes)."""
    return any("map" in what for _, what in skipped)


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


def check_features(inputs: Sequence[TensorInfo], source: str) -> None:
    """A UserError when an input tensor, or the model as a whole, holds no features."""
    for tensor in inputs:
        if tensor.units == 0:
            raise UserError(
                f"The input '{tensor.name}' of '{source}' has a dimension of size 0 (shape {tensor.shape} per "
                "row), so it holds no features to vary. Export the model with a non-empty input, or give the "
                "right shape with `input_shape`."
            )
    if not inputs:
        raise UserError(f"The model '{source}' takes no input, so there is nothing to vary.")


_EVAL_FIX = (
    "Call `model.eval()` before exporting or saving the model (so that batch normalisation uses its "
    "running statistics and dropout is off), or remove the normalisation across rows"
)


def refused_output(source: str, name: str, refusal: Refusal, probe: Probe) -> UserError:
    """The error for an output whose rows the batch probe could not find."""
    where = f"The output '{name}' of '{source}'"
    if refusal.kind == "random":
        return UserError(
            f"The model '{source}' gives different values when the same batch is evaluated twice (output "
            f"'{name}'): something random is active, such as dropout left in training mode. netdim needs a "
            f"deterministic model. {_EVAL_FIX}."
        )
    if refusal.kind == "rows":
        return UserError(
            f"The model '{source}' gives different values for the same rows when they are evaluated in "
            f"another batch (output '{name}': {refusal.reason}). Its rows depend on the rest of the batch, "
            "typically batch normalisation left in training mode or a normalisation across the batch, and "
            f"netdim evaluates rows in batches of any size and order. {_EVAL_FIX}."
        )
    if refusal.kind in ("constant", "per-batch"):
        return UserError(
            f"{where} holds one value per batch, not one per row ({refusal.reason}): a statistic of all rows "
            "together, such as a mean or a loss. netdim needs one output row per input row: export the "
            "per-row values (the tensor before the reduction)."
        )
    return UserError(
        f"{where} changes its width with the batch size ({refusal.reason}, from {probe.describe()}), so "
        "netdim cannot tell which values belong to which row. Export an output of shape (batch, ...) "
        "whose other dimensions do not depend on the number of rows."
    )


def moved_notice(moved: Sequence[tuple[str, BatchAxis]]) -> str:
    """One line naming the outputs whose rows lie along another axis than the first."""
    listed = ", ".join(f"'{name}' ({axis.describe()})" for name, axis in moved)
    return f"Outputs with their rows along another axis than the first are read with the rows moved first: {listed}."


def left_out_notice(refused: Sequence[tuple[str, Refusal]], limit: int = 6) -> str:
    """One line naming the hidden tensors left out because their rows could not be found."""
    shown = "; ".join(f"'{name}' ({r.reason})" for name, r in refused[:limit])
    more = f"; and {len(refused) - limit} more" if len(refused) > limit else ""
    return (
        f"Hidden tensors left out because netdim could not tell which axis holds the rows of the batch: {shown}{more}."
    )


def empty_evaluation(outputs: Sequence[TensorInfo], layers: Sequence[LayerInfo], dtype: str) -> Evaluation:
    """The evaluation of no rows: (0, k) outputs and (0, units) captured layers in ``dtype``."""
    kind = numpy_dtype(dtype) if dtype != "bfloat16" else np.dtype("float32")
    k = sum(t.units for t in outputs)
    return Evaluation(np.zeros((0, k), kind), {la.name: np.zeros((0, la.units), kind) for la in layers})


def read_rows(axis: BatchAxis, value: np.ndarray, n: int, units: int, name: str, source: str) -> np.ndarray:
    """``value`` as (n, units) rows, or a UserError when its size is not what the probe found."""
    try:
        rows = axis.rows(value, n)
    except ValueError:
        rows = None
    if rows is None or rows.shape != (n, units):
        raise UserError(
            f"The tensor '{name}' of '{source}' came out with shape {tuple(np.shape(value))} for {n} rows, "
            f"but had {units} values per row on the probe: its shape depends on the input values (or on the "
            "batch). Leave it out of `layers`, or export a model whose tensors have a fixed shape per row."
        )
    return rows
