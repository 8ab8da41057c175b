"""Every bad model file gives a UserError whose message names the problem.

Common practice, no source: each case is built here, the assertion checks the
error type and the words a user needs to fix the problem.
"""

from __future__ import annotations

import os
import warnings
from pathlib import Path

import netbuild
import pytest
import torch
from onnx import TensorProto

from audit.errors import UserError
from audit.models import OnnxModel, open_model
from audit.models.torch_model import open_torch


@pytest.fixture(scope="module")
def mlp_paths(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    net = netbuild.seeded(netbuild.TinyMLP, seed=0)
    return netbuild.export_all(net, torch.zeros(2, 3), tmp_path_factory.mktemp("err"), "mlp")


def _random_bytes(path: Path, size: int = 4096) -> Path:
    path.write_bytes(os.urandom(size))
    return path


# -- files that are not there or not models ----------------------------------------------


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


def test_truncated_onnx(tmp_path: Path, mlp_paths: dict[str, Path]) -> None:
    data = mlp_paths["onnx"].read_bytes()
    path = tmp_path / "cut.onnx"
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(UserError, match=r"truncated|damaged|invalid"):
        open_model(str(path))


def test_random_bytes_onnx(tmp_path: Path) -> None:
    with pytest.raises(UserError, match=r"ONNX"):
        open_model(str(_random_bytes(tmp_path / "noise.onnx")))


@pytest.mark.parametrize("suffix", [".pt", ".pt2", ".pth"])
def test_random_bytes_torch(tmp_path: Path, suffix: str) -> None:
    with pytest.raises(UserError, match="not a Torch model netdim can read"):
        open_model(str(_random_bytes(tmp_path / f"noise{suffix}")))


@pytest.mark.parametrize("kind", ["state_dict", "torchscript", "pt2"])
def test_truncated_torch_files(tmp_path: Path, mlp_paths: dict[str, Path], kind: str) -> None:
    data = mlp_paths[kind].read_bytes()
    path = tmp_path / f"cut{mlp_paths[kind].suffix}"
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(UserError, match=r"damaged|truncated"):
        open_model(str(path), torch_class="netbuild:TinyMLP")


def test_unsupported_operator(tmp_path: Path) -> None:
    path = netbuild.unknown_op_graph(tmp_path / "custom.onnx")
    with pytest.raises(UserError, match=r"cannot be used.*operator.*Frobnicate"):
        open_model(str(path))


# -- pickles ---------------------------------------------------------------------------------


def test_pickled_module_refused_without_trust(mlp_paths: dict[str, Path]) -> None:
    with pytest.raises(UserError) as info:
        open_model(str(mlp_paths["pickle"]))
    message = str(info.value)
    assert "arbitrary code" in message and "--trust-pickle" in message
    assert "netbuild.TinyMLP" in message  # names the class the pickle would import
    model = open_model(str(mlp_paths["pickle"]), trust=True)
    assert model.format == "torch-module"


def test_trusted_pickle_whose_code_is_gone(tmp_path: Path) -> None:
    source = tmp_path / "vanishing_module.py"
    source.write_text(
        "import torch\nclass Gone(torch.nn.Module):\n"
        "    def __init__(self):\n        super().__init__(); self.lin = torch.nn.Linear(2, 1)\n"
        "    def forward(self, x):\n        return self.lin(x)\n"
    )
    import sys

    sys.path.insert(0, str(tmp_path))
    try:
        import vanishing_module

        path = tmp_path / "gone.pt"
        torch.save(vanishing_module.Gone(), path)
    finally:
        sys.path.remove(str(tmp_path))
        sys.modules.pop("vanishing_module", None)
    with pytest.raises(UserError, match="importable"):
        open_model(str(path), trust=True)


# -- state dicts and classes ---------------------------------------------------------------


def test_state_dict_needs_a_class(mlp_paths: dict[str, Path]) -> None:
    with pytest.raises(UserError, match=r"state dict.*--torch-class"):
        open_model(str(mlp_paths["state_dict"]))


@pytest.mark.parametrize(
    ("ref", "words"),
    [
        ("no_such_package_xyz.nets:Net", "could not be imported"),
        ("netbuild:NoSuchNet", "has no attribute"),
        ("netbuild:ops_graph", "not a subclass of torch.nn.Module"),
        ("collections:OrderedDict", "not a subclass of torch.nn.Module"),
        ("netbuild", "not of the form"),
    ],
)
def test_wrong_torch_class(mlp_paths: dict[str, Path], ref: str, words: str) -> None:
    with pytest.raises(UserError, match=words):
        open_model(str(mlp_paths["state_dict"]), torch_class=ref)


def test_state_dict_keys_do_not_match(mlp_paths: dict[str, Path]) -> None:
    with pytest.raises(UserError) as info:
        open_model(str(mlp_paths["state_dict"]), torch_class="netbuild:TinyCNN")
    message = str(info.value)
    assert "missing keys 'conv.weight'" in message
    assert "unexpected keys 'net.0.weight'" in message and "more" in message


def test_state_dict_shapes_do_not_match(mlp_paths: dict[str, Path]) -> None:
    with pytest.raises(UserError, match=r"shape mismatches.*net\.0\.weight \(5, 3\) vs \(7, 3\)"):
        open_model(
            str(mlp_paths["state_dict"]),
            torch_class="netbuild:TinyMLP",
            torch_arguments={"hidden": 7},
        )


def test_bad_constructor_arguments(mlp_paths: dict[str, Path]) -> None:
    with pytest.raises(UserError, match=r"Building 'netbuild:TinyMLP'.*widht"):
        open_model(
            str(mlp_paths["state_dict"]),
            torch_class="netbuild:TinyMLP",
            torch_arguments={"widht": 3},
        )


def test_saved_tensor_is_not_a_model(tmp_path: Path) -> None:
    path = tmp_path / "tensor.pt"
    torch.save(torch.zeros(3), path)
    with pytest.raises(UserError, match="holds a Tensor, not a model"):
        open_model(str(path))


# -- unsupported signatures ------------------------------------------------------------------


def test_two_input_onnx(tmp_path: Path) -> None:
    path = netbuild.two_input_graph(tmp_path / "two.onnx")
    with pytest.raises(UserError, match=r"2 input tensors \('a', 'b'\).*exactly one"):
        open_model(str(path))


def test_integer_input_onnx(tmp_path: Path) -> None:
    path = netbuild.linear_graph(tmp_path / "int.onnx", dtype=TensorProto.INT64)
    with pytest.raises(UserError, match=r"tensor\(int64\).*float, double and float16"):
        open_model(str(path))


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


def test_unknown_suffix(tmp_path: Path) -> None:
    path = tmp_path / "model.h5"
    path.write_bytes(b"\x89HDF")
    with pytest.raises(UserError, match="does not know the model format"):
        open_model(str(path))
