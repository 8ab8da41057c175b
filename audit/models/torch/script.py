"""TorchScript archives: layers by graph surgery.

TorchScript modules have no forward hooks, so the forward graph is inlined
(every node keeps the module it came from) and, for each submodule, the one
tensor leaving it is added to the graph's outputs; layers are named by the
submodule's qualified name (``net.1``), as for eager modules.
"""

from __future__ import annotations

import contextlib
import json
import re
import warnings
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import torch

from ...errors import UserError
from ..base import LayerInfo
from ..tensors import InputShape, input_shapes
from .common import ACTIVATION_MODULES, TorchModel, float_dtype, input_tensors, leaves, shape_error

__all__ = ["SHAPE_FILE", "ScriptModel"]

#: Extra file of a TorchScript archive where netdim (and the model zoo) record the input shape:
#: ``{"input_shape": [1, 8, 8]}``, or one per forward argument ``{"input_shape": {"a": [3], ...}}``;
#: save it with ``torch.jit.save(m, path, _extra_files={...})``.
SHAPE_FILE = "netdim.json"


def _recorded_shapes(text: str | bytes, names: Sequence[str], path: Path) -> dict[str, tuple[int, ...]]:
    """Input shapes recorded in the archive's :data:`SHAPE_FILE`; {} when absent or unreadable."""
    if not text:
        return {}
    try:
        shape = json.loads(text).get("input_shape")
        return input_shapes(shape, names, str(path)) if shape else {}
    except (ValueError, AttributeError, UserError):
        return {}


_SCOPE = re.compile(r"([^.()]+)\(([^()]*)\)")


def _module_path(node: torch._C.Node) -> tuple[tuple[str, str], ...]:
    """((instance, type), ...) of the submodule call that produced ``node``."""
    return tuple(
        (inst, kind)
        for inst, kind in _SCOPE.findall(node.getModuleHierarchy())
        if inst not in ("UNKNOWN_INSTANCE", "SELF")  # a function, or a method of the same module
    )


def _top_node(node: torch._C.Node, block: torch._C.Block) -> torch._C.Node | None:
    """The node of ``block`` that contains ``node`` (itself, or a control-flow node)."""
    while node.owningBlock() != block:
        owner = node.owningBlock().owningNode()
        if owner is None:
            return None
        node = owner
    return node


class ScriptModel(TorchModel):
    """A TorchScript archive. Layers are submodules, named by qualified name.

    TorchScript modules have no forward hooks, so the forward graph is
    inlined (every node keeps the module it came from) and, for each
    submodule, the one tensor leaving it is added to the graph's outputs.
    """

    format = "torchscript"

    def __init__(self, path: Path, *, input_shape: InputShape | None = None) -> None:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                extra = {SHAPE_FILE: ""}
                self.module = torch.jit.load(str(path), map_location="cpu", _extra_files=extra).eval()
        except Exception as exc:
            raise UserError(
                f"The TorchScript archive '{path}' could not be loaded ({type(exc).__name__}: "
                f"{str(exc).strip().splitlines()[0][:200] if str(exc).strip() else ''}). It is "
                "damaged or was saved by an incompatible torch version: save it again."
            ) from exc
        self._functions: dict[tuple[str, ...], Any] = {}
        names = self._arguments(path)
        given = input_shapes(input_shape, names, str(path)) or _recorded_shapes(extra[SHAPE_FILE], names, path)
        dtype = float_dtype(list(self.module.parameters()) + list(self.module.buffers()))
        super().__init__(path, input_tensors(path, names, given, dtype, lambda: self._infer_shape(path)))

    def _arguments(self, path: Path) -> list[str]:
        """Names of the forward's tensor arguments; a UserError for any other argument."""
        values = list(self.module.graph.inputs())[1:]
        try:
            names = [argument.name for argument in self.module.forward.schema.arguments[1:]]
        except (AttributeError, RuntimeError):
            names = []
        if len(names) != len(values):
            names = [re.sub(r"\.\d+$", "", value.debugName()) for value in values]
        if not values:
            raise UserError(
                f"The TorchScript model '{path}' takes no input; netdim audits models whose forward "
                "takes one or more tensors."
            )
        for name, value in zip(names, values, strict=True):
            if not isinstance(value.type(), torch._C.TensorType):
                raise UserError(
                    f"The argument '{name}' of the TorchScript model '{path}' has type {value.type()}; "
                    "netdim feeds tensors only. Wrap the model so that its forward takes tensors "
                    "(fix other arguments inside the wrapper)."
                )
        return names

    def _inlined(self) -> tuple[torch._C.Graph, dict[str, tuple[torch._C.Value, str]]]:
        """A fresh inlined copy of the forward graph and, per submodule, its output value."""
        graph = self.module.graph.copy()
        torch._C._jit_pass_inline(graph)
        with contextlib.suppress(Exception):  # in-place ops would alter captured values
            torch._C._jit_pass_remove_mutation(graph)
        block = graph.block()
        nodes = list(block.nodes())
        paths = {node: _module_path(node) for node in nodes}
        leaving: dict[tuple[str, ...], list[torch._C.Value]] = {}
        kinds: dict[tuple[str, ...], str] = {}
        returned = {v.unique() for v in graph.outputs()}
        for node in nodes:
            path = paths[node]
            for depth in range(1, len(path) + 1):
                prefix = tuple(inst for inst, _ in path[:depth])
                kinds[prefix] = path[depth - 1][1]
                for value in node.outputs():
                    if not isinstance(value.type(), torch._C.TensorType):
                        continue
                    outside = value.unique() in returned or any(
                        (top := _top_node(use.user, block)) is None
                        or tuple(i for i, _ in paths.get(top, ()))[:depth] != prefix
                        for use in value.uses()
                    )
                    if outside:
                        leaving.setdefault(prefix, []).append(value)
        found: dict[str, tuple[torch._C.Value, str]] = {}
        owner: dict[int, str] = {}
        # deepest module first, so a container never takes the name of its last child's output
        for prefix in sorted(leaving, key=len, reverse=True):
            values = {v.unique(): v for v in leaving[prefix]}
            if len(values) != 1:
                continue
            ((uid, value),) = values.items()
            if uid in owner or uid in returned:
                continue
            owner[uid] = ".".join(prefix)
            found[".".join(prefix)] = (value, kinds[prefix])
        order = {v.unique(): i for i, node in enumerate(nodes) for v in node.outputs()}
        found = dict(sorted(found.items(), key=lambda item: order[item[1][0].unique()]))
        return graph, found

    def _function(self, names: tuple[str, ...]) -> Any:
        key = tuple(sorted(names))
        if key not in self._functions:
            graph, found = self._inlined()
            for name in key:
                graph.registerOutput(found[name][0])
            graph.makeMultiOutputIntoTuple()
            fname = f"netdim_capture_{len(self._functions)}"
            self._functions[key] = (torch._C._create_function_from_graph(fname, graph), key)
        return self._functions[key]

    def _forward(
        self, xs: list[torch.Tensor], capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        if not capture:
            return leaves(self.module(*xs)), []
        function, key = self._function(capture)
        result = function(self.module._c, *xs)
        captured = dict(zip(key, result[1:], strict=True))
        return leaves(result[0]), [captured[name] for name in capture]

    def _discover_layers(self) -> list[LayerInfo]:
        _, found = self._inlined()
        names = tuple(found)
        if not names:
            return []
        rows = self._probe_rows()
        function, key = self._function(names)
        with torch.inference_mode():
            result = function(self.module._c, *self._zeros())
        values = dict(zip(key, result[1:], strict=True))
        layers = []
        for name in names:
            value = values[name]
            if value.is_floating_point() and value.ndim >= 1 and value.shape[0] == rows:
                op = found[name][1]
                layers.append(LayerInfo(name, op, tuple(value.shape[1:]), op in ACTIVATION_MODULES))
        self._functions.pop(tuple(sorted(names)), None)
        return layers

    def _infer_shape(self, path: Path) -> tuple[int, ...]:
        graph = self.module.graph.copy()
        torch._C._jit_pass_inline(graph)
        x = list(graph.inputs())[1]
        for node in graph.nodes():
            if node.kind() in ("aten::linear", "aten::conv1d", "aten::conv2d", "aten::conv3d",
                               "aten::_convolution"):  # fmt: skip
                path_names = [inst for inst, _ in _module_path(node)]
                if node.kind() != "aten::linear" or node.inputsAt(0).unique() != x.unique():
                    break
                sub = self.module
                try:
                    for part in path_names:
                        sub = getattr(sub, part)
                    return (int(sub.weight.shape[1]),)
                except (AttributeError, IndexError):
                    break
        raise shape_error(path, "TorchScript does not record it and the model does not start "
                           "with a Linear layer")  # fmt: skip
