"""The common part of the Torch backends: precision kept, outputs left out, capture checks.

References: the Torch network the files were saved from (common practice, no source).
"""

from __future__ import annotations

import warnings

import netbuild
import numpy as np
import pytest
import torch

from audit.errors import UserError
from audit.models import Model, open_model, open_torch, row_dtype

RNG = np.random.default_rng(7)


@pytest.fixture(scope="module")
def mlp_models(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Model]:
    net = netbuild.seeded(netbuild.TinyMLP, seed=1)
    paths = netbuild.export_all(net, torch.zeros(4, 3), tmp_path_factory.mktemp("mlp"), "mlp")
    models = {kind: open_model(str(paths[kind])) for kind in ("torchscript", "pt2")}
    models["state_dict"] = open_model(str(paths["state_dict"]), torch_class="netbuild:TinyMLP")
    return models


def test_double_precision_model(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=6).double()
    path = tmp_path / "double.pt"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)
        torch.jit.script(net).save(str(path))
    model = open_torch(path)
    assert model.inputs[0].dtype == "float64" and row_dtype(model) is np.float64
    x = RNG.normal(size=(5, 3))
    with torch.no_grad():
        ref = net(torch.from_numpy(x)).numpy()
    ev = model.evaluate(x)
    assert ev.outputs.dtype == np.float64
    np.testing.assert_allclose(ev.outputs, ref, rtol=1e-12)


def test_unknown_capture_name(mlp_models) -> None:
    for kind in ("torchscript", "pt2", "state_dict"):
        with pytest.raises(UserError, match=r"no probe-able layer 'net\.9'"):
            mlp_models[kind].evaluate(np.zeros((2, 3)), capture=["net.9"])


def test_float32_network_keeps_float32(mlp_models) -> None:
    x = RNG.normal(size=(4, 3))
    captures = {"torchscript": "net.1", "pt2": "net.1", "state_dict": "net.1"}
    for kind, model in mlp_models.items():
        assert row_dtype(model) is np.float32, kind
        ev = model.evaluate(x, capture=[captures[kind]])
        assert ev.outputs.dtype == np.float32 and ev.hidden[captures[kind]].dtype == np.float32, kind
        assert model.outputs[0].dtype == "float32", kind


def _scripted(tmp_path, net: torch.nn.Module, name: str):
    path = tmp_path / name
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.jit.script(net).save(str(path))
    return open_torch(path)


def test_half_precision_network_returns_float16(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=6).half()
    model = _scripted(tmp_path, net, "half.pt")
    assert model.inputs[0].dtype == "float16" and row_dtype(model) is np.float32
    x = RNG.normal(size=(5, 3))
    ev = model.evaluate(x, capture=["net.1"])
    assert ev.outputs.dtype == np.float16 and ev.hidden["net.1"].dtype == np.float16
    with torch.no_grad():  # the same float16 computation, run directly
        ref = net(torch.from_numpy(x.astype(np.float16))).numpy()
    np.testing.assert_array_equal(ev.outputs, ref)


def test_bfloat16_network_returns_float32(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=6).to(torch.bfloat16)
    model = _scripted(tmp_path, net, "bf16.pt")
    # numpy has no bfloat16: rows are float64 and the results come back as float32
    assert model.inputs[0].dtype == "bfloat16" and row_dtype(model) is np.float64
    x = RNG.normal(size=(5, 3))
    ev = model.evaluate(x, capture=["net.1"])
    assert ev.outputs.dtype == np.float32 and ev.hidden["net.1"].dtype == np.float32
    with torch.no_grad():  # the same bfloat16 computation, run directly
        ref = net(torch.from_numpy(x.astype(np.float32)).to(torch.bfloat16)).float().numpy()
    np.testing.assert_array_equal(ev.outputs, ref)


def test_integer_output_left_out_with_a_notice(tmp_path) -> None:
    net = netbuild.seeded(netbuild.LabelAndScore)
    paths = netbuild.export_all(net, torch.zeros(2, 3), tmp_path, "label")
    x = RNG.normal(size=(6, 3))
    with torch.no_grad():
        scores = net.lin(torch.from_numpy(x.astype(np.float32))).numpy()
    models = [open_model(str(paths[kind])) for kind in ("torchscript", "pt2")]
    models.append(open_model(str(paths["state_dict"]), torch_class="netbuild:LabelAndScore"))
    for model in models:
        assert [(o.name, o.shape) for o in model.outputs] == [("y1", (2,))], model.format
        assert model.output_names() == ["y1[0]", "y1[1]"]
        assert any("'y0' (int64)" in note and "left out" in note for note in model.notices), model.format
        np.testing.assert_allclose(model.evaluate(x).outputs, scores, rtol=1e-5, atol=1e-6, err_msg=model.format)


class _LabelOnly(torch.nn.Module):
    def __init__(self) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(3, 2)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.lin(x).argmax(dim=1, keepdim=True)


def test_only_integer_outputs_refused(tmp_path) -> None:
    with pytest.raises(UserError, match=r"output 'y' .* holds integers \(int64\).*scores"):
        _scripted(tmp_path, netbuild.seeded(_LabelOnly), "label.pt")


def test_rows_that_depend_on_the_batch_are_refused_in_every_torch_format(tmp_path) -> None:
    net = netbuild.seeded(netbuild.BatchCentred)
    script = _scripted_path(tmp_path, net, "centred.pt")
    state = tmp_path / "centred_state.pt"
    torch.save(net.state_dict(), state)
    program = tmp_path / "centred.pt2"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        dim = torch.export.Dim("batch")
        torch.export.save(torch.export.export(net, (torch.zeros(4, 3),), dynamic_shapes=({0: dim},)), str(program))
    for path, kwargs in ((script, {}), (program, {}), (state, {"torch_class": "netbuild:BatchCentred"})):
        with pytest.raises(UserError, match=r"depend on the rest of the batch.*normalisation across rows"):
            open_model(str(path), **kwargs)


def test_randomness_left_on_is_refused(tmp_path) -> None:
    net = netbuild.seeded(netbuild.Dropped).train()
    program = tmp_path / "dropped.pt2"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        dim = torch.export.Dim("batch")
        torch.export.save(torch.export.export(net, (torch.zeros(4, 3),), dynamic_shapes=({0: dim},)), str(program))
    with pytest.raises(UserError, match=r"same batch is evaluated twice.*dropout.*model\.eval\(\)"):
        open_model(str(program))


def _scripted_path(tmp_path, net: torch.nn.Module, name: str):
    path = tmp_path / name
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.jit.script(net).save(str(path))
    return path
