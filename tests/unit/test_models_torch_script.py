"""TorchScript archives: layers found by graph surgery, named like eager submodules.

References: the eager Torch network the archive was saved from (common practice, no
source); agreement to float32 rounding.
"""

from __future__ import annotations

from typing import Optional

import netbuild
import numpy as np
import pytest
import torch

from audit.errors import UserError
from audit.models import open_model

RNG = np.random.default_rng(7)


def test_script_layer_list(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=1)
    paths = netbuild.export_all(net, torch.zeros(4, 3), tmp_path, "mlp")
    layers = open_model(str(paths["torchscript"])).layers()
    # the container net and the last Linear carry the model output: not hidden layers
    assert [(la.name, la.op) for la in layers] == [
        ("net.0", "linear"), ("net.1", "tanh"), ("net.2", "linear"), ("net.3", "relu")
    ]  # fmt: skip


def test_inplace_activation_does_not_alter_captured_input(tmp_path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=4, inplace=True)
    paths = netbuild.export_all(net, torch.zeros(3, 3), tmp_path, "inplace")
    x = RNG.normal(size=(20, 3))
    with torch.no_grad():
        before = net.net[:3](torch.from_numpy(x.astype(np.float32))).numpy()
    assert (before < 0).any()  # else the check below proves nothing
    model = open_model(str(paths["torchscript"]))
    ev = model.evaluate(x, capture=["net.2", "net.3"])
    np.testing.assert_allclose(ev.hidden["net.2"], before, rtol=1e-5, atol=1e-6)
    np.testing.assert_allclose(ev.hidden["net.3"], np.maximum(before, 0), rtol=1e-5, atol=1e-6)


def test_module_called_twice_each_call_is_a_layer(tmp_path) -> None:
    # act(b(act(a(x)))): the first call of act is a layer, the second is the model's output
    net = netbuild.seeded(netbuild.TwiceReLU)
    paths = netbuild.export_all(net, torch.zeros(2, 3), tmp_path, "twice")
    model = open_model(str(paths["torchscript"]))
    assert [layer.name for layer in model.layers()] == ["a", "act", "b"], model.format
    x = RNG.normal(size=(5, 3))
    with torch.no_grad():
        first = torch.relu(net.a(torch.from_numpy(x.astype(np.float32)))).numpy()
    np.testing.assert_allclose(model.evaluate(x, capture=["act"]).hidden["act"], first, rtol=1e-5, atol=1e-6)


class _Defaulted(torch.nn.Module):
    """A forward with extra arguments that have defaults (a scale, an optional bias, a flag)."""

    def __init__(self) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(3, 2)

    def forward(self, x, scale: float = 2.0, bias: Optional[torch.Tensor] = None, flag: bool = True):  # noqa: UP045
        y = torch.tanh(self.lin(x)) * scale
        if bias is not None:
            y = y + bias
        return y if flag else -y


class _Required(torch.nn.Module):
    def __init__(self) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(3, 2)

    def forward(self, x, k: int):
        return self.lin(x) * k


def test_arguments_with_defaults_keep_them(tmp_path) -> None:
    net = netbuild.seeded(_Defaulted, seed=2)
    path = tmp_path / "defaulted.pt"
    torch.jit.script(net).save(str(path))
    model = open_model(str(path))
    assert [t.name for t in model.inputs] == ["x"] and model.feature_names() == ["x[0]", "x[1]", "x[2]"]
    assert any("'scale' = 2.0" in n and "'bias' = None" in n and "'flag' = True" in n for n in model.notices)
    x = RNG.normal(size=(9, 3))
    ev = model.evaluate(x, capture=["lin"])
    with torch.no_grad():  # the eager network called with its defaults
        xt = torch.from_numpy(x.astype(np.float32))
        np.testing.assert_allclose(ev.outputs, net(xt).numpy(), rtol=1e-5, atol=1e-6)
        np.testing.assert_allclose(ev.hidden["lin"], net.lin(xt).numpy(), rtol=1e-5, atol=1e-6)


def test_an_argument_without_a_default_that_is_not_a_tensor_is_refused(tmp_path) -> None:
    path = tmp_path / "required.pt"
    torch.jit.script(netbuild.seeded(_Required)).save(str(path))
    with pytest.raises(UserError, match=r"argument 'k' .* has type int; netdim feeds tensors only"):
        open_model(str(path))


class _Branch(torch.nn.Module):
    """A submodule called only inside an ``if`` of the forward (a switch left off)."""

    def __init__(self) -> None:
        super().__init__()
        self.a, self.b, self.c = torch.nn.Linear(3, 4), torch.nn.Linear(4, 4), torch.nn.Linear(4, 2)
        self.use_b: bool = False

    def forward(self, x):
        h = torch.relu(self.a(x))
        if self.use_b:
            h = torch.tanh(self.b(h))
        return self.c(h)


def test_modules_inside_a_branch_are_named_in_a_notice(tmp_path) -> None:
    path = tmp_path / "branch.pt"
    net = netbuild.seeded(_Branch, seed=3)
    torch.jit.script(net).save(str(path))
    model = open_model(str(path))
    names = [layer.name for layer in model.layers()]
    assert "a" in names and "b" not in names
    assert any("inside an `if` or a loop" in n and "'b'" in n for n in model.notices), model.notices
    x = RNG.normal(size=(6, 3))
    with torch.no_grad():
        np.testing.assert_allclose(model.evaluate(x).outputs, net(torch.from_numpy(x.astype(np.float32))).numpy(),
                                   rtol=1e-5, atol=1e-6)  # fmt: skip
    plain = netbuild.export_all(netbuild.seeded(netbuild.TinyMLP, seed=1), torch.zeros(4, 3), tmp_path, "mlp")
    plain_model = open_model(str(plain["torchscript"]))
    plain_model.layers()
    assert not any("inside an `if`" in n for n in plain_model.notices)
