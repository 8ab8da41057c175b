"""``open_torch``: the backend class follows the file's content; input shapes are read,
inferred or given.

References: the Torch network the files were saved from (common practice, no source).
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import netbuild
import numpy as np
import pytest
import torch

from audit.errors import UserError
from audit.models import open_model
from audit.models.torch import SHAPE_FILE, ExportedModel, ModuleModel, ScriptModel, open_torch

RNG = np.random.default_rng(11)


def test_backend_classes(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=1)
    paths = netbuild.export_all(net, torch.zeros(4, 3), tmp_path, "mlp")
    assert isinstance(open_torch(paths["torchscript"]), ScriptModel)
    assert isinstance(open_torch(paths["pt2"]), ExportedModel)
    assert isinstance(open_torch(paths["state_dict"], torch_class="netbuild:TinyMLP"), ModuleModel)


def test_input_shape_inference_and_override(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyCNN, seed=2)
    paths = netbuild.export_all(net, torch.zeros(2, 1, 8, 8), tmp_path, "cnn")
    for kind in ("torchscript", "state_dict"):
        kwargs = {"torch_class": "netbuild:TinyCNN"} if kind == "state_dict" else {}
        with pytest.raises(UserError, match=r"`input_shape` 8 or 1,8,8"):
            open_model(str(paths[kind]), **kwargs)
        model = open_model(str(paths[kind]), input_shape=(1, 8, 8), **kwargs)
        assert model.inputs[0].shape == (1, 8, 8) and model.inputs[0].units == 64
    exported = open_model(str(paths["pt2"]))  # .pt2 knows its input shape
    assert exported.inputs[0].shape == (1, 8, 8)
    with pytest.raises(UserError, match="does not match"):
        open_model(str(paths["pt2"]), input_shape=(64,))
    with pytest.raises(UserError, match=r"`input_shape`"):
        open_model(str(paths["torchscript"]), input_shape=(5,))  # runs, and fails to


@pytest.fixture(scope="module")
def pair(tmp_path_factory: pytest.TempPathFactory) -> tuple[torch.nn.Module, dict]:
    net = netbuild.seeded(netbuild.TwoShapes, seed=9)
    example = (torch.zeros(4, 3), torch.zeros(4, 2, 2))
    return net, netbuild.export_all(net, example, tmp_path_factory.mktemp("pair"), "pair")


PAIR_SHAPES = {"a": (3,), "b": (2, 2)}


def _pair_eager(net: torch.nn.Module, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Outputs and the Tanh layer of TwoShapes, its inputs cut from the rows by hand."""
    a = torch.from_numpy(x[:, :3].astype(np.float32))
    b = torch.from_numpy(x[:, 3:].astype(np.float32)).reshape(len(x), 2, 2)
    with torch.no_grad():
        return net(a, b).numpy(), torch.tanh(net.fa(a) + net.fb(b.reshape(len(x), 4))).numpy()


def test_two_input_torch_files(tmp_path: Path) -> None:
    net = netbuild.seeded(netbuild.TwoInputs)
    script, program = tmp_path / "two.pt", tmp_path / "two.pt2"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.jit.script(net).save(str(script))
        example = (torch.zeros(2, 3), torch.zeros(2, 3))
        torch.export.save(torch.export.export(net, example), str(program))
    with pytest.raises(UserError, match=r"forward takes the tensors 'a', 'b'.*input_shape=\{'a'"):
        open_model(str(script))
    x = RNG.normal(size=(2, 6))  # the program was exported with a batch of 2
    with torch.no_grad():
        ref = net(torch.from_numpy(x[:, :3]).float(), torch.from_numpy(x[:, 3:]).float()).numpy()
    for model in (open_model(str(script), input_shape={"a": (3,), "b": (3,)}), open_model(str(program))):
        assert [t.name for t in model.inputs] == ["a", "b"], model.format
        assert model.feature_names()[2:4] == ["a[2]", "b[0]"], model.format
        np.testing.assert_allclose(model.evaluate(x).outputs, ref, rtol=1e-5, atol=1e-6, err_msg=model.format)


@pytest.mark.parametrize("kind", ["torchscript", "pt2", "pt2_fixed", "state_dict", "pickle"])
def test_two_inputs_of_different_shapes(pair, kind: str) -> None:
    net, paths = pair
    kwargs: dict = {"input_shape": PAIR_SHAPES} if kind in ("torchscript", "state_dict", "pickle") else {}
    if kind == "state_dict":
        kwargs["torch_class"] = "netbuild:TwoShapes"
    if kind == "pickle":
        kwargs["trust"] = True
    model = open_model(str(paths[kind]), **kwargs)
    assert [(t.name, t.shape, t.dtype) for t in model.inputs] == [("a", (3,), "float32"), ("b", (2, 2), "float32")]
    assert model.feature_names() == ["a[0]", "a[1]", "a[2]", "b[0,0]", "b[0,1]", "b[1,0]", "b[1,1]"]
    x = RNG.normal(size=(10, 7))  # pt2_fixed: chunks of 4, the last padded, in both inputs
    ref, tanh = _pair_eager(net, x)
    act = "act"  # the module path, in every format
    ev = model.evaluate(x, capture=[act])
    assert ev.outputs.dtype == np.float32, kind
    np.testing.assert_allclose(ev.outputs, ref, rtol=1e-5, atol=1e-6, err_msg=kind)
    np.testing.assert_allclose(ev.hidden[act], tanh, rtol=1e-5, atol=1e-6, err_msg=kind)


def test_shapes_of_several_inputs_must_be_named(pair) -> None:
    _, paths = pair
    with pytest.raises(UserError, match=r"2 input tensors \('a', 'b'\).*ambiguous"):
        open_model(str(paths["torchscript"]), input_shape=(3,))
    with pytest.raises(UserError, match=r"tensor 'c'.*its input tensors are 'a', 'b'"):
        open_model(str(paths["torchscript"]), input_shape={"a": (3,), "c": (2, 2)})
    with pytest.raises(UserError, match=r"does not record the shape of 'b'"):
        open_model(str(paths["state_dict"]), torch_class="netbuild:TwoShapes", input_shape={"a": (3,)})
    with pytest.raises(UserError, match=r"given for 'b'.*does not match"):
        open_model(str(paths["pt2"]), input_shape={"b": (4,)})


def test_torchscript_records_the_shapes_of_several_inputs(tmp_path: Path, pair) -> None:
    net, _ = pair
    path = tmp_path / "recorded.pt"
    record = {SHAPE_FILE: json.dumps({"input_shape": {"a": [3], "b": [2, 2]}})}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.jit.script(net).save(str(path), _extra_files=record)
    model = open_model(str(path))
    assert [t.shape for t in model.inputs] == [(3,), (2, 2)]
    x = RNG.normal(size=(5, 7))
    np.testing.assert_allclose(model.evaluate(x).outputs, _pair_eager(net, x)[0], rtol=1e-5, atol=1e-6)
