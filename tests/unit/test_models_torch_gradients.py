"""Autograd gradients of the Torch backends, against torch.func and against central differences on ONNX copies.

References: ``torch.func.jacrev`` with ``vmap`` on the eager network (Torch's own functional
transforms, outside netdim's code path); central differences of the ONNX copy of the same
network (audit/models/gradients.py), agreeing to the stated tolerance below.
"""

from __future__ import annotations

import netbuild
import numpy as np
import pytest
import torch

from audit.design import Design
from audit.inputs import load_spec, uniform_spec
from audit.models import open_model
from audit.models.base import feature_count
from audit.models.batch import BatchAxis
from audit.models.gradients import AutogradUnavailableError
from audit.models.python import PythonModel
from audit.models.torch.gradients import torch_rows
from audit.studies.slope_evaluator import AUTOGRAD, DIFFERENCES, GradientEvaluator, choose_method

MLP_CLASS = "netbuild:TinyMLP"


def _reference(net: torch.nn.Module, x: np.ndarray) -> np.ndarray:
    jac = torch.func.vmap(torch.func.jacrev(lambda row: net(row[None])[0]))(torch.from_numpy(x))
    return jac.detach().double().numpy()


@pytest.mark.parametrize("kind", ["torchscript", "pt2", "pt2_fixed", "state_dict"])
def test_autograd_matches_torch_func_in_every_torch_format(tmp_path, kind):
    net = netbuild.seeded(netbuild.TinyMLP, seed=3).eval()
    paths = netbuild.export_all(net, torch.zeros(4, 3), tmp_path, "mlp")
    extra = {"torch_class": MLP_CLASS} if kind == "state_dict" else {}
    model = open_model(str(paths[kind]), **extra)
    x = np.random.default_rng(5).standard_normal((7, 3)).astype(np.float32)  # 7 rows: chunks for a fixed batch
    g = model.gradients(x)
    np.testing.assert_allclose(g.jacobian, _reference(net, x), rtol=1e-5, atol=1e-6)
    np.testing.assert_allclose(g.values, model.evaluate(x).outputs, rtol=1e-6, atol=1e-6)


def test_hidden_layer_gradients_match_torch_func(tmp_path):
    net = netbuild.seeded(netbuild.TinyMLP, seed=3).eval()
    model = open_model(str(netbuild.export_all(net, torch.zeros(4, 3), tmp_path, "mlp")["torchscript"]))
    x = np.random.default_rng(6).standard_normal((5, 3)).astype(np.float32)
    g = model.gradients(x, ["net.1"])
    first = torch.nn.Sequential(net.net[0], net.net[1])
    np.testing.assert_allclose(g.hidden["net.1"][1], _reference(first, x), rtol=1e-5, atol=1e-6)


def test_eager_modules_differentiate_their_hooked_layers(tmp_path):
    # forward hooks keep the captured copy in the graph while autograd is on
    net = netbuild.seeded(netbuild.TinyMLP, seed=3, inplace=True).eval()
    path = netbuild.export_all(net, torch.zeros(4, 3), tmp_path, "mlp")["state_dict"]
    model = open_model(str(path), torch_class=MLP_CLASS)
    x = np.random.default_rng(8).standard_normal((6, 3)).astype(np.float32)
    g = model.gradients(x, ["net.1", "net.3"])
    first = torch.nn.Sequential(net.net[0], net.net[1])
    np.testing.assert_allclose(g.hidden["net.1"][1], _reference(first, x), rtol=1e-5, atol=1e-6)
    np.testing.assert_allclose(g.hidden["net.3"][0], model.evaluate(x, ["net.3"]).hidden["net.3"], atol=1e-6)


class _NoGradients(PythonModel):
    def gradients(self, x, capture=()):
        raise AutogradUnavailableError("integer input tensors (ids) have no gradient")


def test_a_model_that_cannot_differentiate_falls_back_to_central_differences():
    model = _NoGradients(lambda x: x.sum(axis=1), 3)
    laws = uniform_spec("normal").resolve(3, model.feature_names())[1]
    method, notice = choose_method(model, [], laws)
    assert method == DIFFERENCES and "autograd is unavailable here (integer input tensors" in notice
    assert choose_method(PythonModel(lambda x: x.sum(axis=1), 3), [], laws) == (DIFFERENCES, "")


def test_torch_rows_reads_rows_as_batch_axis_does():
    value = np.arange(2 * 3 * 4, dtype=np.float64).reshape(2, 3, 4)
    for axis in (BatchAxis(1), BatchAxis(0, 2, False), BatchAxis(0, 2, True)):
        n = 3 if axis.factor == 1 else 1
        np.testing.assert_array_equal(torch_rows(axis, torch.from_numpy(value), n).numpy(), axis.rows(value, n))


#: Central differences of a float32 network with the step eps^(1/3) err by about eps^(2/3) ≈ 2.4e-5
#: times the scale of its values and third derivatives (truncation and rounding balanced: common
#: practice, no source); the networks in physical units (greenhouse: values of 30–100 and inputs up
#: to 900 against slopes of order 1 per standardised unit) carry up to a hundred times that scale,
#: hence the tolerance 100 eps^(2/3) of the largest slope.
TOLERANCE = 100 * np.finfo(np.float32).eps ** (2 / 3)


@pytest.mark.parametrize(
    "name, spec",
    [("ridge_phi", None), ("additive", None), ("diabetes_mlp", "diabetes_mlp"), ("greenhouse_v1", "greenhouse_v1")],
)
def test_autograd_on_torchscript_agrees_with_differences_on_onnx(name, spec):
    script, onnx = open_model(f"model_zoo/{name}.pt"), open_model(f"model_zoo/{name}.onnx")
    assert script.format == "torchscript" and onnx.format == "onnx"
    d = feature_count(onnx)
    inputs = load_spec(f"model_zoo/{spec}.toml") if spec else uniform_spec("normal")
    laws = inputs.resolve(d, onnx.feature_names())[1]
    x = Design(laws, 256, 1, seed=1, copies=1).block(0, 0, 256).A.astype(np.float32)
    layers = [la.name for la in script.layers() if la.activation]
    assert layers == [la.name for la in onnx.layers() if la.activation]
    exact = GradientEvaluator(script, laws, layers, None, AUTOGRAD)(x)
    approx = GradientEvaluator(onnx, laws, layers, None, DIFFERENCES)(x)
    for group, values in exact.items():
        scale = np.abs(values).max()
        assert np.abs(approx[group] - values).max() <= TOLERANCE * scale, group
