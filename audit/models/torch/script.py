"""TorchScript archives: layers by graph surgery, named by module path.

TorchScript modules have no forward hooks, so the forward graph is inlined
(every node keeps the module it came from) and read as backend-neutral nodes
(:func:`script_nodes`); the layers are named by
:func:`audit.models.graph.name_layers` (``net.1``, ``block/gelu``), the value's
debug name kept as the detail. Tuples and lists that carry tensors across
module boundaries are seen through, so a module returning ``(out, weights)``
still has ``out`` as its output. Captured values are added to the outputs of a
fresh inlined copy of the graph (one function per distinct set, cached).
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
from ..graph import Const, Layer, Node, name_layers, op_name
from ..patterns import fuse
from ..tensors import InputShape, input_shapes
from .common import TorchModel, float_dtype, input_tensors, leaves, shape_error

__all__ = ["SHAPE_FILE", "ModulePaths", "ScriptModel", "script_nodes"]

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


class ModulePaths:
    """Full module paths of TorchScript call stacks.

    A call through a ``ModuleList`` or ``ModuleDict`` (``self.fc[0](h)``) records only the
    called module's own name (``0``): the container is never called. The missing steps
    are found in the module tree, where exactly one uncalled container holds the name.
    """

    def __init__(self, module: Any) -> None:
        self.children: dict[str, dict[str, Any]] = {}
        self._walk(module, "")

    def _walk(self, module: Any, path: str) -> None:
        kids = dict(module.named_children())
        self.children[path] = kids
        for name, child in kids.items():
            self._walk(child, f"{path}.{name}" if path else name)

    def __call__(self, stack: Sequence[tuple[str, str]]) -> str:
        path = ""
        for inst, _ in stack:
            kids = self.children.get(path, {})
            if inst not in kids:
                holders = [c for c in kids if inst in self.children.get(f"{path}.{c}" if path else c, {})]
                if len(holders) == 1:
                    path = f"{path}.{holders[0]}" if path else holders[0]
            path = f"{path}.{inst}" if path else inst
        return path


_CARRIERS = frozenset({"prim::TupleConstruct", "prim::ListConstruct"})
_OPENERS = frozenset({"prim::TupleUnpack", "prim::ListUnpack"})
_PICKERS = frozenset({"prim::TupleIndex", "aten::__getitem__"})


def _constant(value: torch._C.Value) -> Const:
    node = value.node()
    if node.kind() == "prim::Constant":
        try:
            ivalue = value.toIValue()
        except Exception:  # a constant of a type Python cannot hold
            return Const()
        if isinstance(ivalue, bool | int | float):
            return Const(float(ivalue))
        if isinstance(ivalue, torch.Tensor) and ivalue.numel() == 1 and not ivalue.is_complex():
            return Const(float(ivalue.item()))  # a traced scalar constant
    return Const()


def _flat(item: Any) -> list[str]:
    if isinstance(item, str):
        return [item]
    if isinstance(item, list):
        return [k for sub in item for k in _flat(sub)]
    return []


def script_nodes(
    graph: torch._C.Graph, paths: ModulePaths | None = None
) -> tuple[list[Node], set[str], dict[str, torch._C.Value]]:
    """An inlined forward graph as backend-neutral nodes.

    Parameters
    ----------
    graph : torch._C.Graph
    paths : ModulePaths, optional
        Completes module paths through uncalled containers.

    Returns
    -------
    nodes : list of Node
        One per tensor made by a top-level node computed from the inputs.
    returned : set of str
        Keys of the tensors the forward returns (through tuples too).
    values : dict of str to Value
        The graph value of every key.
    """
    block = graph.block()
    inputs = list(graph.inputs())[1:]
    key: dict[int, Any] = {v.unique(): v.debugName() for v in inputs}  # tensor key, or carried keys
    values = {v.debugName(): v for v in inputs}
    dynamic = {v.unique() for v in inputs}
    nodes: list[Node] = []
    scope_of: dict[int, str] = {}
    for node in block.nodes():
        inner = [v for b in node.blocks() for n in _walk(b) for v in n.inputs()]
        reads = [*node.inputs(), *inner]
        if not any(v.unique() in dynamic for v in reads):
            continue
        dynamic.update(v.unique() for v in node.outputs())
        kind = node.kind()
        if kind in _CARRIERS:
            key[node.output().unique()] = [key.get(v.unique()) for v in node.inputs()]
            continue
        stack = _module_path(node)
        scope = paths(stack) if paths is not None else ".".join(inst for inst, _ in stack)
        op = op_name(kind)
        if kind in _OPENERS or kind in _PICKERS:
            carried = key.get(node.inputsAt(0).unique())
            producer = node.inputsAt(0).node()
            if not isinstance(carried, list) and producer.outputsSize() == 1:
                # a tuple made where this graph cannot see (a call's return inside control flow):
                # its tensors are the producer's, made in its scope
                scope, op = scope_of.get(producer.output().unique(), scope), op_name(producer.kind())
            if isinstance(carried, list):
                if kind in _OPENERS:
                    for i, out in enumerate(node.outputs()):
                        key[out.unique()] = carried[i] if i < len(carried) else None
                    continue
                index = _constant(node.inputsAt(1)).value
                if index is not None and int(index) < len(carried):
                    key[node.output().unique()] = carried[int(index)]
                    continue
        args = tuple(key[v.unique()] if isinstance(key.get(v.unique()), str) else _constant(v) for v in node.inputs())
        extra = tuple(k for v in reads if isinstance(key.get(v.unique()), list) for k in _flat(key[v.unique()]))
        extra += tuple(key[v.unique()] for v in inner if isinstance(key.get(v.unique()), str))
        for index, out in enumerate(node.outputs()):
            scope_of[out.unique()] = scope
            if not isinstance(out.type(), torch._C.TensorType):
                continue
            name = out.debugName()
            key[out.unique()] = name
            values[name] = out
            nodes.append(Node(name, op, args, scope, True, extra, index if node.outputsSize() > 1 else 0))
    returned = {k for v in graph.outputs() for k in _flat(key.get(v.unique()))}
    return nodes, returned, values


def _walk(block: torch._C.Block) -> list[torch._C.Node]:
    """Every node of a block, its sub-blocks' nodes included."""
    found = []
    for node in block.nodes():
        found.append(node)
        for sub in node.blocks():
            found.extend(_walk(sub))
    return found


def _in_branches(graph: torch._C.Graph, paths: ModulePaths) -> set[str]:
    """Module paths of the tensor ops inside the sub-blocks (``if`` branches, loops) of a graph's nodes."""
    found = set()
    for node in graph.block().nodes():
        for sub in node.blocks():
            for inner in _walk(sub):
                stack = _module_path(inner)
                if stack and inner.kind().startswith("aten::"):
                    found.add(paths(stack))
    return found


class ScriptModel(TorchModel):
    """A TorchScript archive. Layers are tensors of the inlined graph, named by module path.

    TorchScript modules have no forward hooks, so the forward graph is
    inlined (every node keeps the module it came from) and the captured
    values are added to the graph's outputs.
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
        self._paths = ModulePaths(self.module)
        names = self._arguments(path)
        given = input_shapes(input_shape, names, str(path)) or _recorded_shapes(extra[SHAPE_FILE], names, path)
        dtype = float_dtype(list(self.module.parameters()) + list(self.module.buffers()))
        super().__init__(path, input_tensors(path, names, given, dtype, lambda: self._infer_shape(path)))
        if self._default_notice:
            self.notices.append(self._default_notice)

    def _arguments(self, path: Path) -> list[str]:
        """Names of the forward's tensor arguments; trailing arguments with defaults keep them
        (:attr:`_defaults`, with a notice); a UserError for any other argument."""
        values = list(self.module.graph.inputs())[1:]
        try:
            arguments = list(self.module.forward.schema.arguments[1:])
        except (AttributeError, RuntimeError):
            arguments = []
        names = [argument.name for argument in arguments]
        if len(names) != len(values):
            names, arguments = [re.sub(r"\.\d+$", "", value.debugName()) for value in values], []
        kept = len(names)
        while kept > 1 and arguments and arguments[kept - 1].has_default_value():
            kept -= 1  # a defaulted argument after the first: fed its default
        self._defaults = [argument.default_value for argument in arguments[kept:]]
        shown = ", ".join(f"'{a.name}' = {a.default_value!r}" for a in arguments[kept:])
        self._default_notice = f"The forward's arguments with defaults keep them: {shown}." if shown else ""
        names, values = names[:kept], values[:kept]
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

    def _inlined(self) -> torch._C.Graph:
        """A fresh inlined copy of the forward graph."""
        graph = self.module.graph.copy()
        torch._C._jit_pass_inline(graph)
        with contextlib.suppress(Exception):  # in-place ops would alter captured values
            torch._C._jit_pass_remove_mutation(graph)
        with contextlib.suppress(Exception):  # scalar arithmetic (1 / math.sqrt(2)) into constants
            torch._C._jit_pass_constant_propagation(graph)
        return graph

    def _function(self, keys: tuple[str, ...]) -> Any:
        key = tuple(sorted(keys))
        if key not in self._functions:
            graph = self._inlined()
            _, _, values = script_nodes(graph, self._paths)
            for name in key:
                graph.registerOutput(values[name])
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
        result = function(self.module._c, *xs, *self._defaults)
        captured = dict(zip(key, result[1:], strict=True))
        return leaves(result[0]), [captured[name] for name in capture]

    def _release(self, keys: tuple[str, ...]) -> None:
        self._functions.pop(tuple(sorted(keys)), None)

    def _candidates(self) -> list[Layer]:
        graph = self._inlined()
        nodes, returned, _ = script_nodes(graph, self._paths)
        layers = name_layers(fuse(nodes, returned), returned)
        inside = _in_branches(graph, self._paths) - {layer.name for layer in layers}
        if inside:
            self.notices.append(
                "Modules called inside an `if` or a loop of the scripted forward are not offered as layers: "
                + ", ".join(f"'{name}'" for name in sorted(inside)) + ". The branch's result is offered as one "
                "layer (named after its `if`); trace the model, or export it to ONNX or .pt2, to see them."
            )
        return layers

    def _infer_shape(self, path: Path) -> tuple[int, ...]:
        graph = self.module.graph.copy()
        torch._C._jit_pass_inline(graph)
        x = list(graph.inputs())[1]
        for node in graph.nodes():
            if node.kind() in ("aten::linear", "aten::conv1d", "aten::conv2d", "aten::conv3d",
                               "aten::_convolution"):  # fmt: skip
                path_names = self._paths(_module_path(node)).split(".")
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
