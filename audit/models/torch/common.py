"""The common part of the Torch backends: signature, batch probe, batching, casting, capture.

:class:`TorchModel` evaluates a probe in two batches (:mod:`..batch`) to learn
its output tensors and which axis of each holds the rows (outputs that hold no
real numbers are left out with a notice; an output of one value per batch, one
whose width changes with the batch size, and a model whose rows depend on the
rest of the batch are refused). It feeds each input tensor its columns in the
tensor's own element type (in chunks when the batch size is bounded), returns
outputs and hidden tensors rows first in the dtype the model computed them
(bfloat16 as float32), and checks the names of captured layers. Layers are
found the same way: every candidate tensor is captured on the probe, and those
whose rows cannot be found are left out with a notice.

Subclasses (TorchScript, ``torch.export`` programs, eager modules) only run one
batch, capturing tensors by their own keys, and list their candidate layers,
named by :func:`audit.models.graph.name_layers` (or by module path for eager
modules). Everything runs under ``torch.inference_mode()`` (``torch.no_grad()``
for models that keep tensors for autograd), so no result requires grad.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import torch
from torch.utils import _pytree as pytree

from ...errors import UserError, suggest
from ..base import Evaluation, LayerInfo, TensorInfo, check_rows, element_names, feature_count
from ..batch import BatchAxis, Refusal, establish, make_probe
from ..graph import Layer
from ..tensors import (
    Skipped,
    check_features,
    empty_evaluation,
    gather,
    left_out_notice,
    moved_notice,
    no_output_error,
    output_notice,
    read_rows,
    refused_output,
    split_features,
)

__all__ = [
    "TorchModel",
    "dtype_name",
    "float_dtype",
    "input_tensors",
    "leaves",
    "shape_error",
]


def float_dtype(tensors: Any) -> torch.dtype:
    """The dtype of the first floating tensor (parameters, buffers), else float32."""
    for tensor in tensors:
        if tensor.is_floating_point():
            return tensor.dtype
    return torch.float32


def dtype_name(dtype: torch.dtype) -> str:
    """``torch.float32`` -> ``"float32"``."""
    return str(dtype).removeprefix("torch.")


def leaves(result: Any) -> list[torch.Tensor]:
    """The tensors of a forward result (a tensor, or a tuple / dict of tensors)."""
    return [leaf for leaf in pytree.tree_leaves(result) if isinstance(leaf, torch.Tensor)]


def shape_error(path: Path, what: str, names: Sequence[str] = ("x",)) -> UserError:
    """The message for input shapes a Torch file does not tell."""
    if len(names) == 1:
        return UserError(
            f"The input shape of the Torch model '{path}' is unknown: {what}. Give the shape of one "
            "input row (without the batch axis), e.g. `input_shape` 8 or 1,8,8."
        )
    listed = ", ".join(f"'{n}'" for n in names)
    return UserError(
        f"The input shapes of the Torch model '{path}' are unknown: its forward takes the tensors "
        f"{listed} and {what}. Give the shape of one row of each tensor by name, e.g. "
        f"input_shape={{'{names[0]}': (3,), '{names[-1]}': (1, 8, 8)}}."
    )


def input_tensors(
    path: Path,
    names: Sequence[str],
    given: dict[str, tuple[int, ...]],
    dtype: torch.dtype,
    infer: Callable[[], tuple[int, ...]] | None = None,
) -> list[TensorInfo]:
    """One :class:`TensorInfo` per forward argument, its shape given or (one input) inferred.

    ``infer`` reads the shape of a single input from the network (its first layer) and
    raises :func:`shape_error` when it cannot.
    """
    missing = [name for name in names if name not in given]
    if missing and len(names) == 1 and infer is not None:
        given = {names[0]: infer()}
    elif missing:
        raise shape_error(path, f"the file does not record the shape of {', '.join(repr(m) for m in missing)}", names)
    return [TensorInfo(name, given[name], dtype_name(dtype)) for name in names]


def numpy_of(t: torch.Tensor) -> np.ndarray:
    """A tensor as a numpy array in its own dtype (bfloat16, which numpy lacks: float32)."""
    t = t.detach()
    if t.dtype == torch.bfloat16:
        t = t.to(torch.float32)
    return t.cpu().numpy()


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip()
    return text.splitlines()[0][:300] if text else type(exc).__name__


_GRAD_WORDS = ("requires grad", "requires_grad", "grad_fn", "does not require grad", "backward")


class TorchModel:
    """Common part of the Torch backends: signature, batch probe, batching, casting, capture.

    Subclasses set ``format`` and the module, build the input tensors, and
    implement :meth:`_forward` and :meth:`_candidates`.

    Parameters
    ----------
    path : Path
        The model file.
    inputs : list of TensorInfo
        The forward's tensors, in argument order, with their element types.
    batch : (int, int or None)
        Smallest and largest batch the model accepts (None: unbounded).

    Attributes
    ----------
    notices : list of str
        Remarks for the user.
    batch_size : int or None
        The fixed batch size of the model, or None when any batch size works.
    """

    format = "torch"

    def __init__(self, path: Path, inputs: list[TensorInfo], *, batch: tuple[int, int | None] = (1, None)) -> None:
        self.path = path
        self.source = str(path)
        self.notices: list[str] = []
        self.inputs = list(inputs)
        check_features(self.inputs, self.source)
        self._dtypes = [getattr(torch, t.dtype) for t in self.inputs]
        self._min_batch, self._max_batch = batch
        self.batch_size = batch[1] if batch[0] == batch[1] else None
        self._layers: list[LayerInfo] | None = None
        self._found: dict[str, tuple[str, BatchAxis]] = {}
        self._probe = make_probe(feature_count(self), batch[0], batch[1])
        self._read_outputs()

    # subclasses -------------------------------------------------------------------------

    def _forward(
        self, xs: list[torch.Tensor], capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        """Run one batch; return output leaves and the tensors of keys ``capture``, as made."""
        raise NotImplementedError

    def _candidates(self) -> list[Layer]:
        """Candidate layers, named, with the backend's keys (in execution order)."""
        raise NotImplementedError

    def _release(self, keys: tuple[str, ...]) -> None:
        """Drop what capturing ``keys`` cached (after the probe of every candidate)."""

    # signature --------------------------------------------------------------------------

    def _read_outputs(self) -> None:
        probe = self._probe
        runs = [self._raw(x, ())[0] for x in (probe.small, probe.large, probe.large)]
        if not runs[1]:
            raise UserError(
                f"The Torch model '{self.path}' returned no tensors. netdim audits models whose "
                "forward returns a tensor (or a tuple / dict of tensors)."
            )
        label = (lambda i: f"y{i}") if len(runs[1]) > 1 else (lambda i: "y")
        skipped: list[Skipped] = []
        self._keep: list[int] = []
        self._output_axes: list[BatchAxis] = []
        self.outputs: list[TensorInfo] = []
        moved = []
        for i, (s, lg, a) in enumerate(zip(*runs, strict=True)):
            if not lg.is_floating_point():
                skipped.append((label(i), dtype_name(lg.dtype)))
                continue
            small, large, again = numpy_of(s), numpy_of(lg), numpy_of(a)
            axis = establish(small, large, probe, again)
            if isinstance(axis, Refusal) or axis.factor != 1:
                why = (
                    axis
                    if isinstance(axis, Refusal)
                    else Refusal("shape", f"its rows are merged with another axis ({axis.describe()})")
                )
                raise refused_output(self.source, label(i), why, probe)
            if axis.moved:
                moved.append((label(i), axis))
            self._keep.append(i)
            self._output_axes.append(axis)
            self.outputs.append(TensorInfo(label(i), axis.shape(large, len(probe.large)), dtype_name(lg.dtype)))
        if not self._keep:
            raise no_output_error(self.source, skipped)
        if skipped:
            self.notices.append(output_notice(skipped))
        if moved:
            self.notices.append(moved_notice(moved))

    def feature_names(self) -> list[str]:
        return element_names(self.inputs)

    def output_names(self) -> list[str]:
        return element_names(self.outputs)

    def layers(self) -> list[LayerInfo]:
        """Probe-able hidden layers, in execution order."""
        if self._layers is None:
            self._layers = self._discover(self._candidates())
        return list(self._layers)

    def _discover(self, named: list[Layer]) -> list[LayerInfo]:
        """The candidates whose rows the probe finds, as layers."""
        if not named:
            return []
        keys = tuple(dict.fromkeys(layer.key for layer in named))
        probe = self._probe
        try:
            runs = [self._raw(x, keys)[1] for x in (probe.small, probe.large, probe.large)]
        finally:
            self._release(keys)
        values = {key: run for key, run in zip(keys, zip(*runs, strict=True), strict=True)}
        layers, refused = [], []
        for layer in named:
            s, lg, a = values[layer.key]
            if not isinstance(lg, torch.Tensor) or not lg.is_floating_point():
                continue
            large = numpy_of(lg)
            axis = establish(numpy_of(s), large, probe, numpy_of(a))
            if isinstance(axis, Refusal):
                if axis.kind != "constant":
                    refused.append((layer.name, axis))
                continue
            self._found[layer.name] = (layer.key, axis)
            shape = axis.shape(large, len(probe.large))
            layers.append(LayerInfo(layer.name, layer.op, shape, layer.activation, layer.detail or layer.key))
        if refused:
            self.notices.append(left_out_notice(refused))
        return layers

    # evaluation -------------------------------------------------------------------------

    def _tensors(self, x: np.ndarray) -> list[torch.Tensor]:
        """Rows (n, d) as one tensor per input, in its dtype and shape."""
        tensors = []
        for array, dtype in zip(split_features(x, self.inputs), self._dtypes, strict=True):
            t = torch.from_numpy(array)
            tensors.append(t if t.dtype == dtype else t.to(dtype))  # bfloat16 arrives as float32
        return tensors

    def _raw(self, x: np.ndarray, capture: tuple[str, ...]) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        """One batch ``x`` (n, d) through the model, without autograd; failures become UserErrors."""
        xs = self._tensors(x)
        try:
            try:
                with torch.inference_mode():
                    return self._forward(xs, capture)
            except RuntimeError as exc:
                if "inference" not in str(exc).lower():
                    raise
            with torch.no_grad():  # the model keeps tensors for autograd, which inference mode forbids
                return self._forward(xs, capture)
        except UserError:
            raise
        except Exception as exc:
            raise self._failure(exc, len(x)) from exc

    def _failure(self, exc: Exception, n: int) -> UserError:
        first = _first_line(exc)
        if any(word in first.lower() for word in _GRAD_WORDS):
            return UserError(
                f"The Torch model '{self.path}' needs gradients during its forward pass ({type(exc).__name__}: "
                f"{first}); netdim evaluates models without autograd, as in inference. Export the model "
                "after `model.eval()` with a forward that does not call autograd (compute any derivative "
                "it needs in closed form), or wrap it in a Python function that returns the values."
            )
        shapes = ", ".join(f"{t.name} {t.shape}" for t in self.inputs)
        return UserError(
            f"The Torch model '{self.path}' failed on a batch of {n} rows of input shape "
            f"{shapes} ({type(exc).__name__}: {first}). If the input shape "
            "is wrong, give the shape of one input row, e.g. `input_shape` 1,8,8."
        )

    def _run(
        self, x: np.ndarray, capture: tuple[str, ...], axes: list[BatchAxis], units: list[tuple[str, int]]
    ) -> list[np.ndarray]:
        """Kept outputs, then captured tensors, as (n, units) rows; in chunks when the batch is bounded.

        ``units`` gives each tensor's name for messages and its values per row.
        """
        n = len(x)
        low, high = self._min_batch, self._max_batch
        size = n if n >= low and (high is None or n <= high) else (high or max(n, low))
        parts: list[list[np.ndarray]] = []
        for start in range(0, n, size):
            chunk = x[start : start + size]
            real = len(chunk)
            if real < low:
                chunk = np.concatenate([chunk, np.repeat(chunk[-1:], low - real, axis=0)])
            outs, hidden = self._raw(chunk, capture)
            values = [outs[i] for i in self._keep] + list(hidden)
            rows = len(chunk)
            parts.append([
                read_rows(ax, numpy_of(v), rows, size, label, self.source)[:real]
                for ax, v, (label, size) in zip(axes, values, units, strict=True)
            ])  # fmt: skip
        if len(parts) == 1:
            return parts[0]
        return [np.concatenate([p[i] for p in parts]) for i in range(len(axes))]

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        """Evaluate rows ``x``.

        Parameters
        ----------
        x : ndarray, shape (n, d)
            Input rows, any float dtype; each tensor's columns are cast to its
            element type (integers: rounded to the nearest first).
        capture : sequence of str
            Names of hidden layers (from :meth:`layers`) to return as well.

        Returns
        -------
        Evaluation
            Outputs (n, k) and the captured layers (n, units), in the model's
            own floating dtype (bfloat16 as float32).
        """
        x = check_rows(x, feature_count(self))
        n = len(x)
        capture = tuple(dict.fromkeys(capture))
        if capture:
            self._check_capture(capture)
        if n == 0:
            chosen = [la for la in self.layers() if la.name in capture]
            return empty_evaluation(self.outputs, chosen, self.outputs[0].dtype)
        keys = tuple(self._found[name][0] for name in capture)
        axes = [*self._output_axes, *(self._found[name][1] for name in capture)]
        sizes = [(t.name, t.units) for t in self.outputs]
        if capture:
            per_row = {la.name: la.units for la in self.layers()}
            sizes += [(name, per_row[name]) for name in capture]
        values = self._run(x, keys, axes, sizes)
        k = len(self._keep)
        return Evaluation(outputs=gather(values[:k], n), hidden=dict(zip(capture, values[k:], strict=True)))

    def gradients(self, x: np.ndarray, capture: Sequence[str] = ()) -> Any:
        """Values and gradients of the outputs (and the ``capture`` layers) at rows ``x``, by autograd.

        See :func:`audit.models.torch.gradients.autograd_gradients`; ``evaluate`` is unchanged.
        """
        from .gradients import autograd_gradients

        return autograd_gradients(self, x, capture)

    def _check_capture(self, capture: Sequence[str]) -> None:
        known = {layer.name for layer in self.layers()}
        for name in capture:
            if name not in known:
                raise UserError(
                    f"The Torch model '{self.path.name}' has no probe-able layer '{name}'."
                    + suggest(name, known)
                    + f" Run 'netdim layers {self.source}' to list the layer names."
                )
