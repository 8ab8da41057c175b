"""The common part of the Torch backends: signature, batching, casting, capture checks.

:class:`TorchModel` probes the model once on a few rows to learn its output
tensors (outputs that hold no real numbers are left out with a notice), feeds
each input tensor its columns in the tensor's own element type (in chunks when
the batch size is bounded), returns outputs and hidden tensors in the dtype the
model computed them (bfloat16 as float32), and checks the names of captured
layers. Subclasses (TorchScript, ``torch.export`` programs, eager modules) only
run one batch and list layers.
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
from ..tensors import Skipped, gather, no_output_error, output_notice, split_features

__all__ = [
    "ACTIVATION_MODULES",
    "TorchModel",
    "dtype_name",
    "float_dtype",
    "input_tensors",
    "leaves",
    "shape_error",
]

#: ``torch.nn`` module class names whose output counts as an activation.
ACTIVATION_MODULES = frozenset(
    {
        "ReLU", "ReLU6", "LeakyReLU", "PReLU", "RReLU", "ELU", "SELU", "CELU", "GELU", "SiLU",
        "Mish", "Tanh", "Sigmoid", "Hardtanh", "Hardsigmoid", "Hardswish", "Softplus",
        "Softsign", "Softmax", "LogSoftmax", "LogSigmoid", "Tanhshrink", "Softshrink",
        "Hardshrink", "Threshold", "GLU",
    }
)  # fmt: skip

_PROBE_ROWS = 3


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
            "input row (without the batch axis), e.g. --input-shape 8 or --input-shape 1,8,8."
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


def _rows(t: torch.Tensor, n: int) -> np.ndarray:
    """(n, units) numpy view of a tensor in its own dtype (bfloat16, which numpy lacks: float32)."""
    t = t.detach()
    if t.dtype == torch.bfloat16:
        t = t.to(torch.float32)
    return t.reshape(n, -1).numpy()


class TorchModel:
    """Common part of the Torch backends: signature, batching, casting, capture checks.

    Subclasses set ``format`` and the module, build the input tensors, and
    implement :meth:`_forward` and :meth:`_discover_layers`.

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

    def __init__(
        self, path: Path, inputs: list[TensorInfo], *, batch: tuple[int, int | None] = (1, None)
    ) -> None:
        self.path = path
        self.source = str(path)
        self.notices: list[str] = []
        self.inputs = list(inputs)
        self._dtypes = [getattr(torch, t.dtype) for t in self.inputs]
        self._min_batch, self._max_batch = batch
        self.batch_size = batch[1] if batch[0] == batch[1] else None
        self._layers: list[LayerInfo] | None = None
        outs = self._probe_outputs()
        label = (lambda i: f"y{i}") if len(outs) > 1 else (lambda i: "y")
        skipped: list[Skipped] = [
            (label(i), dtype_name(o.dtype)) for i, o in enumerate(outs) if not o.is_floating_point()
        ]
        self._keep = [i for i, o in enumerate(outs) if o.is_floating_point()]
        if not self._keep:
            raise no_output_error(self.source, skipped)
        if skipped:
            self.notices.append(output_notice(skipped))
        self.outputs = [TensorInfo(label(i), tuple(outs[i].shape[1:]), dtype_name(outs[i].dtype)) for i in self._keep]

    # subclasses -------------------------------------------------------------------------

    def _forward(
        self, xs: list[torch.Tensor], capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        """Run one batch; return output leaves and captured tensors (in ``capture`` order)."""
        raise NotImplementedError

    def _discover_layers(self) -> list[LayerInfo]:
        raise NotImplementedError

    # signature --------------------------------------------------------------------------

    def feature_names(self) -> list[str]:
        return element_names(self.inputs)

    def output_names(self) -> list[str]:
        return element_names(self.outputs)

    def layers(self) -> list[LayerInfo]:
        """Probe-able hidden layers, in execution order."""
        if self._layers is None:
            self._layers = self._discover_layers()
        return list(self._layers)

    # evaluation -------------------------------------------------------------------------

    def _probe_rows(self) -> int:
        rows = max(_PROBE_ROWS, self._min_batch)
        return rows if self._max_batch is None else min(rows, self._max_batch)

    def _zeros(self) -> list[torch.Tensor]:
        """Input tensors of :meth:`_probe_rows` rows of zeros."""
        return self._tensors(np.zeros((self._probe_rows(), feature_count(self))))

    def _tensors(self, x: np.ndarray) -> list[torch.Tensor]:
        """Rows (n, d) as one tensor per input, in its dtype and shape."""
        tensors = []
        for array, dtype in zip(split_features(x, self.inputs), self._dtypes, strict=True):
            t = torch.from_numpy(array)
            tensors.append(t if t.dtype == dtype else t.to(dtype))  # bfloat16 arrives as float32
        return tensors

    def _run(
        self, x: np.ndarray, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        """Run rows ``x`` (n, d), in chunks when the model's batch size is bounded."""
        n = len(x)
        xs = self._tensors(x)
        low, high = self._min_batch, self._max_batch
        try:
            with torch.inference_mode():
                if n >= low and (high is None or n <= high):
                    return self._forward(xs, capture)
                size = high or max(n, low)
                parts = []
                for start in range(0, n, size):
                    chunks = [t[start : start + size] for t in xs]
                    if len(chunks[0]) < low:
                        chunks = [torch.cat([c, c[-1:].expand(low - len(c), *c.shape[1:])]) for c in chunks]
                    parts.append(self._forward(chunks, capture))
                outs = [torch.cat([p[0][i] for p in parts])[:n] for i in range(len(parts[0][0]))]
                hidden = [torch.cat([p[1][i] for p in parts])[:n] for i in range(len(capture))]
                return outs, hidden
        except UserError:
            raise
        except Exception as exc:
            first = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
            shapes = ", ".join(f"{t.name} {t.shape}" for t in self.inputs)
            raise UserError(
                f"The Torch model '{self.path}' failed on a batch of {n} rows of input shape "
                f"{shapes} ({type(exc).__name__}: {first[:300]}). If the input shape "
                "is wrong, give the shape of one input row, e.g. --input-shape 1,8,8."
            ) from exc

    def _probe_outputs(self) -> list[torch.Tensor]:
        outs, _ = self._run(np.zeros((self._probe_rows(), feature_count(self))), ())
        if not outs:
            raise UserError(
                f"The Torch model '{self.path}' returned no tensors. netdim audits models whose "
                "forward returns a tensor (or a tuple / dict of tensors)."
            )
        for out in outs:
            if out.ndim == 0 or out.shape[0] != self._probe_rows():
                raise UserError(
                    f"The Torch model '{self.path}' returned a tensor of shape "
                    f"{tuple(out.shape)} for {self._probe_rows()} rows; netdim needs outputs "
                    "with the batch axis first. Check the input shape (--input-shape)."
                )
        return outs

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
        outs, hidden = self._run(x, capture)
        return Evaluation(
            outputs=gather([_rows(outs[i], n) for i in self._keep], n),
            hidden={name: _rows(t, n) for name, t in zip(capture, hidden, strict=True)},
        )

    def _check_capture(self, capture: Sequence[str]) -> None:
        known = {layer.name for layer in self.layers()}
        for name in capture:
            if name not in known:
                raise UserError(
                    f"The Torch model '{self.path.name}' has no probe-able layer '{name}'."
                    + suggest(name, known)
                    + f" Run 'netdim layers {self.source}' to list the layer names."
                )
