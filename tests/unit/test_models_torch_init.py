"""``open_torch``: the backend class follows the file's content; input shapes are read,
inferred or given.

References: the Torch network the files were saved from (common practice, no source).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import netbuild
import pytest
import torch

from audit.errors import UserError
from audit.models import open_model
from audit.models.torch import ExportedModel, ModuleModel, ScriptModel, open_torch


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


def test_two_input_torch_files(tmp_path: Path) -> None:
    net = netbuild.seeded(netbuild.TwoInputs)
    script, program = tmp_path / "two.pt", tmp_path / "two.pt2"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.jit.script(net).save(str(script))
        example = (torch.zeros(2, 3), torch.zeros(2, 3))
        torch.export.save(torch.export.export(net, example), str(program))
    with pytest.raises(UserError, match="takes 2 inputs"):
        open_model(str(script))
    with pytest.raises(UserError, match="takes 2 inputs"):
        open_model(str(program))
