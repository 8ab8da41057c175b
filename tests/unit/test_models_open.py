"""The dispatcher: ``open_model`` picks the backend by suffix and content, and every format
of one network gives the same numbers.

References are the eager Torch network the files were saved from (common practice, no
source); agreement across formats is to float32 rounding (rtol 1e-5). Error cases are built
here; the assertions check the error type and the words a user needs to fix the problem.
"""

from __future__ import annotations

import pickle
from pathlib import Path

import netbuild
import numpy as np
import pytest
import torch

from audit.errors import UserError
from audit.models import (
    Model,
    OnnxModel,
    PythonModel,
    feature_count,
    is_python_reference,
    open_model,
    open_torch,
    reopen,
)

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


# -- dispatch ---------------------------------------------------------------------------------


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
        assert model.inputs[0].units == 3  # inferred from the first Linear or stored in the file
        assert model.output_names() == [f"{model.outputs[0].name}[0]", f"{model.outputs[0].name}[1]"]
    assert mlp_models["pt2_fixed"].batch_size == 4 and mlp_models["pt2"].batch_size is None
    assert mlp_models["onnx_fixed"].batch_size == 4


@pytest.mark.parametrize("suffix", [".onnx", ".pt", ".pt2"])
def test_missing_file(tmp_path: Path, suffix: str) -> None:
    path = tmp_path / f"absent{suffix}"
    with pytest.raises(UserError, match="does not exist"):
        open_model(str(path))
    opener = OnnxModel if suffix == ".onnx" else open_torch
    with pytest.raises(UserError, match="does not exist"):
        opener(path)


def test_folder(tmp_path: Path) -> None:
    folder = tmp_path / "model.onnx"
    folder.mkdir()
    with pytest.raises(UserError, match="is a folder"):
        open_model(str(folder))
    with pytest.raises(UserError, match="is a folder"):
        OnnxModel(folder)
    with pytest.raises(UserError, match="is a folder"):
        open_torch(folder)


@pytest.mark.parametrize("suffix", [".onnx", ".pt", ".pt2"])
def test_empty_file(tmp_path: Path, suffix: str) -> None:
    path = tmp_path / f"empty{suffix}"
    path.touch()
    with pytest.raises(UserError, match=r"empty \(0 bytes\)"):
        open_model(str(path))


def test_unknown_suffix(tmp_path: Path) -> None:
    path = tmp_path / "model.h5"
    path.write_bytes(b"\x89HDF")
    with pytest.raises(UserError, match="does not know the model format"):
        open_model(str(path))


def test_open_model_dispatch_passes_input_shape(tmp_path) -> None:
    path = netbuild.linear_graph(tmp_path / "lin.onnx")
    assert open_model(str(path), input_shape=(3,)).inputs[0].units == 3


def test_reopen_with_shapes_per_tensor(tmp_path) -> None:
    path = netbuild.symbolic_pair_graph(tmp_path / "pair.onnx")
    model = open_model(str(path), input_shape={"b": [4]})
    # the open arguments travel to other processes: plain, picklable values
    args = pickle.loads(pickle.dumps(model.open_args))
    assert args["input_shape"] == {"b": (4,)} and Path(args["ref"]).is_absolute()
    again = reopen(args)
    assert again is not model and [t.shape for t in again.inputs] == [(3,), (4,)]
    x = RNG.normal(size=(3, 7))
    np.testing.assert_array_equal(again.evaluate(x).outputs, model.evaluate(x).outputs)


def test_python_reference_is_opened_as_a_python_model() -> None:
    assert is_python_reference("clifuncs:two_outputs") and not is_python_reference("model.onnx")
    model = open_model("clifuncs:two_outputs", dim=2)
    assert isinstance(model, PythonModel) and feature_count(model) == 2


# -- every format, the same numbers ----------------------------------------------------------


def test_same_outputs_in_every_format(mlp, mlp_models) -> None:
    net, _ = mlp
    x = RNG.normal(size=(11, 3))  # 11 rows: fixed-batch files run 3 chunks, the last padded
    ref = _eager(net, x)
    for kind, model in mlp_models.items():
        ev = model.evaluate(x)
        assert ev.outputs.dtype == np.float32, kind  # a float32 network, in its own precision
        np.testing.assert_allclose(ev.outputs, ref, rtol=1e-5, atol=1e-6, err_msg=kind)


def test_same_hidden_activations_in_every_format(mlp, mlp_models) -> None:
    net, _ = mlp
    x = RNG.normal(size=(6, 3))
    tanh, relu = _eager(net, x, 2), _eager(net, x, 4)
    pre = _eager(net, x, 1)  # output of net.0 (Linear), before Tanh
    wanted = ("net.1", "net.3", "net.0")  # one name in every format: the module path
    for kind, model in mlp_models.items():
        layers = model.layers()
        info = {layer.name: layer for layer in layers}
        assert [la.name for la in layers] == ["net.0", "net.1", "net.2", "net.3"], kind
        assert info["net.1"].op == "tanh" and info["net.3"].op == "relu", kind
        assert info[wanted[0]].activation and info[wanted[1]].activation, kind
        assert not info[wanted[2]].activation, kind
        assert all(info[w].shape == (5,) for w in wanted), kind
        ev = model.evaluate(x, capture=list(wanted))
        for name, ref in zip(wanted, (tanh, relu, pre), strict=True):
            np.testing.assert_allclose(ev.hidden[name], ref, rtol=1e-5, atol=1e-6, err_msg=kind)


def test_cnn_all_layers_every_format(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyCNN, seed=5)
    paths = netbuild.export_all(net, torch.zeros(2, 1, 8, 8), tmp_path, "cnn")
    x = RNG.normal(size=(7, 64))
    xt = torch.from_numpy(x.astype(np.float32)).reshape(7, 1, 8, 8)
    with torch.no_grad():
        ref, conv = net(xt).numpy(), net.conv(xt).reshape(7, -1).numpy()
    for kind in ("onnx", "torchscript", "state_dict", "pt2"):
        kwargs = {"torch_class": "netbuild:TinyCNN"} if kind == "state_dict" else {}
        model = open_model(str(paths[kind]), input_shape=(1, 8, 8), **kwargs)
        layers = model.layers()
        assert layers, kind
        ev = model.evaluate(x, capture=[layer.name for layer in layers])
        np.testing.assert_allclose(ev.outputs, ref, rtol=1e-5, atol=1e-6, err_msg=kind)
        for layer in layers:
            assert ev.hidden[layer.name].shape == (7, layer.units), (kind, layer)
        assert [la.name for la in layers][:3] == ["conv", "act", "pool"], kind  # the same in every format
        assert dict((la.name, la.shape) for la in layers)["conv"] == (2, 8, 8)
        np.testing.assert_allclose(ev.hidden["conv"], conv, rtol=1e-5, atol=1e-5, err_msg=kind)


def test_module_called_twice_is_numbered_in_every_format(tmp_path) -> None:
    net = netbuild.seeded(netbuild.SharedAct, seed=3)
    paths = netbuild.export_all(net, torch.zeros(4, 3), tmp_path, "shared")
    x = RNG.normal(size=(6, 3))
    with torch.no_grad():
        first = torch.tanh(net.a(torch.from_numpy(x.astype(np.float32))))
        second = torch.tanh(net.b(first))
    for kind in ("onnx", "torchscript", "pt2", "state_dict"):
        kwargs = {"torch_class": "netbuild:SharedAct"} if kind == "state_dict" else {}
        model = open_model(str(paths[kind]), **kwargs)
        assert [la.name for la in model.layers()] == ["a", "act", "b", "act#2"], kind
        ev = model.evaluate(x, capture=["act", "act#2"])
        np.testing.assert_allclose(ev.hidden["act"], first.numpy(), rtol=1e-5, atol=1e-6, err_msg=kind)
        np.testing.assert_allclose(ev.hidden["act#2"], second.numpy(), rtol=1e-5, atol=1e-6, err_msg=kind)


def test_zoo_models_have_one_layer_list_in_every_format() -> None:
    zoo = Path(__file__).resolve().parents[2] / "model_zoo"
    suffixes = (".onnx", ".pt2", ".pt")
    names = {s: [la.name for la in open_model(str(zoo / f"greenhouse_v1{s}")).layers()] for s in suffixes}
    assert names[".onnx"] == names[".pt2"] == names[".pt"]
    body = ["body.0", "body.1", "body.2", "body.3", "body.4"]
    assert names[".onnx"] == ["scale_in/sub", "scale_in", *body, "scale_out/mul"]
    # Φ(z) = (1 + erf(z / √2)) / 2 is one function, traced (scalar constants) or exported: the model's output
    for suffix in (".onnx", ".pt"):
        assert [la.name for la in open_model(str(zoo / f"ridge_phi{suffix}")).layers()] == ["project"], suffix


def test_running_out_of_memory_while_probing_names_the_input_shape(tmp_path, monkeypatch):
    """A huge `input_shape` makes the probe's rows too large: the message says so, not that the file is damaged."""
    import audit.models.onnx as onnx_backend

    path = tmp_path / "m.onnx"
    path.write_bytes(b"not read")

    def no_memory(*args, **kwargs):
        raise MemoryError("Unable to allocate 37.3 TiB for an array")

    monkeypatch.setattr(onnx_backend, "OnnxModel", no_memory)
    with pytest.raises(UserError, match=r"ran out of memory while probing.*`input_shape` \(100000000, 100000\)") as e:
        open_model(str(path), input_shape=(100000000, 100000))
    assert "damaged" not in e.value.message
