"""Eager ``torch.nn.Module`` models (a state dict rebuilt with its class, or a trusted pickle).

The input tensors are the forward's positional parameters without a default,
in order (a forward taking only ``*args`` counts as one input ``x``); their
shapes come from ``input_shape``, or, for one input, from a first ``Linear``
layer. Layers are submodules, named by qualified name (``net.1``); their outputs
are read with forward hooks registered only while capturing.
"""

from __future__ import annotations

import inspect
from pathlib import Path
from typing import Any

import torch

from ..base import LayerInfo
from ..tensors import InputShape, input_shapes
from .common import ACTIVATION_MODULES, TorchModel, float_dtype, input_tensors, leaves, shape_error

__all__ = ["ModuleModel"]


class ModuleModel(TorchModel):
    """An eager ``torch.nn.Module`` (rebuilt from a state dict, or a trusted pickle).

    Layers are submodules, named by qualified name; their outputs are read
    with forward hooks registered only while capturing.
    """

    def __init__(
        self,
        module: torch.nn.Module,
        path: Path,
        format: str,
        *,
        input_shape: InputShape | None = None,
    ) -> None:
        self.module = module.eval()
        self.format = format
        names = _arguments(module)
        given = input_shapes(input_shape, names, str(path))
        dtype = float_dtype(list(module.parameters()) + list(module.buffers()))
        inputs = input_tensors(path, names, given, dtype, lambda: self._infer_shape(path))
        super().__init__(path, inputs)
        self._submodules = dict(module.named_modules())

    def _infer_shape(self, path: Path) -> tuple[int, ...]:
        for _, sub in self.module.named_modules():
            if next(sub.parameters(recurse=False), None) is None:
                continue
            if isinstance(sub, torch.nn.Linear):
                return (sub.in_features,)
            raise shape_error(path, f"its first layer with weights is a {type(sub).__name__}")
        raise shape_error(path, "it has no layer with weights to read the shape from")

    def _forward(
        self, xs: list[torch.Tensor], capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        if not capture:
            return leaves(self.module(*xs)), []
        store: dict[str, torch.Tensor] = {}
        handles = []
        for name in capture:

            def hook(_mod: Any, _inp: Any, out: Any, name: str = name) -> None:
                # Copy now: a later in-place operation (ReLU(inplace=True)) must not alter it.
                store[name] = out.detach().reshape(out.shape[0], -1).clone()

            handles.append(self._submodules[name].register_forward_hook(hook))
        try:
            outs = leaves(self.module(*xs))
        finally:
            for handle in handles:
                handle.remove()
        return outs, [store[name] for name in capture]

    def _discover_layers(self) -> list[LayerInfo]:
        rows = self._probe_rows()
        seen: dict[str, list[torch.Tensor]] = {}
        order: list[str] = []
        handles = []
        for name, sub in self.module.named_modules():
            if not name:
                continue

            def hook(_mod: Any, _inp: Any, out: Any, name: str = name) -> None:
                if name not in seen:
                    order.append(name)
                seen.setdefault(name, []).append(out)

            handles.append(sub.register_forward_hook(hook))
        try:
            with torch.inference_mode():
                result = leaves(self.module(*self._zeros()))
        finally:
            for handle in handles:
                handle.remove()
        repeated = [name for name in order if len(seen[name]) > 1]
        kept = [
            (name, seen[name][0])
            for name in order
            if len(seen[name]) == 1
            and isinstance(seen[name][0], torch.Tensor)
            and seen[name][0].is_floating_point()
            and seen[name][0].ndim >= 1
            and seen[name][0].shape[0] == rows
        ]
        # A container returns the very tensor of one of its submodules: keep the submodule.
        # Siblings may share a tensor too (an in-place ReLU after a Linear); hooks copy at
        # call time, so each keeps its own values. Of a tensor the model returns, the last
        # module to hand it on is the output itself, not a hidden layer.
        kept = [
            (name, out)
            for name, out in kept
            if not any(o is out and n.startswith(name + ".") for n, o in kept)
        ]
        returned = {id(out) for out in result}
        last = {id(out): name for name, out in kept}
        layers = []
        for name, out in kept:
            if id(out) in returned and last[id(out)] == name:
                continue
            op = type(self._submodules[name]).__name__
            layers.append(LayerInfo(name, op, tuple(out.shape[1:]), op in ACTIVATION_MODULES))
        if repeated:
            self.notices.append(
                "Modules called more than once per forward pass are not offered as layers: "
                + ", ".join(repeated)
                + "."
            )
        return layers


def _arguments(module: torch.nn.Module) -> list[str]:
    """Names of the forward's positional parameters without a default (or ``["x"]``)."""
    try:
        parameters = inspect.signature(module.forward).parameters.values()
    except (TypeError, ValueError):  # no signature to read: one tensor, as most networks take
        return ["x"]
    kinds = (inspect.Parameter.POSITIONAL_ONLY, inspect.Parameter.POSITIONAL_OR_KEYWORD)
    names = [p.name for p in parameters if p.kind in kinds and p.default is inspect.Parameter.empty]
    return names or ["x"]
