"""``torch.export`` programs (``.pt2``): layers are graph nodes, named by module path.

The program is read without running code from the file (:mod:`.archive`). Its
ATen graph becomes backend-neutral nodes (:mod:`..graph`), each scoped by the
module in the last entry of its ``nn_module_stack``; the layers are named by
:func:`audit.models.graph.name_layers` (``body.1``, ``encoder.attn/softmax``),
the graph node (``tanh_1``) kept as the detail. Captured nodes are added to the
outputs of a copy of the program's graph module (one copy per distinct set of
captured nodes, cached).
"""

from __future__ import annotations

import operator
import warnings
from pathlib import Path
from typing import Any

import torch
from torch.utils import _pytree as pytree

from ...errors import UserError
from ..base import TensorInfo
from ..graph import Const, Layer, Node, name_layers, op_name
from ..patterns import fuse
from ..tensors import InputShape, input_shapes
from .archive import read_program
from .common import TorchModel, dtype_name, leaves, shape_error

__all__ = ["ExportedModel", "program_nodes"]


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

    def __init__(self, path: Path, *, input_shape: InputShape | None = None, trust: bool = False) -> None:
        data = read_program(path, trust)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                program = torch.export.load(data)
                self.module = program.module()
        except UserError:
            raise
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
                f"program's own input shape {known}. Leave `input_shape` out for this model."
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
            by_name = {node.name: mapping[node] for node in self.module.graph.nodes if node in mapping}
            if _mutates(graph):  # an in-place op later on (ReLU(inplace=True), out += x) would change a capture
                for name in key:
                    with graph.inserting_after(by_name[name]):
                        by_name[name] = graph.call_function(torch.ops.aten.clone.default, (by_name[name],))
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
        return [r for r in result[:k] if isinstance(r, torch.Tensor)], [captured[name] for name in capture]

    def _release(self, keys: tuple[str, ...]) -> None:
        self._modules.pop(tuple(sorted(keys)), None)

    def _candidates(self) -> list[Layer]:
        nodes, returned = program_nodes(self.module.graph, self.module)
        return name_layers(fuse(nodes, returned), returned)


def _mutates(graph: torch.fx.Graph) -> bool:
    """Whether any node of ``graph`` writes into a tensor in place (an ATen op whose schema is mutable)."""
    for node in graph.nodes:
        schema = getattr(node.target, "_schema", None) if node.op == "call_function" else None
        if schema is not None and schema.is_mutable:
            return True
    return False


def _scope(node: torch.fx.Node) -> str:
    """Module path of the last entry of the node's ``nn_module_stack`` (``""`` at the top)."""
    stack = node.meta.get("nn_module_stack") or {}
    if not stack:
        return ""
    path = list(stack.values())[-1][0]
    return path if isinstance(path, str) and not path.startswith("_") else ""


def _op(node: torch.fx.Node) -> str:
    schema = getattr(node.target, "_schema", None)
    return op_name(schema.name if schema is not None else getattr(node.target, "__name__", str(node.target)))


def _arg(value: Any, made: dict[torch.fx.Node, str], scalars: dict[torch.fx.Node, float]) -> str | Const:
    if isinstance(value, torch.fx.Node):
        return made.get(value, Const(scalars.get(value)))
    if isinstance(value, bool):
        return Const(float(value))
    if isinstance(value, int | float):
        return Const(float(value))
    return Const()


def _scalars(graph: torch.fx.Graph, owner: torch.nn.Module | None) -> dict[torch.fx.Node, float]:
    """The values of the one-element constants (``get_attr``) of ``graph``."""
    found: dict[torch.fx.Node, float] = {}
    for node in graph.nodes:
        if node.op != "get_attr" or owner is None:
            continue
        value: Any = owner
        for part in str(node.target).split("."):
            value = getattr(value, part, None)
        if isinstance(value, torch.Tensor) and value.numel() == 1 and not value.is_complex():
            found[node] = float(value.detach().reshape(-1)[0])
    return found


def program_nodes(graph: torch.fx.Graph, owner: torch.nn.Module | None = None) -> tuple[list[Node], set[str]]:
    """The graph of a program's module as backend-neutral nodes, and the names of the returned ones.

    Tensor-producing ``call_function`` nodes computed from the placeholders
    become nodes (an operator returning several tensors is read through its
    ``getitem`` nodes); parameters, constants and shape arithmetic become
    constant arguments (with their value when ``owner``, the graph's module,
    holds a one-element constant).
    """
    made: dict[torch.fx.Node, str] = {}
    scalars = _scalars(graph, owner)
    dynamic = {n for n in graph.nodes if n.op == "placeholder"}
    made.update((n, n.name) for n in dynamic)
    nodes: list[Node] = []
    for node in graph.nodes:
        if node.op != "call_function":
            continue
        inputs = node.all_input_nodes
        if not any(i in dynamic for i in inputs):
            continue
        dynamic.add(node)
        source, index = node, 0
        if node.target is operator.getitem and isinstance(node.args[0], torch.fx.Node):
            source = node.args[0]  # one tensor of an operator that returns several
            index = node.args[1] if isinstance(node.args[1], int) else 0
        value = node.meta.get("val")
        if not isinstance(value, torch.Tensor):
            continue
        made[node] = node.name
        args = tuple(_arg(a, made, scalars) for a in source.args)
        candidate = value.is_floating_point() and value.ndim >= 1
        nodes.append(Node(node.name, _op(source), args, _scope(source), candidate, output=index))
    output = next(n for n in graph.nodes if n.op == "output")
    returned = {n.name for n in pytree.tree_leaves(output.args) if isinstance(n, torch.fx.Node)}
    return nodes, returned
