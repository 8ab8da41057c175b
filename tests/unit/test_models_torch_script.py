"""TorchScript archives: layers found by graph surgery, named like eager submodules.

References: the eager Torch network the archive was saved from (common practice, no
source); agreement to float32 rounding.
"""

from __future__ import annotations

import netbuild
import numpy as np
import torch

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
