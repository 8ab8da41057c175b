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
from ..base import LayerInfo
from .common import TorchModel, leaves, shape_error

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


def _finite(value: Any) -> int | None:
    """An integer range bound, or None when it is unbounded (sympy infinity)."""
    try:
        out = int(value)
    except (TypeError, ValueError, AttributeError, OverflowError):
        return None
    return out if out < 2**62 else None


class ExportedModel(TorchModel):
    """A ``torch.export`` program (``.pt2``). Layers are graph nodes (``relu``, ``linear_1``).

    The program records its example input, which gives the input shape. When
    the program was exported with a fixed batch size, rows are fed in chunks
    of that size.
    """

    format = "torch-export"

    def __init__(self, path: Path, *, input_shape: tuple[int, ...] | None = None) -> None:
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
        if len(placeholders) != 1:
            raise UserError(
                f"The torch.export program '{path}' takes {len(placeholders)} inputs; netdim "
                "supports programs with exactly one floating-point input tensor."
            )
        example = placeholders[0].meta.get("val")
        if not isinstance(example, torch.Tensor) or not example.is_floating_point():
            raise UserError(
                f"The input of the torch.export program '{path}' is "
                f"{getattr(example, 'dtype', type(example).__name__)}; netdim supports one "
                "floating-point tensor input."
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
        if input_shape is not None and known is not None and tuple(input_shape) != known:
            raise UserError(
                f"The input shape {tuple(input_shape)} given for '{path}' does not match the "
                f"program's own input shape {known}. Leave --input-shape out for this model."
            )
        shape = known or input_shape
        if shape is None:
            raise shape_error(path, "the program's input has symbolic non-batch dimensions")
        super().__init__(path, tuple(shape), example.dtype, batch=limits)
        if limits[0] == limits[1] == 1:
            self.notices.append(
                f"The program '{path.name}' was exported with a batch size of 1, so netdim "
                "evaluates it one row at a time, which is slow. Export it with a dynamic batch "
                "dimension (torch.export.Dim)."
            )

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
        self, x: torch.Tensor, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        if not capture:
            return leaves(self.module(x)), []
        key = tuple(sorted(capture))
        result = self._graph_module(capture)(x)
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
        _, values = self._run(np.zeros((rows, self.input.units)), names)
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
