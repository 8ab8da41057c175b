"""Tiny networks for the model-backend tests, saved into a temporary folder.

Torch networks (with one or several forward tensors) are exported to ONNX (the
TorchScript-based exporter, which needs no extra packages), TorchScript,
``torch.export`` programs (.pt2), state dicts and whole pickles. Hand-made ONNX
graphs (built with ``onnx.helper``) cover operators one by one, several and
typed inputs, outputs that hold no real numbers, and the broken files the error
tests need.
"""

from __future__ import annotations

import inspect
import warnings
from pathlib import Path

import numpy as np
import onnx
import torch
from onnx import TensorProto, helper, numpy_helper
from scipy.special import erf

__all__ = [
    "OPSET",
    "Activations",
    "AttentionBlock",
    "BatchCentred",
    "BatchNormed",
    "Dropped",
    "GradientInside",
    "HandSiLU",
    "LabelAndScore",
    "Recurrent",
    "RowsLast",
    "SharedAct",
    "TinyCNN",
    "TinyMLP",
    "TwoShapes",
    "batch_mean_graph",
    "empty_input_graph",
    "export_all",
    "label_and_score_graph",
    "ops_graph",
    "ops_reference",
    "pairwise_graph",
    "rows_last_graph",
    "save_onnx",
    "string_input_graph",
    "symbolic_pair_graph",
    "torch_scoped_graph",
    "two_input_graph",
    "typed_graph",
    "zipmap_graph",
]

OPSET = 17


class TinyMLP(torch.nn.Module):
    """d -> hidden (Tanh) -> hidden (ReLU) -> k; submodules ``net.0`` ... ``net.4``."""

    def __init__(self, d: int = 3, hidden: int = 5, k: int = 2, inplace: bool = False) -> None:
        super().__init__()
        self.net = torch.nn.Sequential(
            torch.nn.Linear(d, hidden),
            torch.nn.Tanh(),
            torch.nn.Linear(hidden, hidden),
            torch.nn.ReLU(inplace=inplace),
            torch.nn.Linear(hidden, k),
        )

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.net(x)


class GradientInside(TinyMLP):
    """TinyMLP's weights, but the forward returns the gradient of its output sum by autograd."""

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        x = x.detach().requires_grad_(True)
        return torch.autograd.grad(self.net(x).sum(), x)[0]


class TinyCNN(torch.nn.Module):
    """A (1, 8, 8) image -> conv (2 channels) -> ReLU -> pool -> Linear -> Sigmoid, d = 64."""

    def __init__(self, channels: int = 2, k: int = 3) -> None:
        super().__init__()
        self.conv = torch.nn.Conv2d(1, channels, 3, padding=1)
        self.act = torch.nn.ReLU()
        self.pool = torch.nn.MaxPool2d(2)
        self.fc = torch.nn.Linear(channels * 16, k)
        self.out = torch.nn.Sigmoid()

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        h = self.pool(self.act(self.conv(x)))
        h = h.reshape(h.shape[0], -1)  # exports as Shape/Gather/Concat/Reshape arithmetic
        return self.out(self.fc(h))


class TwiceReLU(torch.nn.Module):
    """Uses one activation module twice (such a module is not offered as a layer)."""

    def __init__(self, d: int = 3) -> None:
        super().__init__()
        self.a = torch.nn.Linear(d, 4)
        self.b = torch.nn.Linear(4, 2)
        self.act = torch.nn.ReLU()

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.act(self.b(self.act(self.a(x))))


class SharedAct(torch.nn.Module):
    """One Tanh module called twice inside the network: c(act(b(act(a(x))))), d = 3, 2 outputs.

    Its two calls are the layers ``act`` and ``act#2`` in every format.
    """

    def __init__(self, d: int = 3) -> None:
        super().__init__()
        self.a = torch.nn.Linear(d, 4)
        self.b = torch.nn.Linear(4, 4)
        self.act = torch.nn.Tanh()
        self.c = torch.nn.Linear(4, 2)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.c(self.act(self.b(self.act(self.a(x)))))


class Activations(torch.nn.Module):
    """d = 4 -> Linear(8) then, each after a Linear: GELU, tanh GELU, SiLU, Mish, HardSwish, a
    softplus with beta 2 and a hand-written SiLU ``h * sigmoid(h)`` (in module ``gate``), -> 2.

    Every activation is a module of its own (``gelu``, ``gelu_tanh``, ``silu``, ``mish``,
    ``hardswish``, ``softplus``, ``gate``); exporters split most of them into several nodes.
    """

    def __init__(self, d: int = 4, width: int = 8) -> None:
        super().__init__()
        self.fc = torch.nn.ModuleList([torch.nn.Linear(d if i == 0 else width, width) for i in range(7)])
        self.gelu = torch.nn.GELU()
        self.gelu_tanh = torch.nn.GELU(approximate="tanh")
        self.silu = torch.nn.SiLU()
        self.mish = torch.nn.Mish()
        self.hardswish = torch.nn.Hardswish()
        self.softplus = torch.nn.Softplus(beta=2.0)
        self.gate = HandSiLU()
        self.out = torch.nn.Linear(width, 2)

    def acts(self) -> list[str]:
        """The activation modules, in the order the forward applies them."""
        return ["gelu", "gelu_tanh", "silu", "mish", "hardswish", "softplus", "gate"]

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        fc = self.fc
        h = self.gelu_tanh(fc[1](self.gelu(fc[0](x))))
        h = self.hardswish(fc[4](self.mish(fc[3](self.silu(fc[2](h))))))
        return self.out(self.gate(fc[6](self.softplus(fc[5](h)))))


class HandSiLU(torch.nn.Module):
    """``h * torch.sigmoid(h)``, as authors write Swish by hand."""

    def forward(self, h: torch.Tensor) -> torch.Tensor:
        return h * torch.sigmoid(h)


class AttentionBlock(torch.nn.Module):
    """A transformer block over (batch, 16, 4) inputs (d = 64): multi-head attention with a
    residual, LayerNorm, a GELU feed-forward with a residual, then a Linear head to 3 outputs."""

    def __init__(self, tokens: int = 16, width: int = 4, heads: int = 2, k: int = 3) -> None:
        super().__init__()
        self.attn = torch.nn.MultiheadAttention(width, heads, batch_first=True)
        self.norm = torch.nn.LayerNorm(width)
        self.ff = torch.nn.Sequential(
            torch.nn.Linear(width, 2 * width), torch.nn.GELU(), torch.nn.Linear(2 * width, width)
        )
        self.head = torch.nn.Linear(tokens * width, k)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        a, _ = self.attn(x, x, x, need_weights=False)
        h = self.norm(x + a)
        h = h + self.ff(h)
        return self.head(h.flatten(1))


class RowsLast(torch.nn.Module):
    """An additive model returning its 3 outputs with the batch axis last, shape (3, batch):
    y_k = Σ_j tanh(w_kj x_j), so every output has mean dimension 1."""

    def __init__(self, d: int = 4, k: int = 3) -> None:
        super().__init__()
        self.w = torch.nn.Parameter(torch.linspace(-1.5, 1.5, d * k).reshape(k, d))

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return torch.tanh(x[:, None, :] * self.w).sum(dim=2).T


class BatchNormed(torch.nn.Module):
    """Linear -> BatchNorm1d -> Tanh -> Linear; in training mode rows depend on the batch."""

    def __init__(self, d: int = 3) -> None:
        super().__init__()
        self.fc = torch.nn.Linear(d, 4)
        self.bn = torch.nn.BatchNorm1d(4)
        self.out = torch.nn.Linear(4, 2)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.out(torch.tanh(self.bn(self.fc(x))))


class BatchCentred(torch.nn.Module):
    """A normalisation across the batch written by hand: each row depends on the others."""

    def __init__(self) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(3, 2)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        h = self.lin(x)
        return h - h.mean(dim=0, keepdim=True)


class Dropped(torch.nn.Module):
    """Linear -> Dropout(0.5): random in training mode."""

    def __init__(self) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(3, 2)
        self.drop = torch.nn.Dropout(0.5)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.drop(self.lin(x))


class Recurrent(torch.nn.Module):
    """(batch, 6, 3) -> LSTM over the 6 steps (sequence first inside) -> tanh of the last step -> 2."""

    def __init__(self) -> None:
        super().__init__()
        self.rnn = torch.nn.LSTM(3, 5)
        self.head = torch.nn.Linear(5, 2)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        out, _ = self.rnn(x.transpose(0, 1))
        return self.head(torch.tanh(out[-1]))


class TwoInputs(torch.nn.Module):
    """forward(a, b) with two (N, 3) tensors: y = Linear(a + b), one output."""

    def __init__(self) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(3, 1)

    def forward(self, a: torch.Tensor, b: torch.Tensor) -> torch.Tensor:
        return self.lin(a + b)


class TwoShapes(torch.nn.Module):
    """forward(a, b) with a (N, 3) and b (N, 2, 2): Linear on both -> Tanh -> Linear -> 2 outputs.

    Submodules ``fa``, ``fb`` (one Linear per input), ``act``, ``out``; d = 3 + 4 = 7.
    """

    def __init__(self) -> None:
        super().__init__()
        self.fa = torch.nn.Linear(3, 4)
        self.fb = torch.nn.Linear(4, 4)
        self.act = torch.nn.Tanh()
        self.out = torch.nn.Linear(4, 2)

    def forward(self, a: torch.Tensor, b: torch.Tensor) -> torch.Tensor:
        h = self.fa(a) + self.fb(b.reshape(b.shape[0], 4))
        return self.out(self.act(h))


class LabelAndScore(torch.nn.Module):
    """forward(x) -> (argmax label, int64; scores, float): one output is not real numbers."""

    def __init__(self, d: int = 3, k: int = 2) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(d, k)

    def forward(self, x: torch.Tensor) -> tuple[torch.Tensor, torch.Tensor]:
        scores = self.lin(x)
        return scores.argmax(dim=1), scores


def seeded(cls: type[torch.nn.Module], seed: int = 0, **kwargs: object) -> torch.nn.Module:
    """An instance of ``cls`` with weights drawn from a fixed seed, in eval mode."""
    torch.manual_seed(seed)
    return cls(**kwargs).eval()


def export_all(
    net: torch.nn.Module,
    example: torch.Tensor | tuple[torch.Tensor, ...],
    folder: Path,
    stem: str = "net",
) -> dict[str, Path]:
    """Save ``net`` in every format netdim reads; return {kind: path}.

    Kinds: ``onnx`` (dynamic batch), ``onnx_fixed`` (batch fixed at len(example)),
    ``torchscript``, ``pt2`` (dynamic batch), ``pt2_fixed``, ``state_dict``,
    ``pickle`` (whole module). A tuple ``example`` is one tensor per forward
    argument; the ONNX inputs then take the argument names (else ``x``).
    """
    folder.mkdir(parents=True, exist_ok=True)
    paths = {kind: folder / f"{stem}_{kind}{ext}" for kind, ext in _SUFFIXES.items()}
    examples = example if isinstance(example, tuple) else (example,)
    names = ["x"] if len(examples) == 1 else list(inspect.signature(net.forward).parameters)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        axes = {name: {0: "batch"} for name in [*names, "y"]}
        for key, dynamic in (("onnx", axes), ("onnx_fixed", None)):
            torch.onnx.export(
                net,
                examples,
                str(paths[key]),
                dynamo=False,
                input_names=names,
                output_names=["y"],
                dynamic_axes=dynamic,
                opset_version=OPSET,
            )
        torch.jit.script(net).save(str(paths["torchscript"]))
        batch = torch.export.Dim("batch")
        program = torch.export.export(net, examples, dynamic_shapes=tuple({0: batch} for _ in examples))
        torch.export.save(program, str(paths["pt2"]))
        torch.export.save(torch.export.export(net, examples), str(paths["pt2_fixed"]))
        torch.save(net.state_dict(), paths["state_dict"])
        torch.save(net, paths["pickle"])
    return paths


_SUFFIXES = {
    "onnx": ".onnx",
    "onnx_fixed": ".onnx",
    "torchscript": ".pt",
    "pt2": ".pt2",
    "pt2_fixed": ".pt2",
    "state_dict": ".pt",
    "pickle": ".pt",
}


# -- hand-made ONNX graphs ------------------------------------------------------------------


def save_onnx(graph: onnx.GraphProto, path: Path, opset: int = OPSET) -> Path:
    model = helper.make_model(graph, opset_imports=[helper.make_opsetid("", opset)])
    model.ir_version = 8
    onnx.save(model, str(path))
    return path


def _init(name: str, array: np.ndarray) -> onnx.TensorProto:
    return numpy_helper.from_array(np.asarray(array, dtype=np.float32), name)


def ops_weights(seed: int = 0) -> dict[str, np.ndarray]:
    """Weights of :func:`ops_graph`, float32."""
    rng = np.random.default_rng(seed)
    shapes = {"W": (2, 1, 3, 3), "B": (2,), "G": (6, 32), "g": (6,), "M": (6, 5), "m": (5,),
              "P": (5, 3)}  # fmt: skip
    return {k: rng.normal(size=s).astype(np.float32) * 0.5 for k, s in shapes.items()}


def ops_graph(path: Path, seed: int = 0) -> Path:
    """x (N,1,4,4) -> Conv -> Relu -> Flatten -> Gemm -> Tanh -> MatMul -> Add -> Sigmoid
    -> Erf -> MatMul -> Softmax -> y (N,3). Hidden tensors are named after their op."""
    w = ops_weights(seed)
    nodes = [
        helper.make_node("Conv", ["x", "W", "B"], ["conv"], pads=[1, 1, 1, 1]),
        helper.make_node("Relu", ["conv"], ["relu"]),
        helper.make_node("Flatten", ["relu"], ["flat"], axis=1),
        helper.make_node("Gemm", ["flat", "G", "g"], ["gemm"], transB=1),
        helper.make_node("Tanh", ["gemm"], ["tanh"]),
        helper.make_node("MatMul", ["tanh", "M"], ["matmul"]),
        helper.make_node("Add", ["matmul", "m"], ["add"]),
        helper.make_node("Sigmoid", ["add"], ["sigmoid"]),
        helper.make_node("Erf", ["sigmoid"], ["erf"]),
        helper.make_node("MatMul", ["erf", "P"], ["logits"]),
        helper.make_node("Softmax", ["logits"], ["y"], axis=-1),
    ]
    graph = helper.make_graph(
        nodes,
        "ops",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 1, 4, 4])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 3])],
        [_init(k, v) for k, v in w.items()],
    )
    return save_onnx(graph, path)


def ops_reference(x: np.ndarray, seed: int = 0) -> dict[str, np.ndarray]:
    """Every tensor of :func:`ops_graph` computed with numpy in float64, flattened per row."""
    w = {k: v.astype(np.float64) for k, v in ops_weights(seed).items()}
    n = len(x)
    img = np.pad(x.reshape(n, 4, 4), ((0, 0), (1, 1), (1, 1)))
    conv = np.zeros((n, 2, 4, 4))
    for c in range(2):  # cross-correlation, as ONNX Conv defines it
        for i in range(3):
            for j in range(3):
                conv[:, c] += w["W"][c, 0, i, j] * img[:, i : i + 4, j : j + 4]
        conv[:, c] += w["B"][c]
    out = {"conv": conv.reshape(n, -1)}
    out["relu"] = np.maximum(out["conv"], 0.0)
    out["flat"] = out["relu"]
    out["gemm"] = out["flat"] @ w["G"].T + w["g"]
    out["tanh"] = np.tanh(out["gemm"])
    out["matmul"] = out["tanh"] @ w["M"]
    out["add"] = out["matmul"] + w["m"]
    out["sigmoid"] = 1.0 / (1.0 + np.exp(-out["add"]))
    out["erf"] = erf(out["sigmoid"])
    out["logits"] = out["erf"] @ w["P"]
    e = np.exp(out["logits"] - out["logits"].max(axis=1, keepdims=True))
    out["y"] = e / e.sum(axis=1, keepdims=True)
    return out


def linear_graph(path: Path, *, batch: int | str = "N", dtype: int = TensorProto.FLOAT) -> Path:
    """y = x @ A + c for x (batch, 3), y (batch, 2); A = [[1,2],[3,4],[5,6]], c = [0.5, -1]."""
    a = np.arange(1, 7, dtype=np.float32).reshape(3, 2)
    c = np.array([0.5, -1.0], dtype=np.float32)
    nodes = [
        helper.make_node("MatMul", ["x", "A"], ["h"]),
        helper.make_node("Add", ["h", "c"], ["y"]),
    ]
    inits = [_init("A", a), _init("c", c)]
    if dtype != TensorProto.FLOAT:
        nodes.insert(0, helper.make_node("Cast", ["x"], ["xf"], to=TensorProto.FLOAT))
        nodes[1].input[0] = "xf"
    graph = helper.make_graph(
        nodes,
        "linear",
        [helper.make_tensor_value_info("x", dtype, [batch, 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, [batch, 2])],
        inits,
    )
    return save_onnx(graph, path)


def two_input_graph(path: Path) -> Path:
    graph = helper.make_graph(
        [helper.make_node("Add", ["a", "b"], ["y"])],
        "two",
        [
            helper.make_tensor_value_info("a", TensorProto.FLOAT, ["N", 3]),
            helper.make_tensor_value_info("b", TensorProto.FLOAT, ["N", 3]),
        ],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 3])],
    )
    return save_onnx(graph, path)


def unknown_op_graph(path: Path) -> Path:
    graph = helper.make_graph(
        [helper.make_node("Frobnicate", ["x"], ["y"], domain="org.example.nowhere")],
        "custom",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 3])],
    )
    model = helper.make_model(
        graph,
        opset_imports=[
            helper.make_opsetid("", OPSET),
            helper.make_opsetid("org.example.nowhere", 1),
        ],
    )
    model.ir_version = 8
    onnx.save(model, str(path))
    return path


def external_data_graph(path: Path, location: str) -> Path:
    """:func:`linear_graph`'s model with ``A`` stored in the file ``location`` (relative to
    the model's folder; written there, wherever that is)."""
    a = np.arange(1, 7, dtype=np.float32).reshape(3, 2)
    target = path.parent / location
    target.parent.mkdir(parents=True, exist_ok=True)
    target.write_bytes(a.tobytes())
    tensor = onnx.TensorProto(name="A", data_type=TensorProto.FLOAT, dims=[3, 2])
    tensor.data_location = TensorProto.EXTERNAL
    for key, value in (("location", location), ("offset", "0"), ("length", str(a.nbytes))):
        tensor.external_data.add(key=key, value=value)
    graph = helper.make_graph(
        [helper.make_node("MatMul", ["x", "A"], ["h"]), helper.make_node("Add", ["h", "c"], ["y"])],
        "external",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 2])],
        [tensor, _init("c", np.array([0.5, -1.0]))],
    )
    return save_onnx(graph, path)


def symbolic_pair_graph(path: Path) -> Path:
    """Inputs a (N, 3) and b (N, K), K symbolic: y = concat(2 a, b), shape (N, 3 + K)."""
    graph = helper.make_graph(
        [
            helper.make_node("Mul", ["a", "two"], ["a2"]),
            helper.make_node("Concat", ["a2", "b"], ["y"], axis=1),
        ],
        "pair",
        [
            helper.make_tensor_value_info("a", TensorProto.FLOAT, ["N", 3]),
            helper.make_tensor_value_info("b", TensorProto.FLOAT, ["N", "K"]),
        ],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", None])],
        [_init("two", np.array([2.0]))],
    )
    return save_onnx(graph, path)


def typed_graph(path: Path, elem_type: int) -> Path:
    """x (N, 3) -> Relu -> Neg -> y, all of ONNX element type ``elem_type`` (float16, double...)."""
    graph = helper.make_graph(
        [helper.make_node("Relu", ["x"], ["r"]), helper.make_node("Neg", ["r"], ["y"])],
        "typed",
        [helper.make_tensor_value_info("x", elem_type, ["N", 3])],
        [helper.make_tensor_value_info("y", elem_type, ["N", 3])],
    )
    return save_onnx(graph, path)


def string_input_graph(path: Path) -> Path:
    """A graph whose input holds strings (netdim cannot feed it)."""
    graph = helper.make_graph(
        [helper.make_node("Identity", ["s"], ["y"])],
        "strings",
        [helper.make_tensor_value_info("s", TensorProto.STRING, ["N", 1])],
        [helper.make_tensor_value_info("y", TensorProto.STRING, ["N", 1])],
    )
    return save_onnx(graph, path)


def label_and_score_graph(path: Path) -> Path:
    """x (N, 3) -> scores = x @ A (float, (N, 2)) and label = ArgMax(scores) (int64, (N, 1))."""
    a = np.arange(1, 7, dtype=np.float32).reshape(3, 2)
    graph = helper.make_graph(
        [
            helper.make_node("MatMul", ["x", "A"], ["scores"]),
            helper.make_node("ArgMax", ["scores"], ["label"], axis=1, keepdims=1),
        ],
        "label_and_score",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [
            helper.make_tensor_value_info("label", TensorProto.INT64, ["N", 1]),
            helper.make_tensor_value_info("scores", TensorProto.FLOAT, ["N", 2]),
        ],
        [_init("A", a)],
    )
    return save_onnx(graph, path)


def zipmap_graph(path: Path) -> Path:
    """x (N, 3) -> scores (float, (N, 2), a graph output) -> ZipMap -> a sequence of maps output."""
    a = np.arange(1, 7, dtype=np.float32).reshape(3, 2)
    graph = helper.make_graph(
        [
            helper.make_node("MatMul", ["x", "A"], ["scores"]),
            helper.make_node("ZipMap", ["scores"], ["maps"], domain="ai.onnx.ml", classlabels_int64s=[0, 1]),
        ],
        "zipmap",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [
            helper.make_tensor_value_info("scores", TensorProto.FLOAT, ["N", 2]),
            helper.make_value_info(
                "maps",
                helper.make_sequence_type_proto(
                    helper.make_map_type_proto(TensorProto.INT64, helper.make_tensor_type_proto(TensorProto.FLOAT, []))
                ),
            ),
        ],
        [_init("A", a)],
    )
    model = helper.make_model(
        graph, opset_imports=[helper.make_opsetid("", OPSET), helper.make_opsetid("ai.onnx.ml", 1)]
    )
    model.ir_version = 8
    onnx.save(model, str(path))
    return path


def rows_last_graph(path: Path) -> Path:
    """x (N, 3) -> h = Tanh(x A) (N, 2) -> y = Transpose(h), shape (2, N): rows on the last axis."""
    a = np.array([[1.0, -0.5], [0.25, 2.0], [-1.0, 0.5]], dtype=np.float32)
    graph = helper.make_graph(
        [
            helper.make_node("MatMul", ["x", "A"], ["h"]),
            helper.make_node("Tanh", ["h"], ["t"]),
            helper.make_node("Transpose", ["t"], ["y"], perm=[1, 0]),
        ],
        "rows_last",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, [2, "N"])],
        [_init("A", a)],
    )
    return save_onnx(graph, path)


def batch_mean_graph(path: Path) -> Path:
    """x (N, 3) -> y = ReduceMean over the batch axis, shape (3,): one value per batch."""
    graph = helper.make_graph(
        [helper.make_node("ReduceMean", ["x"], ["y"], axes=[0], keepdims=0)],
        "batch_mean",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, [3])],
    )
    return save_onnx(graph, path, opset=13)


def pairwise_graph(path: Path) -> Path:
    """x (N, 3) -> y = x xᵀ, shape (N, N): the output's width is the batch size."""
    graph = helper.make_graph(
        [helper.make_node("Transpose", ["x"], ["xt"], perm=[1, 0]), helper.make_node("MatMul", ["x", "xt"], ["y"])],
        "pairwise",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", "N"])],
    )
    return save_onnx(graph, path)


def empty_input_graph(path: Path) -> Path:
    """An input x of shape (N, 0), no features: y = ReduceSum(x) + 1, shape (N, 1)."""
    graph = helper.make_graph(
        [
            helper.make_node("ReduceSum", ["x"], ["s"], axes=[1], keepdims=1),
            helper.make_node("Add", ["s", "one"], ["y"]),
        ],
        "empty",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 0])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 1])],
        [_init("one", np.array([1.0]))],
    )
    return save_onnx(graph, path, opset=12)


def torch_scoped_graph(path: Path) -> Path:
    """x (N, 3) -> Gemm -> Relu -> Gemm -> y, with module paths as the newer Torch exporter writes
    them (node metadata ``pkg.torch.onnx.name_scopes``) and no scoped node names: the layers are
    ``enc.fc`` and ``enc.act``."""
    rng = np.random.default_rng(1)
    nodes = [
        helper.make_node("Gemm", ["x", "W1", "b1"], ["linear"], name="node_linear", transB=1),
        helper.make_node("Relu", ["linear"], ["relu"], name="node_relu"),
        helper.make_node("Gemm", ["relu", "W2", "b2"], ["y"], name="node_linear_1", transB=1),
    ]
    scopes = [["", "enc", "enc.fc", "linear"], ["", "enc", "enc.act", "relu"], ["", "head", "linear_1"]]
    for node, scope in zip(nodes, scopes, strict=True):
        node.metadata_props.add(key="pkg.torch.onnx.name_scopes", value=repr(scope))
    inits = [
        _init("W1", rng.normal(size=(4, 3))), _init("b1", rng.normal(size=4)),
        _init("W2", rng.normal(size=(2, 4))), _init("b2", rng.normal(size=2)),
    ]  # fmt: skip
    graph = helper.make_graph(
        nodes,
        "scoped",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 2])],
        inits,
    )
    return save_onnx(graph, path)
