"""An ONNX graph as backend-neutral nodes (:mod:`.graph`), with the module path of every node.

``torch.onnx.export`` records where each node came from. The TorchScript-based
exporter names nodes after the module call stack, ``/encoder/layers.0/attn/MatMul``,
each part the module's name from its last non-numeric atom (``attn``,
``layers.0``, ``seq.1.0``) and a repeated call of a module marked by a ``_1``,
``_2`` suffix on the last part; :func:`scope_path` rebuilds the full path
(``encoder.layers.0.attn``). The newer exporter stores the path in the node's
``pkg.torch.onnx.name_scopes`` metadata. Nodes of a Torch-made graph without
either are at the top of the model (scope ``""``); a graph with no such names
at all (made by hand or by another converter) has no scopes (``None``), and its
layers keep their tensor names.
"""

from __future__ import annotations

import ast
import re
from collections.abc import Iterable, Sequence

import numpy as np
import onnx
from onnx import numpy_helper

from .graph import Const, Node, op_name
from .onnx_graph import float_types

__all__ = ["graph_nodes", "scope_path"]

# Operators whose outputs are never layers (shape arithmetic, constants).
_SKIP_OPS = frozenset({"Constant", "ConstantOfShape", "Shape", "Size"})
_REPEAT = re.compile(r"(.+)_(\d+)")
_SCOPES_KEY = "pkg.torch.onnx.name_scopes"


def _join(path: str, part: str) -> str:
    """The module path of ``part`` called from the module at ``path``.

    ``part`` is a module name from its last non-numeric atom; a container's child
    (``seq.1.0`` under ``...seq.1``) repeats the atoms of its parent.
    """
    if not path:
        return part
    prev, atoms = path.split("."), part.split(".")
    k = len(atoms) - 1
    if k and prev[-k:] == atoms[:-1]:
        return ".".join([*prev, atoms[-1]])
    return f"{path}.{part}"


def scope_path(
    parts: Sequence[str],
    memo: dict[str, str],
    params: Iterable[str] = (),
    ops: dict[str, list[str]] | None = None,
) -> str:
    """The module path of a node whose name is ``/part/part/.../Op``.

    Parameters
    ----------
    parts : sequence of str
        The name's parts between the slashes, without the operator.
    memo : dict of str to str
        Scope strings (``a/b``) of the nodes before and their paths; updated.
    params : iterable of str
        Initializer names (``block_1.weight``): a last part ``x_1`` that owns
        weights is a module of that name, not a second call of ``x``.
    ops : dict of str to list of str, optional
        Operator types of the nodes of every scope string: a second call of a
        module runs the same operators as the first.

    Returns
    -------
    str
        ``""`` for the top of the model.
    """
    parts = list(parts)
    if not parts:
        return ""
    full = "/".join(parts)
    if full in memo:
        return memo[full]
    path = _build(parts)
    repeat = _REPEAT.fullmatch(parts[-1])
    if repeat:
        base = "/".join([*parts[:-1], repeat.group(1)])
        same = ops is None or ops.get(base) == ops.get(full)
        if base in memo and same and not any(p.startswith(path + ".") for p in params):
            path = memo[base]  # a later call of a module seen before: the exporter's unique suffix
    memo[full] = path
    return path


def _build(parts: Sequence[str]) -> str:
    path = ""
    for part in parts:
        path = _join(path, part)
    return path


def _scopes(graph: onnx.GraphProto, params: set[str]) -> list[str | None] | None:
    """The scope of every node of ``graph``, or None when no node carries one."""
    memo: dict[str, str] = {}
    ops: dict[str, list[str]] = {}
    for node in graph.node:
        if node.name.startswith("/"):
            ops.setdefault("/".join(node.name.split("/")[1:-1]), []).append(node.op_type)
    scopes: list[str | None] = []
    found = False
    for node in graph.node:
        props = {p.key: p.value for p in node.metadata_props}
        if _SCOPES_KEY in props:
            try:
                names = ast.literal_eval(props[_SCOPES_KEY])
                scopes.append(str(names[-2]) if len(names) >= 2 else "")
                found = True
                continue
            except (ValueError, SyntaxError, TypeError, IndexError):
                pass
        if node.name.startswith("/"):
            found = True
            scopes.append(scope_path(node.name.split("/")[1:-1], memo, params, ops))
        else:
            scopes.append(None)
    if not found:
        return None
    return [s if s is not None else "" for s in scopes]


def _scalar(tensor: onnx.TensorProto) -> float | None:
    """The value of a one-element numeric tensor (not stored externally), else None."""
    if tensor.data_location == onnx.TensorProto.EXTERNAL or int(np.prod(tensor.dims)) != 1:
        return None
    try:
        value = numpy_helper.to_array(tensor)
    except Exception:  # an element type numpy cannot hold
        return None
    return float(value.reshape(-1)[0]) if value.dtype.kind in "fiub" else None


def _subgraph_inputs(node: onnx.NodeProto) -> list[str]:
    """Tensors of the outer graph that the node's subgraphs (If, Loop, Scan) read."""
    names: list[str] = []
    for attribute in node.attribute:
        graphs = ([attribute.g] if attribute.HasField("g") else []) + list(attribute.graphs)
        for sub in graphs:
            made = {o for n in sub.node for o in n.output} | {i.name for i in sub.input}
            made |= {t.name for t in sub.initializer}
            for inner in sub.node:
                names.extend(i for i in inner.input if i and i not in made)
                names.extend(i for i in _subgraph_inputs(inner) if i not in made)
    return names


def graph_nodes(
    proto: onnx.ModelProto, inputs: Sequence[str], value_info: dict[str, onnx.ValueInfoProto]
) -> tuple[list[Node], set[str]]:
    """The nodes of the model's main graph and the names of its outputs.

    Parameters
    ----------
    proto : onnx.ModelProto
    inputs : sequence of str
        Names of the input tensors rows are fed to.
    value_info : dict of str to ValueInfoProto
        What shape inference knows of the hidden tensors (element types).

    Returns
    -------
    nodes : list of Node
        One per output of every node computed from the inputs, in graph order;
        ``candidate`` is False for shape arithmetic and known non-float tensors.
    returned : set of str
    """
    graph = proto.graph
    params = {t.name for t in graph.initializer}
    constants: dict[str, float | None] = {t.name: _scalar(t) for t in graph.initializer}
    scopes = _scopes(graph, params) or [None] * len(graph.node)
    dynamic = set(inputs)
    returned = {o.name for o in graph.output}
    nodes: list[Node] = []
    for node, scope in zip(graph.node, scopes, strict=True):
        extra = _subgraph_inputs(node)
        if not any(name in dynamic for name in (*node.input, *extra)):
            value = None
            if node.op_type == "Constant" and node.attribute and node.attribute[0].HasField("t"):
                value = _scalar(node.attribute[0].t)
            constants.update((o, value) for o in node.output if o)
            continue
        dynamic.update(o for o in node.output if o)
        args = tuple(a if a in dynamic else Const(constants.get(a)) for a in node.input if a)
        op = op_name(node.op_type)
        if op == "gather" and args and isinstance(args[0], Const):
            op = "embedding"  # a lookup in a weight table, not a move of computed values
        for index, output in enumerate(node.output):
            if not output:
                continue
            info = value_info.get(output)
            elem = info.type.tensor_type.elem_type if info is not None and info.type.HasField("tensor_type") else 0
            candidate = node.op_type not in _SKIP_OPS and (not elem or elem in float_types())
            candidate = candidate and output not in returned
            nodes.append(Node(output, op, args, scope, candidate, tuple(extra), index))
    return nodes, returned
