"""One layer name across formats: a backend-neutral graph, and the rule that names its tensors.

Every graph backend (ONNX, ``torch.export`` programs, TorchScript) turns its
graph into a list of :class:`Node` in execution order, each with the module
path it came from (its *scope*): ONNX from the node names or scopes
``torch.onnx.export`` writes (``/body/body.1/Tanh``, or the ``name_scopes``
metadata of the newer exporter), ``torch.export`` from ``nn_module_stack``,
TorchScript from each node's module hierarchy. Activations split into several
nodes are fused into one first (:func:`audit.models.patterns.fuse`); then
:func:`name_layers` names the tensors by one rule, the same in every format
(eager modules, read with hooks, follow it for module outputs):

1. A tensor made inside module ``P`` (and not in one of its submodules) that is
   used outside ``P``, or returned, is an *output* of ``P`` and is named ``P``
   (``body.1``, ``encoder.attn``). A container whose output is its last child's
   is not named separately: the tensor belongs to the deepest module.
2. Any other tensor is named ``P/op`` after its scope and its (lower-case)
   operator (``encoder.attn/softmax``), or ``op`` at the top of the model
   (``add``); the second, third... output of an operator with several is
   ``op_1``, ``op_2`` (``rnn/lstm_1``, an LSTM's last hidden state). Pure
   data movement (reshapes, transposes, casts, slices, concatenations,
   dropout at inference) is not offered unless it is a
   module's output: it holds the units of another layer; nor are values made
   without reading any (zeros shaped like the batch).
3. Names that would repeat (a module called twice, two additions in one
   module) get ``#2``, ``#3``... in execution order: ``block.act``,
   ``block.act#2``.
4. A graph that carries no module paths (an ONNX file not exported from Torch)
   keeps its own tensor names.

The format's own tensor name stays with each layer as a detail
(:attr:`audit.models.base.LayerInfo.tensor`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

__all__ = [
    "ACTIVATION_OPS",
    "CONSTANT_OPS",
    "DATA_MOVEMENT_OPS",
    "NORMALISATION_OPS",
    "Const",
    "Layer",
    "Node",
    "name_layers",
    "op_name",
]

#: Operators (lower case, as :func:`op_name` gives them) whose output is an activation.
ACTIVATION_OPS = frozenset(
    {
        "relu", "relu6", "leaky_relu", "prelu", "rrelu", "elu", "selu", "celu", "gelu", "silu",
        "mish", "tanh", "sigmoid", "hardtanh", "hardsigmoid", "hardswish", "softplus", "softsign",
        "softmax", "log_softmax", "log_sigmoid", "tanhshrink", "softshrink", "hardshrink",
        "threshold", "glu", "erf", "normal_cdf", "clip", "swish",
    }
)  # fmt: skip

#: Normalisations: layers, never activations.
NORMALISATION_OPS = frozenset(
    {"layer_norm", "batch_norm", "group_norm", "instance_norm", "rms_norm", "lp_normalization"}
)

#: Operators that only move, copy or retype elements (offered only as a module's output).
DATA_MOVEMENT_OPS = frozenset(
    {
        "reshape", "view", "unsafe_view", "view_as", "reshape_as", "transpose", "t", "permute",
        "squeeze", "unsqueeze", "flatten", "unflatten", "contiguous", "clone", "expand", "expand_as",
        "tile", "repeat", "identity", "dropout", "feature_dropout", "alpha_dropout", "cast", "to",
        "to_copy", "type_as", "detach", "alias", "lift_fresh_copy", "select", "slice", "narrow",
        "split", "split_with_sizes", "chunk", "unbind", "cat", "concat", "stack", "gather",
        "index_select", "pad", "constant_pad_nd", "depth_to_space", "space_to_depth",
    }
)  # fmt: skip

#: Operators that make values without reading any (zeros of the batch's shape, ranges, noise).
CONSTANT_OPS = frozenset(
    {
        "zeros", "ones", "full", "empty", "new_zeros", "new_ones", "new_full", "new_empty",
        "zeros_like", "ones_like", "full_like", "empty_like", "arange", "constantofshape",
        "scalar_tensor", "rand", "randn", "rand_like", "randn_like",
    }
)  # fmt: skip

# Spellings of one operator in ONNX, ATen and TorchScript -> the one name.
_ALIASES = {
    "reducesum": "sum",
    "reducemean": "mean",
    "reducemax": "amax",
    "reducemin": "amin",
    "reduceprod": "prod",
    "leakyrelu": "leaky_relu",
    "logsoftmax": "log_softmax",
    "layernormalization": "layer_norm",
    "native_layer_norm": "layer_norm",
    "batchnormalization": "batch_norm",
    "native_batch_norm": "batch_norm",
    "instancenormalization": "instance_norm",
    "groupnormalization": "group_norm",
    "native_group_norm": "group_norm",
    "rmsnormalization": "rms_norm",
    "lpnormalization": "lp_normalization",
    "thresholdedrelu": "threshold",
    "convolution": "conv",
    "conv1d": "conv",
    "conv2d": "conv",
    "conv3d": "conv",
    "prelu_kernel": "prelu",
    "softmax_backward_data": "softmax",
    "spacetodepth": "space_to_depth",
    "depthtospace": "depth_to_space",
}


def op_name(raw: str) -> str:
    """The lower-case operator name of an ONNX op type, ATen target or TorchScript node kind.

    ``Relu`` -> ``relu``, ``aten::_softmax`` -> ``softmax``, ``LayerNormalization``
    -> ``layer_norm``, ``aten::relu_`` (in place) -> ``relu``.
    """
    name = raw.split("::")[-1].split(".")[0].strip("_").lower()
    return _ALIASES.get(name, name)


@dataclass(frozen=True)
class Const:
    """A constant argument: a scalar ``value``, or ``None`` for a tensor (weights) or other constant."""

    value: float | None = None


@dataclass(frozen=True)
class Node:
    """One tensor-producing node of a graph, in backend-neutral terms.

    Attributes
    ----------
    key : str
        The format's own name of the tensor the node makes.
    op : str
        Lower-case operator name (:func:`op_name`).
    args : tuple of (str or Const)
        Keys of the tensors it reads (graph inputs included) and constants.
    scope : str or None
        Module path it came from; ``""`` for the top of the model, None when
        the graph does not say.
    candidate : bool
        Whether it may be offered as a layer (computed from the inputs, a
        tensor, not returned by the model).
    extra : tuple of str
        Tensors read inside the node's subgraphs (control flow): users only.
    output : int
        Which output of its operator the tensor is (an LSTM's sequence 0, its
        last state 1...); names of outputs after the first say so (``lstm_1``).
    """

    key: str
    op: str
    args: tuple[str | Const, ...] = ()
    scope: str | None = ""
    candidate: bool = True
    extra: tuple[str, ...] = ()
    output: int = 0


@dataclass(frozen=True)
class Layer:
    """A named tensor: what a backend offers as a layer once its rows are found.

    Attributes
    ----------
    name : str
        The common name (rules in the module docstring).
    key : str
        The format's own tensor name.
    op : str
        Lower-case operator name.
    activation : bool
        Captured by default.
    detail : str
        What to show as the format's own name when the key is not meant for
        people (eager modules: ``net.1``, ``act (call 2)``); ``""``: the key.
    """

    name: str
    key: str
    op: str
    activation: bool
    detail: str = ""


def _within(scope: str | None, module: str) -> bool:
    """Whether ``scope`` lies inside module ``module`` (itself or a submodule)."""
    if scope is None:
        return module == ""
    return module == "" or scope == module or scope.startswith(module + ".")


def _outputs(nodes: Sequence[Node], returned: set[str]) -> set[str]:
    """Keys of the tensors that leave the module they were made in."""
    users: dict[str, list[str | None]] = {}
    for node in nodes:
        for arg in (*node.args, *node.extra):
            if isinstance(arg, str):
                users.setdefault(arg, []).append(node.scope)
    leaving = set()
    for node in nodes:
        if not node.scope:
            continue
        if node.key in returned or any(not _within(s, node.scope) for s in users.get(node.key, [])):
            leaving.add(node.key)
    return leaving


def name_layers(nodes: Sequence[Node], returned: set[str]) -> list[Layer]:
    """The layers of a graph, named by the rule of the module docstring, in execution order.

    Parameters
    ----------
    nodes : sequence of Node
        The graph in execution order, activations split into several nodes
        already fused (:func:`audit.models.patterns.fuse`).
    returned : set of str
        Keys of the tensors the model returns (never layers).

    Returns
    -------
    list of Layer
        The candidates, named; a backend still drops those whose rows it
        cannot find (keeping the others' names).
    """
    graph = list(nodes)
    leaving = _outputs(graph, returned)
    scoped = any(node.scope is not None for node in graph)
    base: list[tuple[str, Node]] = []
    for node in graph:
        if not node.candidate or node.key in returned:
            continue
        if node.key in leaving:
            base.append((str(node.scope), node))
        elif node.op in DATA_MOVEMENT_OPS or node.op in CONSTANT_OPS:
            continue
        elif node.scope is None:
            base.append((node.key if not scoped else node.op, node))
        else:
            op = f"{node.op}_{node.output}" if node.output else node.op
            base.append((f"{node.scope}/{op}" if node.scope else op, node))
    seen: dict[str, int] = {}
    layers = []
    for name, node in base:
        count = seen.get(name, 0) + 1
        seen[name] = count
        unique = name if count == 1 else f"{name}#{count}"
        layers.append(Layer(unique, node.key, node.op, node.op in ACTIVATION_OPS))
    return layers
