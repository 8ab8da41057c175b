"""The Torch wrapper: TorchScript and .pt2 files equal netdim's evaluator, an eager network is scripted or traced.

The small MLP is built here with torch (outside the zoo); references are
netdim's in-memory evaluator (ReducedModel) and the source on fixed rows.
"""

import json
from pathlib import Path

import numpy as np
import pytest
import torch

from audit.errors import UserError
from audit.export import ReducedModel, make_plan
from audit.export.torch_file import EXTRA_FILE, write_torch
from audit.inputs import Law
from audit.models.open import open_model
from audit.models.torch import ModuleModel

LAWS = [Law("normal")] * 4


class Mlp(torch.nn.Module):
    def __init__(self) -> None:
        super().__init__()
        torch.manual_seed(3)
        self.body = torch.nn.Sequential(torch.nn.Linear(4, 8), torch.nn.Tanh(), torch.nn.Linear(8, 2))

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.body(x)


class Branchy(Mlp):
    def forward(self, x):  # a lambda: TorchScript cannot compile it, tracing records the call
        scale = lambda t: t * 2.0  # noqa: E731
        return scale(self.body(x))


def rows(n: int, k: int) -> np.ndarray:
    return np.random.default_rng(n + k).normal(size=(n, k))


@pytest.mark.parametrize("kind", ["script", "program", "eager"])
def test_written_torch_file_equals_the_evaluator(tmp_path, kind):
    net = Mlp().eval()
    example = torch.zeros(2, 4)
    if kind == "script":
        torch.jit.save(torch.jit.script(net), str(tmp_path / "m.pt"))
        source, out = open_model(str(tmp_path / "m.pt"), input_shape=(4,)), tmp_path / "s.pt"
    elif kind == "program":
        batch = torch.export.Dim("batch", min=1)
        torch.export.save(torch.export.export(net, (example,), dynamic_shapes=({0: batch},)), str(tmp_path / "m.pt2"))
        source, out = open_model(str(tmp_path / "m.pt2")), tmp_path / "s.pt2"
    else:
        source, out = ModuleModel(net, tmp_path / "m.pt", "state-dict"), tmp_path / "s.pt"
    plan = make_plan(source, ["a", "b", "c", "d"], LAWS, integrate={2: 6}, freeze={0: 0.5})
    assert write_torch(source, plan, out) == []
    written = open_model(str(out))
    assert written.inputs[0].shape == (2,)
    x = rows(33, 2)
    assert np.allclose(written.evaluate(x).outputs, ReducedModel(source, plan).evaluate(x).outputs, atol=1e-6)


def test_an_unscriptable_network_is_traced_with_a_notice(tmp_path):
    source = ModuleModel(Branchy().eval(), tmp_path / "m.pt", "state-dict")
    plan = make_plan(source, ["a", "b", "c", "d"], LAWS, freeze={1: -0.5})
    notices = write_torch(source, plan, tmp_path / "s.pt")
    assert any("traced" in n for n in notices)
    extra = {EXTRA_FILE: ""}
    script = torch.jit.load(str(tmp_path / "s.pt"), _extra_files=extra)
    assert json.loads(extra[EXTRA_FILE])["input_shape"] == [3]
    x = rows(5, 3).astype(np.float32)
    full = np.insert(x, 1, -0.5, axis=1)
    with torch.no_grad():
        assert torch.equal(script(torch.from_numpy(x)), Branchy().eval()(torch.from_numpy(full)))


def test_several_inputs_are_refused(tmp_path):
    class Two(torch.nn.Module):
        def forward(self, a, b):
            return a.sum(1, keepdim=True) * b

    source = ModuleModel(Two(), Path("two.pt"), "state-dict", input_shape={"a": (2,), "b": (1,)})
    plan = make_plan(source, ["a0", "a1", "b"], [Law("normal")] * 3, freeze={0: 1.0})
    with pytest.raises(UserError, match="ONNX"):
        write_torch(source, plan, tmp_path / "s.pt")
