"""ONNX backend: loading, layer discovery, evaluation against numpy, batching, refusals.

Reference values come from independent numpy code written from the ONNX
operator definitions (ONNX Operators specification, onnx.ai, opset 17) or from
the Torch network the file was exported from; nothing is copied from netdim's
own output. Bad files are built here (common practice, no source): the
assertions check the error type and the words a user needs to fix the problem.
"""

from __future__ import annotations

import io
import os
from pathlib import Path

import netbuild
import numpy as np
import pytest
import torch
from onnx import TensorProto
from rich.console import Console

from audit.errors import UserError
from audit.models import Model, OnnxModel, open_model
from audit.report.signature import render_signature
from audit.studies import model_signature

RNG = np.random.default_rng(20240611)


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


@pytest.fixture(scope="module")
def cnn_files(tmp_path_factory: pytest.TempPathFactory) -> tuple[torch.nn.Module, dict]:
    net = netbuild.seeded(netbuild.TinyCNN, seed=3)
    folder = tmp_path_factory.mktemp("cnn")
    return net, netbuild.export_all(net, torch.zeros(4, 1, 8, 8), folder, "cnn")


def test_ops_graph_signature(ops_model: OnnxModel) -> None:
    assert isinstance(ops_model, Model)
    assert ops_model.format == "onnx"
    assert ops_model.input.shape == (1, 4, 4) and ops_model.input.units == 16
    assert ops_model.batch_size is None
    assert [o.name for o in ops_model.outputs] == ["y"]
    assert ops_model.output_names() == ["y[0]", "y[1]", "y[2]"]
    assert ops_model.feature_names()[:2] == ["x[0,0,0]", "x[0,0,1]"]
    assert ops_model.feature_names()[-1] == "x[0,3,3]"


def test_ops_graph_layers(ops_model: OnnxModel) -> None:
    layers = {layer.name: layer for layer in ops_model.layers()}
    # every node output except the graph output, in graph order
    expected = ["conv", "relu", "flat", "gemm", "tanh", "matmul", "add", "sigmoid", "erf", "logits"]
    assert list(layers) == expected
    assert layers["conv"].op == "Conv" and layers["conv"].shape == (2, 4, 4)
    assert layers["gemm"].shape == (6,) and layers["logits"].shape == (3,)
    active = {name for name, layer in layers.items() if layer.activation}
    assert active == {"relu", "tanh", "sigmoid", "erf"}


def test_ops_graph_matches_numpy(ops_model: OnnxModel) -> None:
    # reference: numpy re-implementation of the ONNX operator definitions (onnx.ai operator docs)
    x = RNG.normal(size=(37, 16))
    names = [layer.name for layer in ops_model.layers()]
    ev = ops_model.evaluate(x, capture=names)
    ref = netbuild.ops_reference(x)
    assert ev.outputs.dtype == np.float64 and ev.outputs.shape == (37, 3)
    # float32 model against float64 numpy: agreement to float32 rounding
    np.testing.assert_allclose(ev.outputs, ref["y"], rtol=1e-5, atol=1e-6)
    for name in names:
        assert ev.hidden[name].dtype == np.float64
        np.testing.assert_allclose(ev.hidden[name], ref[name], rtol=1e-4, atol=1e-5)


def test_capture_subsets_are_cached_and_independent(ops_model: OnnxModel) -> None:
    x = RNG.normal(size=(5, 16))
    a = ops_model.evaluate(x, capture=["tanh"])
    b = ops_model.evaluate(x, capture=["erf", "tanh"])
    c = ops_model.evaluate(x, capture=["tanh", "erf"])
    plain = ops_model.evaluate(x)
    assert set(a.hidden) == {"tanh"} and set(b.hidden) == {"erf", "tanh"}
    assert plain.hidden == {}
    np.testing.assert_array_equal(a.hidden["tanh"], b.hidden["tanh"])
    np.testing.assert_array_equal(b.outputs, plain.outputs)
    # the same set in another order reuses one session
    assert len([k for k in ops_model._sessions if set(k) == {"erf", "tanh"}]) == 1
    np.testing.assert_array_equal(b.hidden["erf"], c.hidden["erf"])


def test_unknown_capture_name_suggests(ops_model: OnnxModel) -> None:
    with pytest.raises(UserError, match=r"no probe-able layer 'tahn'.*Did you mean 'tanh'"):
        ops_model.evaluate(np.zeros((2, 16)), capture=["tahn"])


def test_wrong_row_width_is_a_programming_error(ops_model: OnnxModel) -> None:
    with pytest.raises(ValueError, match=r"shape \(n, 16\)"):
        ops_model.evaluate(np.zeros((2, 15)))


@pytest.mark.parametrize("batch", [4, 1])
def test_fixed_batch_chunks(tmp_path, batch: int) -> None:
    dynamic = OnnxModel(netbuild.linear_graph(tmp_path / "dyn.onnx"))
    fixed = OnnxModel(netbuild.linear_graph(tmp_path / "fixed.onnx", batch=batch))
    assert fixed.batch_size == batch and dynamic.batch_size is None
    x = RNG.normal(size=(10, 3))  # 10 is not a multiple of 4: the last chunk is padded
    # reference: y = x A + c with the graph's A and c (netbuild.linear_graph)
    a = np.arange(1, 7, dtype=np.float64).reshape(3, 2)
    ref = x @ a + np.array([0.5, -1.0])
    for model in (dynamic, fixed):
        ev = model.evaluate(x, capture=["h"])
        assert ev.outputs.shape == (10, 2)
        np.testing.assert_allclose(ev.outputs, ref, rtol=1e-5, atol=1e-5)
        np.testing.assert_allclose(ev.hidden["h"], x @ a, rtol=1e-5, atol=1e-5)
    if batch == 1:
        assert any("batch size of 1" in note for note in fixed.notices)
    else:
        assert fixed.notices == []
        assert len(fixed.evaluate(x[:3]).outputs) == 3  # fewer rows than one chunk


def test_double_input_runs_in_double(tmp_path) -> None:
    model = OnnxModel(netbuild.linear_graph(tmp_path / "d.onnx", dtype=TensorProto.DOUBLE))
    assert model.input.dtype == "float64"
    x = RNG.normal(size=(4, 3))
    a = np.arange(1, 7, dtype=np.float64).reshape(3, 2)
    np.testing.assert_allclose(model.evaluate(x).outputs, x @ a + [0.5, -1.0], rtol=1e-6)


def test_external_data_inside_folder_loads(tmp_path) -> None:
    path = netbuild.external_data_graph(tmp_path / "ext.onnx", "weights/a.bin")
    model = open_model(str(path))
    x = RNG.normal(size=(6, 3))
    a = np.arange(1, 7, dtype=np.float64).reshape(3, 2)
    ev = model.evaluate(x, capture=["h"])  # the extended session needs the external data too
    np.testing.assert_allclose(ev.outputs, x @ a + [0.5, -1.0], rtol=1e-5, atol=1e-5)
    np.testing.assert_allclose(ev.hidden["h"], x @ a, rtol=1e-5, atol=1e-5)


def test_cnn_export_all_layers(cnn_files) -> None:
    net, paths = cnn_files
    model = open_model(str(paths["onnx"]))
    assert model.input.units == 64 and model.input.shape == (1, 8, 8)
    assert model.feature_names()[8 * 3 + 4] == "x[0,3,4]"
    layers = model.layers()
    ops = [layer.op for layer in layers]
    # shape arithmetic of h.reshape(h.shape[0], -1) is not offered
    assert not {"Shape", "Gather", "Unsqueeze", "Concat", "Constant"} & set(ops)
    assert ops[:3] == ["Conv", "Relu", "MaxPool"]
    x = RNG.normal(size=(9, 64))
    ev = model.evaluate(x, capture=[layer.name for layer in layers])
    xt = torch.from_numpy(x.astype(np.float32)).reshape(9, 1, 8, 8)
    with torch.no_grad():
        conv = net.conv(xt)
        ref = net(xt)
    np.testing.assert_allclose(ev.outputs, ref.numpy(), rtol=1e-5, atol=1e-6)
    by_op = {layer.op: layer.name for layer in layers}
    np.testing.assert_allclose(ev.hidden[by_op["Conv"]], conv.reshape(9, -1), rtol=1e-5, atol=1e-5)
    relu = torch.relu(conv).reshape(9, -1).numpy()
    np.testing.assert_allclose(ev.hidden[by_op["Relu"]], relu, rtol=1e-5, atol=1e-5)
    for layer in layers:
        assert ev.hidden[layer.name].shape == (9, layer.units)


def test_signature_plain_when_not_a_terminal(ops_model: OnnxModel) -> None:
    buffer = io.StringIO()
    render_signature(model_signature(ops_model), Console(file=buffer, width=200))
    text = buffer.getvalue()
    assert "d = 16" in text and "Conv" in text and "(2, 4, 4)" in text
    assert max(len(line) for line in text.splitlines()) <= 80
    assert "\x1b[" not in text  # no escape codes
    assert "─" not in text and "│" not in text  # no borders
    assert all(line == line.rstrip() for line in text.splitlines())
    rows = [line.split() for line in text.splitlines() if line.startswith(("relu ", "gemm "))]
    assert rows == [["relu", "Relu", "(2,", "4,", "4)", "32", "yes"],
                    ["gemm", "Gemm", "(6,)", "6", "no"]]  # fmt: skip


def test_input_shape_override_checked(tmp_path) -> None:
    path = netbuild.linear_graph(tmp_path / "lin.onnx")
    assert OnnxModel(path, input_shape=(3,)).input.shape == (3,)
    with pytest.raises(UserError, match="does not match"):
        OnnxModel(path, input_shape=(4,))


# -- files and signatures netdim refuses ------------------------------------------------------


def test_truncated_onnx(tmp_path: Path, mlp_paths: dict[str, Path]) -> None:
    data = mlp_paths["onnx"].read_bytes()
    path = tmp_path / "cut.onnx"
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(UserError, match=r"truncated|damaged|invalid"):
        open_model(str(path))


def test_random_bytes_onnx(tmp_path: Path) -> None:
    with pytest.raises(UserError, match=r"ONNX"):
        open_model(str(_random_bytes(tmp_path / "noise.onnx")))


def test_unsupported_operator(tmp_path: Path) -> None:
    path = netbuild.unknown_op_graph(tmp_path / "custom.onnx")
    with pytest.raises(UserError, match=r"cannot be used.*operator.*Frobnicate"):
        open_model(str(path))


def test_two_input_onnx(tmp_path: Path) -> None:
    path = netbuild.two_input_graph(tmp_path / "two.onnx")
    with pytest.raises(UserError, match=r"2 input tensors \('a', 'b'\).*exactly one"):
        open_model(str(path))


def test_integer_input_onnx(tmp_path: Path) -> None:
    path = netbuild.linear_graph(tmp_path / "int.onnx", dtype=TensorProto.INT64)
    with pytest.raises(UserError, match=r"tensor\(int64\).*float, double and float16"):
        open_model(str(path))


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


def test_symbolic_feature_dims_need_input_shape(tmp_path: Path) -> None:
    from onnx import helper

    graph = helper.make_graph(
        [helper.make_node("Relu", ["x"], ["y"])],
        "sym",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", "F"])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", "F"])],
    )
    path = netbuild.save_onnx(graph, tmp_path / "sym.onnx")
    with pytest.raises(UserError, match=r"--input-shape"):
        open_model(str(path))
    assert open_model(str(path), input_shape=(4,)).input.units == 4
