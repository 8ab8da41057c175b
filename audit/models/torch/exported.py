"""``torch.export`` programs (``.pt2``): layers are graph nodes (``relu``, ``linear_1``).

Captured nodes are added to the outputs of a copy of the program's graph module
(one copy per distinct set of captured names, cached).
"""

from __future__ import annotations

import warnings
from pathlib import Path
from typing import Any

import numpy as np
import torch
from torch.utils import _pytree as pytree

from ...errors import UserError
from ..base import LayerInfo, TensorInfo, feature_count
from ..tensors import InputShape, input_shapes
from .common import TorchModel, dtype_name, leaves, shape_error

__all__ = ["ACTIVATION_TARGETS", "ExportedModel"]

#: ATen operator names (in ``torch.export`` graphs) whose output counts as an activation.
ACTIVATION_TARGETS = frozenset(
    {
        "relu", "relu6", "leaky_relu", "prelu", "_prelu_kernel", "rrelu", "elu", "selu",
        "celu", "gelu", "silu", "mish", "tanh", "sigmoid", "hardtanh", "hardsigmoid",
        "hardswish", "softplus", "softshrink", "hardshrink", "log_sigmoid", "softmax",
        "_softmax", "log_softmax", "_log_softmax", "erf", "glu", "threshold",
    }
)  # fmt: skip


def _narrow(a: tuple[int, int | None], b: tuple[int, int | None]) -> tuple[int, int | None]:
    """Batch sizes both ranges allow."""
    high = b[1] if a[1] is None else a[1] if b[1] is None else min(a[1], b[1])
    return max(a[0], b[0]), high


def _finite(value: Any) -> int | None:
    """An integer range bound, or None when it is unbounded (sympy infinity)."""
    try:
        out = int(value)
    except (TypeError, ValueError, AttributeError, OverflowError):
        return None
    return out if out < 2**62 else None


class ExportedModel(TorchModel):
    """A ``torch.export`` program (``.pt2``). Layers are graph nodes (``relu``, ``linear_1``).

    The program records its example inputs, which give the input tensors (one
    per placeholder, in order), their shapes and element types. When the
    program was exported with a fixed batch size, rows are fed in chunks of
    that size.
    """

    format = "torch-export"

    def __init__(self, path: Path, *, input_shape: InputShape | None = None) -> None:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                program = torch.export.load(str(path))
                self.module = program.module()
        except Exception as exc:
            raise UserError(
                f"The torch.export program '{path}' could not be loaded ({type(exc).__name__}: "
                f"{str(exc).strip().splitlines()[0][:200] if str(exc).strip() else ''}). It is "
                "damaged, not a torch.export program, or was saved by an incompatible torch "
                "version: export it again."
            ) from exc
        self._modules: dict[tuple[str, ...], torch.fx.GraphModule] = {}
        placeholders = [n for n in self.module.graph.nodes if n.op == "placeholder"]
        if not placeholders:
            raise UserError(
                f"The torch.export program '{path}' takes no input; netdim audits programs whose "
                "forward takes one or more tensors."
            )
        names = [node.name for node in placeholders]
        given = input_shapes(input_shape, names, str(path))
        inputs, limits = [], (1, None)
        for node in placeholders:
            info, bounds = self._input(node, path, program, given, names)
            inputs.append(info)
            limits = _narrow(limits, bounds)
        super().__init__(path, inputs, batch=limits)
        if limits[0] == limits[1] == 1:
            self.notices.append(
                f"The program '{path.name}' was exported with a batch size of 1, so netdim "
                "evaluates it one row at a time, which is slow. Export it with a dynamic batch "
                "dimension (torch.export.Dim)."
            )

    @staticmethod
    def _input(
        node: torch.fx.Node, path: Path, program: Any, given: dict[str, tuple[int, ...]], names: list[str]
    ) -> tuple[TensorInfo, tuple[int, int | None]]:
        """The input tensor of placeholder ``node`` and the batch sizes it allows."""
        example = node.meta.get("val")
        if not isinstance(example, torch.Tensor) or example.ndim == 0:
            what = f"a scalar {example.dtype}" if isinstance(example, torch.Tensor) else type(example).__name__
            raise UserError(
                f"The input '{node.name}' of the torch.export program '{path}' is {what}; netdim "
                "feeds tensors with a batch axis first. Export the program with example tensors of "
                "shape (batch, ...)."
            )
        if example.is_complex():
            raise UserError(
                f"The input '{node.name}' of the torch.export program '{path}' is {example.dtype}; "
                "netdim feeds real numbers. Export the program with a real-valued input."
            )
        batch, *rest = example.shape
        if isinstance(batch, int):
            limits: tuple[int, int | None] = (batch, batch)
        else:
            bounds = program.range_constraints.get(batch.node.expr)
            low = int(bounds.lower) if bounds is not None else 1
            high = _finite(bounds.upper) if bounds is not None else None
            limits = (max(low, 1), high)
        known = tuple(int(s) for s in rest) if all(isinstance(s, int) for s in rest) else None
        wanted = given.get(node.name)
        if wanted is not None and known is not None and wanted != known:
            raise UserError(
                f"The input shape {wanted} given for '{node.name}' of '{path}' does not match the "
                f"program's own input shape {known}. Leave --input-shape out for this model."
            )
        shape = known if known is not None else wanted
        if shape is None:
            raise shape_error(path, f"the program's input '{node.name}' has symbolic non-batch dimensions", names)
        return TensorInfo(node.name, tuple(shape), dtype_name(example.dtype)), limits

    def _graph_module(self, names: tuple[str, ...]) -> torch.fx.GraphModule:
        key = tuple(sorted(names))
        if key not in self._modules:
            graph = torch.fx.Graph()
            mapping: dict[torch.fx.Node, torch.fx.Node] = {}
            result = graph.graph_copy(self.module.graph, mapping)
            leaves = list(result) if isinstance(result, (tuple, list)) else [result]
            by_name = {
                node.name: mapping[node] for node in self.module.graph.nodes if node in mapping
            }
            graph.output((*leaves, *(by_name[name] for name in key)))
            self._modules[key] = torch.fx.GraphModule(self.module, graph)
        return self._modules[key]

    def _forward(
        self, xs: list[torch.Tensor], capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        if not capture:
            return leaves(self.module(*xs)), []
        key = tuple(sorted(capture))
        result = self._graph_module(capture)(*xs)
        k = len(result) - len(key)
        captured = dict(zip(key, result[k:], strict=True))
        return [r for r in result[:k] if isinstance(r, torch.Tensor)], [
            captured[name] for name in capture
        ]

    def _discover_layers(self) -> list[LayerInfo]:
        output = next(n for n in self.module.graph.nodes if n.op == "output")
        returned = {n.name for n in pytree.tree_leaves(output.args) if isinstance(n, torch.fx.Node)}
        candidates = []
        for node in self.module.graph.nodes:
            value = node.meta.get("val")
            if (
                node.op == "call_function"
                and node.name not in returned
                and isinstance(value, torch.Tensor)
                and value.is_floating_point()
                and value.ndim >= 1
            ):
                candidates.append(node)
        if not candidates:
            return []
        names = tuple(node.name for node in candidates)
        rows = self._probe_rows()
        _, values = self._run(np.zeros((rows, feature_count(self))), names)
        self._modules.pop(tuple(sorted(names)), None)
        layers = []
        for node, value in zip(candidates, values, strict=True):
            if value.shape[0] != rows:
                continue
            target = node.target
            schema = getattr(target, "_schema", None)
            op = (
                schema.name.split("::")[-1]
                if schema is not None
                else getattr(target, "__name__", str(target))
            )
            layers.append(
                LayerInfo(node.name, op, tuple(value.shape[1:]), op in ACTIVATION_TARGETS)
            )
        return layers
