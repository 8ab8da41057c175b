"""``netdim layers``: one name per layer in every format, and the format's own tensor as a detail.

References: the layer names follow the naming rule of audit/models/graph.py for the
network built here (its module paths); the tensor names are those the exporters wrote
(read from the models' own LayerInfo).
"""

from __future__ import annotations

import netbuild
import pytest
import torch

from audit.cli import main
from audit.models import open_model


@pytest.fixture(scope="module")
def paths(tmp_path_factory: pytest.TempPathFactory):
    net = netbuild.seeded(netbuild.Activations, seed=1)
    return netbuild.export_all(net, torch.zeros(4, 4), tmp_path_factory.mktemp("layers"), "acts")


def _listed(capsys, path) -> list[str]:
    assert main(["layers", str(path)]) == 0
    out = capsys.readouterr().out
    table = out.split("Probe-able layers")[1].splitlines()[2:]
    return [line.split()[0] for line in table if line.strip() and not line[0].isdigit()][:14]


def test_layers_command_shows_one_name_in_every_format(paths, capsys) -> None:
    names = {kind: _listed(capsys, paths[kind]) for kind in ("onnx", "pt2", "torchscript")}
    assert names["onnx"] == names["pt2"] == names["torchscript"]
    assert names["onnx"][:4] == ["fc.0", "gelu", "fc.1", "gelu_tanh"]


def test_the_format_tensor_is_kept_with_every_layer(paths) -> None:
    onnx = {la.name: la.tensor for la in open_model(str(paths["onnx"])).layers()}
    pt2 = {la.name: la.tensor for la in open_model(str(paths["pt2"])).layers()}
    assert onnx["gelu"] == "/gelu/Mul_1_output_0"  # the last node of the exporter's GELU
    assert pt2["gelu"] == "gelu" and pt2["fc.0"] == "linear"


def test_layers_command_shows_the_tensor_detail(paths, capsys) -> None:
    assert main(["layers", str(paths["onnx"])]) == 0
    assert "/gelu/Mul_1_output_0" in capsys.readouterr().out
