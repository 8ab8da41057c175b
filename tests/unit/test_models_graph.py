"""One layer name across formats: the naming rule, the activation patterns, ONNX scope paths.

References: the graphs are written here node by node, in the shapes torch.onnx.export
and torch.export produce (read off exported files; common practice, no source), so the
expected names follow from the rule in audit/models/graph.py by hand.
"""

from __future__ import annotations

import math

from audit.models.graph import Const, Node, name_layers, op_name
from audit.models.onnx_layers import scope_path
from audit.models.patterns import fuse

R2 = math.sqrt(2.0)


def _names(nodes: list[Node], returned: set[str]) -> list[tuple[str, str, str]]:
    return [(la.name, la.key, la.op) for la in name_layers(fuse(nodes, returned), returned)]


def test_op_names() -> None:
    assert op_name("Relu") == "relu"
    assert op_name("aten::_softmax") == "softmax"
    assert op_name("LayerNormalization") == "layer_norm"
    assert op_name("aten::relu_") == "relu"
    assert op_name("aten::convolution") == "conv"


def test_gelu_as_the_onnx_exporter_writes_it_is_one_layer() -> None:
    # /ff/ff.1/Div, Erf, Add, Mul, Mul_1 (torch.onnx.export, opset < 20)
    nodes = [
        Node("h", "gemm", ("x", Const()), "ff.0"),
        Node("d", "div", ("h", Const(R2)), "ff.1"),
        Node("e", "erf", ("d",), "ff.1"),
        Node("a", "add", ("e", Const(1.0)), "ff.1"),
        Node("m", "mul", ("h", "a"), "ff.1"),
        Node("g", "mul", ("m", Const(0.5)), "ff.1"),
        Node("y", "gemm", ("g", Const()), "ff.2"),
    ]
    assert _names(nodes, {"y"}) == [("ff.0", "h", "gemm"), ("ff.1", "g", "gelu")]


def test_tanh_gelu_silu_mish_hardswish_softplus_and_normal_cdf() -> None:
    x = "x"
    nodes = [
        # tanh GELU: 0.5 x (1 + tanh(√(2/π) (x + 0.044715 x³)))
        Node("sq", "mul", (x, x), "g"),
        Node("cu", "mul", (x, "sq"), "g"),
        Node("k", "mul", (Const(0.044715), "cu"), "g"),
        Node("in", "add", (x, "k"), "g"),
        Node("sc", "mul", (Const(math.sqrt(2 / math.pi)), "in"), "g"),
        Node("th", "tanh", ("sc",), "g"),
        Node("p1", "add", (Const(1.0), "th"), "g"),
        Node("xm", "mul", (x, "p1"), "g"),
        Node("gelu", "mul", (Const(0.5), "xm"), "g"),
        # SiLU written by hand in a block: h * sigmoid(h)
        Node("sg", "sigmoid", ("gelu",), "blk"),
        Node("silu", "mul", ("gelu", "sg"), "blk"),
        # Mish: x tanh(softplus(x)) with softplus as log1p(exp(x)) (a decomposed program)
        Node("ex", "exp", ("silu",), "mish"),
        Node("sp", "log1p", ("ex",), "mish"),
        Node("tm", "tanh", ("sp",), "mish"),
        Node("mish", "mul", ("silu", "tm"), "mish"),
        # HardSwish as x relu6(x + 3) / 6
        Node("s3", "add", ("mish", Const(3.0)), "hs"),
        Node("r6", "hardtanh", ("s3", Const(0.0), Const(6.0)), "hs"),
        Node("xr", "mul", ("mish", "r6"), "hs"),
        Node("hs", "div", ("xr", Const(6.0)), "hs"),
        # Φ(z) = 0.5 (1 + erf(z / √2))
        Node("z", "mul", ("hs", Const(1 / R2)), "phi"),
        Node("ez", "erf", ("z",), "phi"),
        Node("e1", "add", (Const(1.0), "ez"), "phi"),
        Node("phi", "mul", (Const(0.5), "e1"), "phi"),
        Node("y", "gemm", ("phi", Const()), "out"),
    ]
    names = _names(nodes, {"y"})
    assert names == [
        ("g", "gelu", "gelu"), ("blk", "silu", "silu"), ("mish", "mish", "mish"),
        ("hs", "hs", "hardswish"), ("phi", "phi", "normal_cdf"),
    ]  # fmt: skip
    layers = name_layers(fuse(nodes, {"y"}), {"y"})
    assert all(la.activation for la in layers)


def test_a_pattern_whose_inner_node_is_used_elsewhere_is_not_fused() -> None:
    # a sigmoid gate also read by another branch is a layer of its own
    nodes = [
        Node("sg", "sigmoid", ("x",), "gate"),
        Node("m", "mul", ("x", "sg"), "gate"),
        Node("y", "add", ("m", "sg"), ""),
    ]
    assert [n for n, _, _ in _names(nodes, {"y"})] == ["gate", "gate#2"]
    assert [op for _, _, op in _names(nodes, {"y"})] == ["sigmoid", "mul"]


def test_a_wrong_constant_is_not_a_gelu() -> None:
    nodes = [
        Node("d", "div", ("x", Const(3.0)), "f"),
        Node("e", "erf", ("d",), "f"),
        Node("a", "add", ("e", Const(1.0)), "f"),
        Node("m", "mul", ("x", "a"), "f"),
        Node("g", "mul", ("m", Const(0.5)), "f"),
        Node("y", "neg", ("g",), ""),
    ]
    assert [op for _, _, op in _names(nodes, {"y"})] == ["div", "erf", "add", "mul", "mul"]


def test_decomposed_layer_norm_is_one_normalisation() -> None:
    nodes = [
        Node("mu", "mean", ("x", Const()), "norm"),
        Node("c", "sub", ("x", "mu"), "norm"),
        Node("p", "pow", ("c", Const(2.0)), "norm"),
        Node("v", "mean", ("p", Const()), "norm"),
        Node("ve", "add", ("v", Const(1e-5)), "norm"),
        Node("sd", "sqrt", ("ve",), "norm"),
        Node("n", "div", ("c", "sd"), "norm"),
        Node("w", "mul", ("n", Const()), "norm"),
        Node("b", "add", ("w", Const()), "norm"),
        Node("y", "relu", ("b",), "act"),
    ]
    layers = name_layers(fuse(nodes, {"y"}), {"y"})
    assert [(la.name, la.op, la.activation) for la in layers] == [("norm", "layer_norm", False)]


def test_naming_rule() -> None:
    nodes = [
        Node("t", "transpose", ("x",), "enc.attn"),  # data movement inside: not offered
        Node("q", "matmul", ("t", Const()), "enc.attn"),
        Node("s", "softmax", ("q",), "enc.attn"),
        Node("o", "matmul", ("s", "t"), "enc.attn"),
        Node("ot", "transpose", ("o",), "enc.attn"),  # the module's output, whatever its op
        Node("r", "add", ("x", "ot"), "enc"),
        Node("r2", "add", ("r", "x"), "enc"),
        Node("f", "flatten", ("r2",), ""),  # data movement at the top: not offered
        Node("y", "gemm", ("f", Const()), "head"),
    ]
    assert [n for n, _, _ in _names(nodes, {"y"})] == [
        "enc.attn/matmul", "enc.attn/softmax", "enc.attn/matmul#2", "enc.attn", "enc/add", "enc",
    ]  # fmt: skip


def test_a_graph_without_module_paths_keeps_its_tensor_names() -> None:
    nodes = [Node("hidden_1", "relu", ("x",), None), Node("y", "neg", ("hidden_1",), None)]
    assert _names(nodes, {"y"}) == [("hidden_1", "hidden_1", "relu")]


def test_onnx_scope_paths() -> None:
    memo: dict[str, str] = {}
    params = {"layers.0.seq.1.0.weight", "block_1.weight"}
    ops = {"act": ["Relu"], "act_1": ["Relu"], "gate": ["Sigmoid"], "gate_1": ["Tanh"]}
    assert scope_path([], memo) == ""
    assert scope_path(["ff", "ff.1"], memo) == "ff.1"  # a container's child repeats its name
    assert scope_path(["layers.0", "seq", "seq.1", "seq.1.0"], memo, params) == "layers.0.seq.1.0"
    assert scope_path(["layers.0", "inner", "proj"], memo) == "layers.0.inner.proj"
    assert scope_path(["act"], memo, params, ops) == "act"
    assert scope_path(["act_1"], memo, params, ops) == "act"  # the exporter's mark of a second call
    assert scope_path(["gate"], memo, params, ops) == "gate"
    assert scope_path(["gate_1"], memo, params, ops) == "gate_1"  # other operators: another module
    assert scope_path(["block"], memo, params, ops) == "block"
    assert scope_path(["block_1"], memo, params, ops) == "block_1"  # owns weights: a module of its own


def test_later_outputs_of_one_operator_are_numbered() -> None:
    # an LSTM inside module rnn: its sequence leaves the module, its last states do not
    nodes = [
        Node("seq", "lstm", ("x", Const()), "rnn", output=0),
        Node("h", "lstm", ("x", Const()), "rnn", output=1),
        Node("c", "lstm", ("x", Const()), "rnn", output=2),
        Node("hc", "add", ("h", "c"), "rnn"),
        Node("y", "add", ("seq", "hc"), ""),
    ]
    assert [n for n, _, _ in _names(nodes, {"y"})] == ["rnn", "rnn/lstm_1", "rnn/lstm_2", "rnn#2"]
