"""The common part of the Torch backends: precision, capture checks.

References: the Torch network the files were saved from (common practice, no source).
"""

from __future__ import annotations

import warnings

import netbuild
import numpy as np
import pytest
import torch

from audit.errors import UserError
from audit.models import Model, open_model, open_torch

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
    assert model.input.dtype == "float64"
    x = RNG.normal(size=(5, 3))
    with torch.no_grad():
        ref = net(torch.from_numpy(x)).numpy()
    np.testing.assert_allclose(model.evaluate(x).outputs, ref, rtol=1e-12)


def test_unknown_capture_name(mlp_models) -> None:
    for kind in ("torchscript", "pt2", "state_dict"):
        with pytest.raises(UserError, match=r"no probe-able layer 'net\.9'"):
            mlp_models[kind].evaluate(np.zeros((2, 3)), capture=["net.9"])
