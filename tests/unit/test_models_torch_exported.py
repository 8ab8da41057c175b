"""``torch.export`` programs: inputs, element types and batch sizes come from the program.

References: the eager Torch network the program was exported from (common practice, no
source).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import netbuild
import numpy as np
import torch

from audit.models import open_model, row_dtype

RNG = np.random.default_rng(13)


class _Lookup(torch.nn.Module):
    """forward(ids, x): an embedding of two integer ids per row, plus a float tensor."""

    def __init__(self) -> None:
        super().__init__()
        self.emb = torch.nn.Embedding(5, 3)
        self.lin = torch.nn.Linear(3, 1)

    def forward(self, ids: torch.Tensor, x: torch.Tensor) -> torch.Tensor:
        return self.lin(self.emb(ids).sum(dim=1) + x)


def _export(net: torch.nn.Module, example: tuple, path: Path, dynamic: bool = True) -> Path:
    shapes = tuple({0: torch.export.Dim("batch")} for _ in example) if dynamic else None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.export.save(torch.export.export(net, example, dynamic_shapes=shapes), str(path))
    return path


def test_integer_input_of_a_program(tmp_path: Path) -> None:
    net = netbuild.seeded(_Lookup, seed=2)
    example = (torch.zeros(3, 2, dtype=torch.int64), torch.zeros(3, 3))
    model = open_model(str(_export(net, example, tmp_path / "lookup.pt2")))
    assert [(t.name, t.shape, t.dtype) for t in model.inputs] == [("ids", (2,), "int64"), ("x", (3,), "float32")]
    assert row_dtype(model) is np.float64  # integer features need float64 rows
    x = np.column_stack([RNG.uniform(-0.4, 4.4, size=(8, 2)), RNG.normal(size=(8, 3))])
    ids = torch.from_numpy(np.rint(x[:, :2]).astype(np.int64))  # nearest integer, as documented
    with torch.no_grad():
        ref = net(ids, torch.from_numpy(x[:, 2:].astype(np.float32))).numpy()
    ev = model.evaluate(x)
    assert ev.outputs.dtype == np.float32
    np.testing.assert_allclose(ev.outputs, ref, rtol=1e-5, atol=1e-6)


def test_batch_of_one_runs_row_by_row_with_a_notice(tmp_path: Path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP, seed=3)
    model = open_model(str(_export(net, (torch.zeros(1, 3),), tmp_path / "one.pt2", dynamic=False)))
    assert model.batch_size == 1
    assert any("batch size of 1" in note for note in model.notices)
    x = RNG.normal(size=(5, 3))
    with torch.no_grad():
        ref = net(torch.from_numpy(x.astype(np.float32))).numpy()
    np.testing.assert_allclose(model.evaluate(x, capture=["net.3"]).outputs, ref, rtol=1e-5, atol=1e-6)


class _Scaled(torch.nn.Module):
    """forward(x, t): a Linear of x (N, 3) scaled by one number t (N,) per row."""

    def __init__(self) -> None:
        super().__init__()
        self.lin = torch.nn.Linear(3, 2)

    def forward(self, x: torch.Tensor, t: torch.Tensor) -> torch.Tensor:
        return self.lin(x) * t[:, None]


def test_one_number_per_row_is_a_scalar_tensor(tmp_path: Path) -> None:
    net = netbuild.seeded(_Scaled, seed=4)
    model = open_model(str(_export(net, (torch.zeros(3, 3), torch.zeros(3)), tmp_path / "scaled.pt2")))
    assert [(t.name, t.shape) for t in model.inputs] == [("x", (3,)), ("t", ())]
    assert model.feature_names() == ["x[0]", "x[1]", "x[2]", "t"]
    x = RNG.normal(size=(6, 4))
    with torch.no_grad():
        ref = net(torch.from_numpy(x[:, :3].astype(np.float32)), torch.from_numpy(x[:, 3].astype(np.float32)))
    np.testing.assert_allclose(model.evaluate(x).outputs, ref.numpy(), rtol=1e-5, atol=1e-6)


class _InPlace(torch.nn.Module):
    """Linear layers whose outputs later ops change in place (ReLU(inplace=True), ``out += x``)."""

    def __init__(self) -> None:
        super().__init__()
        self.fc1, self.fc2 = torch.nn.Linear(4, 6), torch.nn.Linear(6, 4)
        self.act = torch.nn.ReLU(inplace=True)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        out = self.fc2(self.act(self.fc1(x)))
        out += x
        return out.sum(dim=1, keepdim=True)


def test_captured_tensors_are_those_before_later_in_place_ops(tmp_path: Path) -> None:
    """The eager network's own tensors (forward hooks on a copy of each module's output) are the reference."""
    torch.manual_seed(0)
    net = _InPlace().eval()
    model = open_model(str(_export(net, (torch.zeros(2, 4),), tmp_path / "inplace.pt2")))
    names = [layer.name for layer in model.layers()]
    assert "fc1" in names and "fc2" in names
    x = RNG.normal(size=(32, 4))
    seen: dict[str, np.ndarray] = {}
    for name in ("fc1", "fc2"):
        getattr(net, name).register_forward_hook(lambda m, i, o, name=name: seen.__setitem__(name, o.detach().clone()
                                                                                               .numpy()))  # fmt: skip
    with torch.no_grad():
        net(torch.as_tensor(x, dtype=torch.float32))
    got = model.evaluate(x, ["fc1", "fc2"]).hidden
    for name in ("fc1", "fc2"):  # before the fix: fc1 held the ReLU's values, fc2 the sum with x
        np.testing.assert_allclose(got[name], seen[name], rtol=1e-6, atol=1e-6)
