"""Reading an ONNX file: damaged files, external data, and the hidden tensors a graph offers.

The expected layer list of :func:`netbuild.ops_graph` follows from its node list (every
node output that depends on the input and is not a graph output, in graph order); bad
files are built here (common practice, no source) and the assertions check the error type
and the words a user needs to fix the problem.
"""

from __future__ import annotations

import os
from pathlib import Path

import netbuild
import numpy as np
import onnx
import pytest
import torch

from audit.errors import UserError
from audit.models import OnnxModel, open_model
from audit.models.onnx_graph import hidden_tensors, load_proto, with_outputs

RNG = np.random.default_rng(20240612)


@pytest.fixture(scope="module")
def ops_model(tmp_path_factory: pytest.TempPathFactory) -> OnnxModel:
    path = netbuild.ops_graph(tmp_path_factory.mktemp("ops") / "ops.onnx")
    return OnnxModel(path)


@pytest.fixture(scope="module")
def mlp_paths(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    net = netbuild.seeded(netbuild.TinyMLP, seed=0)
    return netbuild.export_all(net, torch.zeros(2, 3), tmp_path_factory.mktemp("err"), "mlp")


def _random_bytes(path: Path, size: int = 4096) -> Path:
    path.write_bytes(os.urandom(size))
    return path


def test_ops_graph_layers(ops_model: OnnxModel) -> None:
    layers = {layer.name: layer for layer in ops_model.layers()}
    # every node output except the graph output, in graph order
    expected = ["conv", "relu", "flat", "gemm", "tanh", "matmul", "add", "sigmoid", "erf", "logits"]
    assert list(layers) == expected
    assert layers["conv"].op == "Conv" and layers["conv"].shape == (2, 4, 4)
    assert layers["gemm"].shape == (6,) and layers["logits"].shape == (3,)
    active = {name for name, layer in layers.items() if layer.activation}
    assert active == {"relu", "tanh", "sigmoid", "erf"}


def test_external_data_inside_folder_loads(tmp_path) -> None:
    path = netbuild.external_data_graph(tmp_path / "ext.onnx", "weights/a.bin")
    model = open_model(str(path))
    x = RNG.normal(size=(6, 3))
    a = np.arange(1, 7, dtype=np.float64).reshape(3, 2)
    ev = model.evaluate(x, capture=["h"])  # the extended session needs the external data too
    np.testing.assert_allclose(ev.outputs, x @ a + [0.5, -1.0], rtol=1e-5, atol=1e-5)
    np.testing.assert_allclose(ev.hidden["h"], x @ a, rtol=1e-5, atol=1e-5)


def test_truncated_onnx(tmp_path: Path, mlp_paths: dict[str, Path]) -> None:
    data = mlp_paths["onnx"].read_bytes()
    path = tmp_path / "cut.onnx"
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(UserError, match=r"truncated|damaged|invalid"):
        open_model(str(path))


def test_random_bytes_onnx(tmp_path: Path) -> None:
    with pytest.raises(UserError, match=r"ONNX"):
        open_model(str(_random_bytes(tmp_path / "noise.onnx")))


def test_external_data_outside_folder(tmp_path: Path) -> None:
    inner = tmp_path / "models"
    inner.mkdir()
    path = netbuild.external_data_graph(inner / "ext.onnx", "../elsewhere/a.bin")
    assert (tmp_path / "elsewhere" / "a.bin").is_file()
    with pytest.raises(UserError, match=r"outside the model's folder"):
        open_model(str(path))


def test_external_data_missing(tmp_path: Path) -> None:
    path = netbuild.external_data_graph(tmp_path / "ext.onnx", "a.bin")
    (tmp_path / "a.bin").unlink()
    with pytest.raises(UserError, match="does not exist"):
        open_model(str(path))


def test_hidden_tensors_of_the_ops_graph(tmp_path: Path) -> None:
    proto = load_proto(netbuild.ops_graph(tmp_path / "ops.onnx"))
    candidates, shapes, unknown = hidden_tensors(proto, ["x"], None)
    assert [name for name, _ in candidates] == [
        "conv", "relu", "flat", "gemm", "tanh", "matmul", "add", "sigmoid", "erf", "logits"
    ]  # fmt: skip
    assert dict(candidates)["erf"] == "Erf"
    # every tensor of this graph has a static shape, so inference knows them all
    assert unknown == [] and shapes["flat"] == (32,) and shapes["conv"] == (2, 4, 4)
    # nothing depends on a tensor that is not fed
    assert hidden_tensors(proto, ["nothing"], None)[0] == []


def test_extended_model_returns_more_and_leaves_the_file_alone(tmp_path: Path) -> None:
    path = netbuild.linear_graph(tmp_path / "lin.onnx")
    before = path.read_bytes()
    extended = onnx.load_from_string(with_outputs(load_proto(path), ["h"], path, False))
    assert [o.name for o in extended.graph.output] == ["y", "h"]
    model = OnnxModel(path)
    model.evaluate(RNG.normal(size=(4, 3)), capture=["h"])
    assert path.read_bytes() == before
