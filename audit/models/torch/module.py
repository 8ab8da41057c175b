"""Eager ``torch.nn.Module`` models (a state dict rebuilt with its class, or a trusted pickle).

The input tensors are the forward's positional parameters without a default,
in order (a forward taking only ``*args`` counts as one input ``x``); their
shapes come from ``input_shape``, or, for one input, from a first ``Linear``
layer. Layers are the outputs of submodules, read with forward hooks registered
only while capturing, and named as in the graph formats
(:mod:`audit.models.graph`): by qualified name (``net.1``); a module called
more than once gives ``act``, ``act#2``... in call order, one returning several
tensors ``attn``, ``attn#2``...; a container whose output is its last child's
is left to the child, and a tensor the model returns is no layer.
"""

from __future__ import annotations

import inspect
import re
from pathlib import Path
from typing import Any

import torch

from ..graph import ACTIVATION_OPS, Layer
from ..tensors import InputShape, input_shapes
from .common import TorchModel, float_dtype, input_tensors, leaves, shape_error

__all__ = ["ACTIVATION_MODULES", "ModuleModel", "module_op"]

#: ``torch.nn`` module class names whose output counts as an activation.
ACTIVATION_MODULES = frozenset(
    {
        "ReLU", "ReLU6", "LeakyReLU", "PReLU", "RReLU", "ELU", "SELU", "CELU", "GELU", "SiLU",
        "Mish", "Tanh", "Sigmoid", "Hardtanh", "Hardsigmoid", "Hardswish", "Softplus",
        "Softsign", "Softmax", "LogSoftmax", "LogSigmoid", "Tanhshrink", "Softshrink",
        "Hardshrink", "Threshold", "GLU",
    }
)  # fmt: skip

# Module classes -> the operator name the graph formats give their output.
_MODULE_OPS = {
    "ReLU": "relu", "ReLU6": "hardtanh", "LeakyReLU": "leaky_relu", "PReLU": "prelu", "RReLU": "rrelu",
    "GELU": "gelu", "SiLU": "silu", "Hardtanh": "hardtanh", "Hardsigmoid": "hardsigmoid",
    "Hardswish": "hardswish", "LogSoftmax": "log_softmax", "LogSigmoid": "log_sigmoid",
    "Conv1d": "conv", "Conv2d": "conv", "Conv3d": "conv", "LayerNorm": "layer_norm",
    "BatchNorm1d": "batch_norm", "BatchNorm2d": "batch_norm", "BatchNorm3d": "batch_norm",
    "GroupNorm": "group_norm", "RMSNorm": "rms_norm", "InstanceNorm1d": "instance_norm",
    "InstanceNorm2d": "instance_norm", "MaxPool1d": "max_pool1d", "MaxPool2d": "max_pool2d",
    "MaxPool3d": "max_pool3d", "AvgPool1d": "avg_pool1d", "AvgPool2d": "avg_pool2d",
    "AdaptiveAvgPool1d": "adaptive_avg_pool1d", "AdaptiveAvgPool2d": "adaptive_avg_pool2d",
    "MultiheadAttention": "multihead_attention",
}  # fmt: skip


def module_op(module: torch.nn.Module) -> str:
    """The lower-case operator name of a module's output (``GELU`` -> ``gelu``)."""
    kind = type(module).__name__
    return _MODULE_OPS.get(kind) or re.sub(r"(?<=[a-z0-9])(?=[A-Z])", "_", kind).lower()


class ModuleModel(TorchModel):
    """An eager ``torch.nn.Module`` (rebuilt from a state dict, or a trusted pickle).

    Layers are the outputs of submodules, named by qualified name (``#2`` for
    a second call); they are read with forward hooks registered only while
    capturing.
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
        wanted: dict[str, dict[tuple[int, int], str]] = {}
        for key in capture:
            path, call, leaf = key.rsplit("|", 2)
            wanted.setdefault(path, {})[(int(call), int(leaf))] = key
        store: dict[str, torch.Tensor] = {}
        handles = []
        for path, slots in wanted.items():
            calls = [0]

            def hook(_mod: Any, _inp: Any, out: Any, slots: dict = slots, calls: list = calls) -> None:
                # Copy now: a later in-place operation (ReLU(inplace=True)) must not alter it; with
                # autograd on (gradients of hidden layers) the copy stays in the graph.
                for leaf, tensor in enumerate(leaves(out)):
                    key = slots.get((calls[0], leaf))
                    if key is not None:
                        store[key] = tensor.clone() if torch.is_grad_enabled() else tensor.detach().clone()
                calls[0] += 1

            handles.append(self._submodules[path].register_forward_hook(hook))
        try:
            outs = leaves(self.module(*xs))
        finally:
            for handle in handles:
                handle.remove()
        return outs, [store[key] for key in capture]

    def _candidates(self) -> list[Layer]:
        """Module outputs on one probe batch: ``path|call|leaf`` keys, named by module path."""
        records: list[tuple[str, int, int, torch.Tensor]] = []
        calls: dict[str, int] = {}
        handles = []
        for name, sub in self.module.named_modules():
            if not name:
                continue

            def hook(_mod: Any, _inp: Any, out: Any, name: str = name) -> None:
                call = calls.get(name, 0)
                calls[name] = call + 1
                records.extend((name, call, leaf, t) for leaf, t in enumerate(leaves(out)))

            handles.append(sub.register_forward_hook(hook))
        try:
            result = self._raw(self._probe.large, ())[0]
        finally:
            for handle in handles:
                handle.remove()
        returned = {id(t) for t in result}
        layers: list[Layer] = []
        seen: dict[str, int] = {}
        for i, (name, call, leaf, tensor) in enumerate(records):
            # A container handing on its child's tensor leaves it to the child (which finished first).
            if id(tensor) in returned or not tensor.is_floating_point():
                continue
            if any(t is tensor and n.startswith(name + ".") for n, _, _, t in records[:i]):
                continue
            count = seen.get(name, 0) + 1
            seen[name] = count
            op = module_op(self._submodules[name])
            active = type(self._submodules[name]).__name__ in ACTIVATION_MODULES or op in ACTIVATION_OPS
            unique = name if count == 1 else f"{name}#{count}"
            detail = name + (f" (call {call + 1})" if call else "") + (f" (output {leaf + 1})" if leaf else "")
            layers.append(Layer(unique, f"{name}|{call}|{leaf}", op, active, detail))
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
