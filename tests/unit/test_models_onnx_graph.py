"""Reading an ONNX file: damaged files, external data, and the hidden tensors a graph offers.

The expected layer list of :func:`netbuild.ops_graph` follows from its node list (every
node output that depends on the input, is not a graph output and computes something, in
graph order; the hand-made graph carries no module paths, so its tensors keep their
names); bad files are built here (common practice, no source) and the assertions check the
error type and the words a user needs to fix the problem.
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
from audit.models.graph import Const
from audit.models.onnx_graph import load_proto, value_info, with_outputs
from audit.models.onnx_layers import graph_nodes

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
    # every node output except the graph output and the Flatten (a pure move), in graph order
    expected = ["conv", "relu", "gemm", "tanh", "matmul", "add", "sigmoid", "erf", "logits"]
    assert list(layers) == expected
    assert all(layer.tensor == name for name, layer in layers.items())  # no module paths: tensor names
    assert layers["conv"].op == "conv" and layers["conv"].shape == (2, 4, 4)
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


def test_graph_nodes_of_the_ops_graph(tmp_path: Path) -> None:
    proto = load_proto(netbuild.ops_graph(tmp_path / "ops.onnx"))
    nodes, returned = graph_nodes(proto, ["x"], value_info(proto))
    assert [n.key for n in nodes] == [
        "conv", "relu", "flat", "gemm", "tanh", "matmul", "add", "sigmoid", "erf", "logits", "y"
    ]  # fmt: skip
    assert returned == {"y"}
    by_key = {n.key: n for n in nodes}
    assert by_key["erf"].op == "erf" and by_key["erf"].args == ("sigmoid",)
    assert by_key["conv"].args[0] == "x" and by_key["conv"].args[1] == Const(None)  # weights
    assert all(n.scope is None for n in nodes)  # hand-made: no module paths
    # nothing depends on a tensor that is not fed
    assert graph_nodes(proto, ["nothing"], {})[0] == []


def test_extended_model_returns_more_and_leaves_the_file_alone(tmp_path: Path) -> None:
    path = netbuild.linear_graph(tmp_path / "lin.onnx")
    before = path.read_bytes()
    extended = onnx.load_from_string(with_outputs(load_proto(path), ["h"], path, False))
    assert [o.name for o in extended.graph.output] == ["y", "h"]
    model = OnnxModel(path)
    model.evaluate(RNG.normal(size=(4, 3)), capture=["h"])
    assert path.read_bytes() == before
