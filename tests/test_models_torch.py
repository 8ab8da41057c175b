"""Torch backends: one network saved in every format gives the same numbers.

References are the eager Torch network the files were saved from (common
practice, no source); agreement across formats is to float32 rounding
(rtol 1e-5).
"""

from __future__ import annotations

import warnings

import netbuild
import numpy as np
import pytest
import torch

from audit.errors import UserError
from audit.models import Model, open_model
from audit.models.torch_model import ExportedModel, ModuleModel, ScriptModel, open_torch

RNG = np.random.default_rng(7)
MLP_CLASS = "netbuild:TinyMLP"


@pytest.fixture(scope="module")
def mlp(tmp_path_factory: pytest.TempPathFactory) -> tuple[torch.nn.Module, dict]:
    net = netbuild.seeded(netbuild.TinyMLP, seed=1)
    paths = netbuild.export_all(net, torch.zeros(4, 3), tmp_path_factory.mktemp("mlp"), "mlp")
    return net, paths


@pytest.fixture(scope="module")
def mlp_models(mlp) -> dict[str, Model]:
    _, paths = mlp
    models = {kind: open_model(str(path)) for kind, path in paths.items()
              if kind not in ("state_dict", "pickle")}  # fmt: skip
    models["state_dict"] = open_model(str(paths["state_dict"]), torch_class=MLP_CLASS)
    models["pickle"] = open_model(str(paths["pickle"]), trust=True)
    return models


def _eager(net: torch.nn.Module, x: np.ndarray, upto: int | None = None) -> np.ndarray:
    xt = torch.from_numpy(x.astype(np.float32))
    with torch.no_grad():
        out = net.net[:upto](xt) if upto is not None else net(xt)
    return out.numpy().astype(np.float64)


def test_formats_are_recognised(mlp_models) -> None:
    expected = {
        "onnx": "onnx",
        "onnx_fixed": "onnx",
        "torchscript": "torchscript",
        "pt2": "torch-export",
        "pt2_fixed": "torch-export",
        "state_dict": "state-dict",
        "pickle": "torch-module",
    }
    assert {kind: m.format for kind, m in mlp_models.items()} == expected
    for model in mlp_models.values():
        assert isinstance(model, Model)
        assert model.input.units == 3  # inferred from the first Linear or stored in the file
        assert model.output_names() == [f"{model.outputs[0].name}[0]", f"{model.outputs[0].name}[1]"]
    assert mlp_models["pt2_fixed"].batch_size == 4 and mlp_models["pt2"].batch_size is None
    assert mlp_models["onnx_fixed"].batch_size == 4


def test_same_outputs_in_every_format(mlp, mlp_models) -> None:
    net, _ = mlp
    x = RNG.normal(size=(11, 3))  # 11 rows: fixed-batch files run 3 chunks, the last padded
    ref = _eager(net, x)
    for kind, model in mlp_models.items():
        ev = model.evaluate(x)
        assert ev.outputs.dtype == np.float64, kind
        np.testing.assert_allclose(ev.outputs, ref, rtol=1e-5, atol=1e-6, err_msg=kind)


def test_same_hidden_activations_in_every_format(mlp, mlp_models) -> None:
    net, _ = mlp
    x = RNG.normal(size=(6, 3))
    tanh, relu = _eager(net, x, 2), _eager(net, x, 4)
    pre = _eager(net, x, 1)  # output of net.0 (Linear), before Tanh
    names = {
        "torchscript": ("net.1", "net.3", "net.0"),
        "state_dict": ("net.1", "net.3", "net.0"),
        "pickle": ("net.1", "net.3", "net.0"),
        "pt2": ("tanh", "relu", "linear"),
        "pt2_fixed": ("tanh", "relu", "linear"),
    }
    for kind, model in mlp_models.items():
        layers = model.layers()
        if kind.startswith("onnx"):  # tensor names chosen by the exporter: find them by op
            by_op: dict[str, str] = {}
            for layer in layers:
                by_op.setdefault(layer.op, layer.name)  # first of each op
            wanted = (by_op["Tanh"], by_op["Relu"], by_op["Gemm"])
        else:
            wanted = names[kind]
        info = {layer.name: layer for layer in layers}
        assert info[wanted[0]].activation and info[wanted[1]].activation, kind
        assert not info[wanted[2]].activation, kind
        assert all(info[w].shape == (5,) for w in wanted), kind
        ev = model.evaluate(x, capture=list(wanted))
        for name, ref in zip(wanted, (tanh, relu, pre), strict=True):
            np.testing.assert_allclose(ev.hidden[name], ref, rtol=1e-5, atol=1e-6, err_msg=kind)


def test_eager_and_script_layer_lists(mlp_models) -> None:
    for kind in ("torchscript", "state_dict"):
        layers = mlp_models[kind].layers()
        # the container net and the last Linear carry the model output: not hidden layers
        assert [(la.name, la.op) for la in layers] == [
            ("net.0", "Linear"), ("net.1", "Tanh"), ("net.2", "Linear"), ("net.3", "ReLU")
        ], kind  # fmt: skip


def test_input_shape_inference_and_override(tmp_path, mlp) -> None:
    net = netbuild.seeded(netbuild.TinyCNN, seed=2)
    paths = netbuild.export_all(net, torch.zeros(2, 1, 8, 8), tmp_path, "cnn")
    for kind in ("torchscript", "state_dict"):
        kwargs = {"torch_class": "netbuild:TinyCNN"} if kind == "state_dict" else {}
        with pytest.raises(UserError, match=r"--input-shape 1,8,8"):
            open_model(str(paths[kind]), **kwargs)
        model = open_model(str(paths[kind]), input_shape=(1, 8, 8), **kwargs)
        assert model.input.shape == (1, 8, 8) and model.input.units == 64
    exported = open_model(str(paths["pt2"]))  # .pt2 knows its input shape
    assert exported.input.shape == (1, 8, 8)
    with pytest.raises(UserError, match="does not match"):
        open_model(str(paths["pt2"]), input_shape=(64,))
    with pytest.raises(UserError, match=r"--input-shape"):
        open_model(str(paths["torchscript"]), input_shape=(5,))  # runs, and fails to


def test_cnn_all_layers_every_format(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyCNN, seed=5)
    paths = netbuild.export_all(net, torch.zeros(2, 1, 8, 8), tmp_path, "cnn")
    x = RNG.normal(size=(7, 64))
    xt = torch.from_numpy(x.astype(np.float32)).reshape(7, 1, 8, 8)
    with torch.no_grad():
        ref, conv = net(xt).numpy(), net.conv(xt).reshape(7, -1).numpy()
    conv_name = {"onnx": "Conv", "torchscript": "conv", "state_dict": "conv", "pt2": "conv2d"}
    for kind, pick in conv_name.items():
        kwargs = {"torch_class": "netbuild:TinyCNN"} if kind == "state_dict" else {}
        model = open_model(str(paths[kind]), input_shape=(1, 8, 8), **kwargs)
        layers = model.layers()
        assert layers, kind
        ev = model.evaluate(x, capture=[layer.name for layer in layers])
        np.testing.assert_allclose(ev.outputs, ref, rtol=1e-5, atol=1e-6, err_msg=kind)
        for layer in layers:
            assert ev.hidden[layer.name].shape == (7, layer.units), (kind, layer)
        name = next(la.name for la in layers if pick in (la.name, la.op))
        assert dict((la.name, la.shape) for la in layers)[name] == (2, 8, 8)
        np.testing.assert_allclose(ev.hidden[name], conv, rtol=1e-5, atol=1e-5, err_msg=kind)


def test_inplace_activation_does_not_alter_captured_input(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=4, inplace=True)
    paths = netbuild.export_all(net, torch.zeros(3, 3), tmp_path, "inplace")
    x = RNG.normal(size=(20, 3))
    with torch.no_grad():
        before = net.net[:3](torch.from_numpy(x.astype(np.float32))).numpy()
    assert (before < 0).any()  # else the check below proves nothing
    script = open_model(str(paths["torchscript"]))
    eager = open_model(str(paths["state_dict"]), torch_class=MLP_CLASS,
                       torch_arguments={"inplace": True})  # fmt: skip
    for model in (script, eager):
        ev = model.evaluate(x, capture=["net.2", "net.3"])
        np.testing.assert_allclose(ev.hidden["net.2"], before, rtol=1e-5, atol=1e-6)
        np.testing.assert_allclose(ev.hidden["net.3"], np.maximum(before, 0), rtol=1e-5, atol=1e-6)


def test_module_called_twice_is_not_a_layer(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TwiceReLU)
    paths = netbuild.export_all(net, torch.zeros(2, 3), tmp_path, "twice")
    for model in (
        open_model(str(paths["state_dict"]), torch_class="netbuild:TwiceReLU"),
        open_model(str(paths["torchscript"])),
    ):
        names = [layer.name for layer in model.layers()]
        assert "act" not in names and "a" in names, (model.format, names)
    eager = open_model(str(paths["state_dict"]), torch_class="netbuild:TwiceReLU")
    eager.layers()
    assert any("act" in note for note in eager.notices)


def test_double_precision_model(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=6).double()
    path = tmp_path / "double.pt"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)
        torch.jit.script(net).save(str(path))
    model = open_torch(path)
    assert model.input.dtype == "float64"
    x = RNG.normal(size=(5, 3))
    with torch.no_grad():
        ref = net(torch.from_numpy(x)).numpy()
    np.testing.assert_allclose(model.evaluate(x).outputs, ref, rtol=1e-12)


def test_backend_classes(mlp_models) -> None:
    assert isinstance(mlp_models["torchscript"], ScriptModel)
    assert isinstance(mlp_models["pt2"], ExportedModel)
    assert isinstance(mlp_models["state_dict"], ModuleModel)


def test_unknown_capture_name(mlp_models) -> None:
    for kind in ("torchscript", "pt2", "state_dict"):
        with pytest.raises(UserError, match=r"no probe-able layer 'net\.9'"):
            mlp_models[kind].evaluate(np.zeros((2, 3)), capture=["net.9"])
