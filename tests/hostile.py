"""Hostile and unlucky inputs for the hardening tests, built from code (common practice, no source).

Malicious files carry a payload that creates a marker file when unpickled, so a
test can show both that the payload is live (Torch's own loader runs it) and that
netdim never runs it. Hostile names carry an escape sequence, a line break that
would forge a table row, and rich markup that would crash or restyle a renderer.
"""

from __future__ import annotations

import io
import json
import pickle
import zipfile
from pathlib import Path

import numpy as np
import torch
from netbuild import _init, save_onnx
from onnx import TensorProto, helper

__all__ = [
    "HOSTILE",
    "BatchAxisLast",
    "GradOutput",
    "Payload",
    "batch_centred_graph",
    "hostile_names_graph",
    "huge",
    "payload_bytes",
    "pickled_constant_pt2",
    "pickled_weight_pt2",
    "rewrite_zip",
]

#: A name with an escape sequence (red), a line break forging a row, and stray markup.
HOSTILE = "t\x1b[31mred\nforged | row [/bold][red]"


class Payload:
    """Unpickling this opens (creates) the file ``marker``: code run from a model file."""

    def __init__(self, marker: Path) -> None:
        self.marker = str(marker)

    def __reduce__(self):
        return (open, (self.marker, "w"))


def payload_bytes(marker: Path, *, torch_format: bool = True) -> bytes:
    """The payload pickled by ``torch.save`` (or by plain ``pickle`` when ``torch_format`` is false)."""
    if not torch_format:
        return pickle.dumps(Payload(marker))
    buffer = io.BytesIO()
    torch.save(Payload(marker), buffer)
    return buffer.getvalue()


def rewrite_zip(source: Path, target: Path, change, extra: dict[str, bytes] | None = None) -> Path:
    """A copy of the zip ``source``, each member passed through ``change(name, data)``, plus ``extra`` members
    (named relative to the archive's root folder)."""
    with zipfile.ZipFile(source) as zin, zipfile.ZipFile(target, "w") as zout:
        root = zin.namelist()[0].split("/", 1)[0] + "/"
        for info in zin.infolist():
            zout.writestr(info, change(info.filename, zin.read(info.filename)))
        for name, data in (extra or {}).items():
            zout.writestr(root + name, data)
    return target


def pickled_weight_pt2(pt2: Path, target: Path, marker: Path) -> Path:
    """An export archive whose first weight is marked as pickled and holds the payload."""

    def change(name: str, data: bytes) -> bytes:
        if name.endswith("data/weights/model_weights_config.json"):
            document = json.loads(data)
            first = next(iter(document["config"]))
            document["config"][first]["use_pickle"] = True
            return json.dumps(document).encode()
        if name.endswith("data/weights/weight_0"):
            return payload_bytes(marker)
        return data

    return rewrite_zip(pt2, target, change)


def pickled_constant_pt2(pt2: Path, target: Path, marker: Path, kind: str) -> Path:
    """An export archive with a constant Torch reads by unpickling: ``kind`` 'opaque' (plain pickle of an
    opaque object) or 'tensor' (a constant marked as pickled, read by full ``torch.load``)."""
    file = {"opaque": "opaque_obj_0", "tensor": "tensor_0"}[kind]
    entry = {"path_name": file, "is_param": False, "use_pickle": kind == "tensor", "tensor_meta": None}

    def change(name: str, data: bytes) -> bytes:
        if name.endswith("data/constants/model_constants_config.json"):
            return json.dumps({"config": {"lifted": entry}}).encode()
        return data

    data = payload_bytes(marker, torch_format=kind == "tensor")
    return rewrite_zip(pt2, target, change, {f"data/constants/{file}": data})


class BatchAxisLast(torch.nn.Module):
    """An additive model of 3 inputs whose 3 outputs come back with the batch axis last, shape (3, batch):
    y_k = Σ_j tanh(w_kj x_j), so every output has mean dimension exactly 1."""

    def __init__(self) -> None:
        super().__init__()
        self.w = torch.nn.Parameter(torch.linspace(-1.5, 1.5, 9).reshape(3, 3))

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return torch.tanh(x[:, None, :] * self.w).sum(dim=2).T


class GradOutput(torch.nn.Module):
    """A linear map whose forward switches autograd back on, so its output requires grad."""

    def __init__(self) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(3, 2)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        with torch.enable_grad():
            return self.lin(x.clone().requires_grad_(True))


def hostile_names_graph(path: Path) -> Path:
    """x (N, 2) named HOSTILE -> Tanh (a hidden layer named HOSTILE too) -> y (N, 2) named HOSTILE + 'out'."""
    a = np.array([[1.0, 0.5], [-0.25, 2.0]], dtype=np.float32)
    graph = helper.make_graph(
        [
            helper.make_node("MatMul", [HOSTILE, "A"], ["h"], name="mm"),
            helper.make_node("Tanh", ["h"], [HOSTILE + "act"], name=HOSTILE + "layer"),
            helper.make_node("Identity", [HOSTILE + "act"], [HOSTILE + "out"], name="id"),
        ],
        "hostile",
        [helper.make_tensor_value_info(HOSTILE, TensorProto.FLOAT, ["N", 2])],
        [helper.make_tensor_value_info(HOSTILE + "out", TensorProto.FLOAT, ["N", 2])],
        [_init("A", a)],
    )
    return save_onnx(graph, path)


def batch_centred_graph(path: Path) -> Path:
    """x (N, 3) -> y = x - mean over the batch: each row depends on the rest of the batch."""
    graph = helper.make_graph(
        [
            helper.make_node("ReduceMean", ["x"], ["m"], axes=[0], keepdims=1),
            helper.make_node("Sub", ["x", "m"], ["y"]),
        ],
        "centred",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 3])],
    )
    return save_onnx(graph, path, opset=13)


def huge(x: np.ndarray) -> np.ndarray:
    """Double outputs near 1e300: their squares overflow float64."""
    return 1e300 * (1.0 + 0.1 * np.tanh(x[:, 0] + x[:, 1]))
