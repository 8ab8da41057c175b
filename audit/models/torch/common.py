"""The common part of the Torch backends: signature, batching, casting, capture checks.

:class:`TorchModel` probes the model once on a few rows to learn its output
tensors, feeds rows in the model's own precision (in chunks when its batch size
is bounded) and checks the names of captured layers. Subclasses (TorchScript,
``torch.export`` programs, eager modules) only run one batch and list layers.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import torch
from torch.utils import _pytree as pytree

from ...errors import UserError, suggest
from ..base import Evaluation, LayerInfo, TensorInfo, check_rows, index_names, integer_output_error

__all__ = ["ACTIVATION_MODULES", "TorchModel", "float_dtype", "leaves", "shape_error"]

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
    for tensor in tensors:
        if tensor.is_floating_point():
            return tensor.dtype
    return torch.float32


class TorchModel:
    """Common part of the Torch backends: signature, batching, casting, capture checks.

    Subclasses set ``format``, ``source``, ``path``, the input shape and dtype, and
    implement :meth:`_forward` and :meth:`_discover_layers`.

    Attributes
    ----------
    notices : list of str
        Remarks for the user.
    batch_size : int or None
        The fixed batch size of the model, or None when any batch size works.
    """

    format = "torch"

    def __init__(
        self,
        path: Path,
        input_shape: tuple[int, ...],
        dtype: torch.dtype,
        *,
        batch: tuple[int, int | None] = (1, None),
    ) -> None:
        self.path = path
        self.source = str(path)
        self.notices: list[str] = []
        self._dtype = dtype
        # numpy has no bfloat16: such models are fed float32 and cast by torch
        self._np_dtype = (
            None if dtype == torch.bfloat16 else torch.empty((), dtype=dtype).numpy().dtype
        )
        self._min_batch, self._max_batch = batch
        self.batch_size = batch[1] if batch[0] == batch[1] else None
        self._layers: list[LayerInfo] | None = None
        self.input = TensorInfo("x", tuple(input_shape), str(dtype).removeprefix("torch."))
        outs = self._probe_outputs()
        many = len(outs) > 1
        for i, o in enumerate(outs):
            if not (o.dtype.is_floating_point or o.dtype == torch.bool):
                raise UserError(integer_output_error(str(path), f"y{i}" if many else "y", str(o.dtype)))
        self.outputs = [
            TensorInfo(
                f"y{i}" if many else "y", tuple(o.shape[1:]), str(o.dtype).removeprefix("torch.")
            )
            for i, o in enumerate(outs)
        ]

    # subclasses -------------------------------------------------------------------------

    def _forward(
        self, x: torch.Tensor, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        """Run one batch; return output leaves and captured tensors (in ``capture`` order)."""
        raise NotImplementedError

    def _discover_layers(self) -> list[LayerInfo]:
        raise NotImplementedError

    # signature --------------------------------------------------------------------------

    def feature_names(self) -> list[str]:
        return index_names(self.input.name, self.input.shape)

    def output_names(self) -> list[str]:
        names: list[str] = []
        for info in self.outputs:
            names.extend(index_names(info.name, info.shape))
        return names

    def layers(self) -> list[LayerInfo]:
        """Probe-able hidden layers, in execution order."""
        if self._layers is None:
            self._layers = self._discover_layers()
        return list(self._layers)

    # evaluation -------------------------------------------------------------------------

    def _probe_rows(self) -> int:
        rows = max(_PROBE_ROWS, self._min_batch)
        return rows if self._max_batch is None else min(rows, self._max_batch)

    def _tensor(self, x: np.ndarray) -> torch.Tensor:
        n = len(x)
        if self._np_dtype is None:
            t = torch.from_numpy(np.ascontiguousarray(x, dtype=np.float32)).to(self._dtype)
        else:
            t = torch.from_numpy(np.ascontiguousarray(x, dtype=self._np_dtype))
        return t.reshape((n, *self.input.shape))

    def _run(
        self, x: np.ndarray, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        """Run rows ``x`` (n, d), in chunks when the model's batch size is bounded."""
        n = len(x)
        xt = self._tensor(x)
        low, high = self._min_batch, self._max_batch
        try:
            with torch.inference_mode():
                if n >= low and (high is None or n <= high):
                    return self._forward(xt, capture)
                size = high or max(n, low)
                parts = []
                for start in range(0, n, size):
                    chunk = xt[start : start + size]
                    if len(chunk) < low:
                        pad = chunk[-1:].expand(low - len(chunk), *chunk.shape[1:])
                        chunk = torch.cat([chunk, pad])
                    parts.append(self._forward(chunk, capture))
                outs = [torch.cat([p[0][i] for p in parts])[:n] for i in range(len(parts[0][0]))]
                hidden = [torch.cat([p[1][i] for p in parts])[:n] for i in range(len(capture))]
                return outs, hidden
        except UserError:
            raise
        except Exception as exc:
            first = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
            raise UserError(
                f"The Torch model '{self.path}' failed on a batch of {n} rows of shape "
                f"{self.input.shape} ({type(exc).__name__}: {first[:300]}). If the input shape "
                "is wrong, give the shape of one input row, e.g. --input-shape 1,8,8."
            ) from exc

    def _probe_outputs(self) -> list[torch.Tensor]:
        outs, _ = self._run(np.zeros((self._probe_rows(), self.input.units)), ())
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
            Input rows, float64; cast to the model's own precision.
        capture : sequence of str
            Names of hidden layers (from :meth:`layers`) to return as well.

        Returns
        -------
        Evaluation
            Outputs (n, k) and the captured layers (n, units), float64.
        """
        x = check_rows(x, self.input.units)
        n = len(x)
        capture = tuple(dict.fromkeys(capture))
        if capture:
            self._check_capture(capture)
        outs, hidden = self._run(x, capture)
        parts = [_as_rows(o, n) for o in outs]
        outputs = parts[0] if len(parts) == 1 else np.concatenate(parts, axis=1)
        return Evaluation(
            outputs=outputs,
            hidden={name: _as_rows(t, n) for name, t in zip(capture, hidden, strict=True)},
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


def _as_rows(t: torch.Tensor, n: int) -> np.ndarray:
    return t.detach().reshape(n, -1).to(torch.float64).numpy()


def leaves(result: Any) -> list[torch.Tensor]:
    return [leaf for leaf in pytree.tree_leaves(result) if isinstance(leaf, torch.Tensor)]


def shape_error(path: Path, what: str) -> UserError:
    return UserError(
        f"The input shape of the Torch model '{path}' is unknown: {what}. Give the shape of one "
        "input row (without the batch axis), e.g. --input-shape 8 or --input-shape 1,8,8."
    )
