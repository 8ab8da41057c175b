"""Reading Torch files: recognised by content, pickles refused unless trusted, state dicts
rebuilt with their class.

Common practice, no source: each bad file is built here; the assertions check the error
type and the words a user needs to fix the problem.
"""

from __future__ import annotations

import os
from pathlib import Path

import netbuild
import pytest
import torch

from audit.errors import UserError
from audit.models import open_model


@pytest.fixture(scope="module")
def mlp_paths(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    net = netbuild.seeded(netbuild.TinyMLP, seed=0)
    return netbuild.export_all(net, torch.zeros(2, 3), tmp_path_factory.mktemp("err"), "mlp")


def _random_bytes(path: Path, size: int = 4096) -> Path:
    path.write_bytes(os.urandom(size))
    return path


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


def test_pickled_module_refused_without_trust(mlp_paths: dict[str, Path]) -> None:
    with pytest.raises(UserError) as info:
        open_model(str(mlp_paths["pickle"]))
    message = str(info.value)
    assert "arbitrary code" in message and "`trust`" in message
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


def test_state_dict_needs_a_class(mlp_paths: dict[str, Path]) -> None:
    with pytest.raises(UserError, match=r"state dict.*`torch_class`"):
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
