"""The slopes workflow: bounds beside the Jansen indices, active directions, screening (audit/studies/slopes.py).

References, beside each check: the derivative-based bound ("Derivative based global
sensitivity measures and their link with global sensitivity indices", Mathematics and
Computers in Simulation, 2009); the exact indices of the validation networks
(model_zoo/validation.json, one-dimensional quadrature of closed-form conditional means);
ridge functions have a rank-r gradient matrix ("Active subspace methods in theory and
practice: applications to kriging surfaces", SIAM J. Sci. Comput., 2014).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import torch

from audit.errors import UserError
from audit.inputs import Law, load_spec
from audit.models.python import PythonModel
from audit.models.torch.module import ModuleModel
from audit.results import result_from_dict
from audit.results.slopes import SlopesResult
from audit.studies.slopes import slopes_model

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"
VALIDATION = json.loads((ZOO / "validation.json").read_text())["models"]
#: Angle between the leading direction and θ: gradients in float32 by autograd are exact to a few
#: eps32 ≈ 1.2e-7 per component, so the direction is within ~1e-6 rad; central differences are
#: accurate to ~eps32^(2/3) ≈ 2.4e-5. Tolerances: 1e-4 rad (autograd), 1e-3 rad (differences).
ANGLE = {"pt": 1e-4, "onnx": 1e-3}


def _angle(u, v) -> float:
    u, v = np.asarray(u) / np.linalg.norm(u), np.asarray(v) / np.linalg.norm(v)
    return math.acos(min(1.0, abs(float(u @ v))))


@pytest.mark.parametrize("ext", ["pt", "onnx"])
def test_a_ridge_network_has_one_direction_along_theta(ext):
    theta = VALIDATION["ridge_phi"]["parameters"]["theta"]
    r = slopes_model(str(ZOO / f"ridge_phi.{ext}"), "normal", points=256, replicates=8, seed=1, indices=False)
    dirs = r.outputs[0].directions
    assert dirs.nonzero == 1 and dirs.count == 1
    assert _angle(dirs.directions[0].vector, theta) < ANGLE[ext]
    assert r.design["method"] == ("autograd" if ext == "pt" else "central differences")


class TwoRidges(torch.nn.Module):
    """g(aᵀx, bᵀx) = tanh(aᵀx) · (1 + 0.5 bᵀx) in 8 inputs."""

    def __init__(self) -> None:
        super().__init__()
        g = torch.Generator().manual_seed(2)
        self.a, self.b = torch.randn(8, generator=g), torch.randn(8, generator=g)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return (torch.tanh(x @ self.a) * (1 + 0.5 * (x @ self.b)))[:, None]


def _span_angle(vectors, basis) -> float:
    q, _ = np.linalg.qr(np.column_stack(basis))
    v = np.column_stack(vectors)
    return math.acos(min(1.0, float(np.linalg.svd(q.T @ v, compute_uv=False).min())))


def test_a_two_direction_ridge_has_exactly_two():
    net = TwoRidges()
    torch_model = ModuleModel(net, Path("two_ridges"), "torch-module", input_shape=(8,))
    a, b = net.a.double().numpy(), net.b.double().numpy()
    python_model = PythonModel(lambda x: np.tanh(x @ a) * (1 + 0.5 * (x @ b)), 8)
    for model, tol in ((torch_model, ANGLE["pt"]), (python_model, ANGLE["pt"])):
        r = slopes_model(model, "normal", points=512, replicates=8, seed=4, indices=False, layers="none")
        dirs = r.outputs[0].directions
        assert dirs.nonzero == 2 and dirs.count == 2
        assert _span_angle([d.vector for d in dirs.directions], [a, b]) < tol


def test_a_linear_model_with_normal_inputs_has_its_bound_equal_to_its_total_index():
    # f = Σ c_j x_j, x_j ~ N(m_j, s_j): the total index of j is c_j² s_j² exactly, and so is the bound
    c, sd = np.array([1.0, -2.0, 0.5, 3.0]), np.array([0.5, 1.0, 2.0, 0.25])
    laws = [Law("normal", {"mean": float(i), "sd": float(s)}) for i, s in enumerate(sd)]
    model = PythonModel(lambda x: x @ c, 4)
    r = slopes_model(model, laws, points=512, replicates=8, seed=2)
    exact = c**2 * sd**2
    o = r.outputs[0]
    for b, e in zip(o.bounds, exact, strict=True):
        assert b.mean_square.estimate == pytest.approx(e, rel=1e-8)
        assert b.bound.covers(e / exact.sum())  # normalised by the estimated variance
        assert b.total.covers(e / exact.sum())  # the Jansen estimate agrees within its interval
    assert o.bound_sum.covers(1.0)
    assert o.mean_dimension.covers(1.0)


def _check_bounds_hold(result: SlopesResult, exact=None) -> None:
    for o in result.outputs:
        for j, b in enumerate(o.bounds):
            assert b.bound.ci_high >= b.total.ci_low, (o.name, b.feature)  # bound ≥ Jansen within intervals
            if exact is not None:
                assert b.bound.ci_high >= exact[j], (o.name, b.feature)
        nu = o.mean_dimension
        assert o.bound_sum.ci_high >= nu.ci_low
        assert o.lipschitz_bound >= o.bound_sum.estimate  # max ‖∇f‖² ≥ E‖∇f‖²


@pytest.mark.parametrize("name", sorted(VALIDATION))
def test_bounds_hold_on_every_validation_network(name):
    exact = VALIDATION[name]["exact"]["total_index"]
    _check_bounds_hold(slopes_model(str(ZOO / f"{name}.onnx"), "normal", points=512, replicates=8, seed=5), exact)


def test_bounds_hold_on_the_greenhouse_surrogate():
    spec = load_spec(str(ZOO / "greenhouse_v1.toml"))
    r = slopes_model(str(ZOO / "greenhouse_v1.onnx"), spec, points=512, replicates=8, seed=6, layers="none")
    _check_bounds_hold(r)
    assert {o.name for o in r.outputs} == {"inside_temperature", "inside_humidity"}


class Sparse(torch.nn.Module):
    """64 inputs, 5 of them active through a tanh layer, the other 59 with weights of 0.01."""

    ACTIVE = (4, 11, 23, 40, 57)

    def __init__(self) -> None:
        super().__init__()
        g = torch.Generator().manual_seed(9)
        w = 0.01 * torch.randn(12, 64, generator=g)
        w[:, list(self.ACTIVE)] = torch.randn(12, 5, generator=g)
        self.inner = torch.nn.Linear(64, 12)
        self.outer = torch.nn.Linear(12, 1)
        with torch.no_grad():
            self.inner.weight.copy_(w)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.outer(torch.tanh(self.inner(x)))


def test_screening_finds_the_active_inputs_at_a_twentieth_of_the_cost():
    model = ModuleModel(Sparse(), Path("sparse"), "torch-module", input_shape=(64,))
    r = slopes_model(model, "normal", screen=8, points=1024, replicates=8, seed=3)
    s = r.screening
    active = {f"x[{j}]" for j in Sparse.ACTIVE}
    assert active <= set(s.kept) and len(s.kept) == 8 and len(s.left_out) == 56
    # the ranking costs gradients only: measured from the evaluation counts against N (d + 2) R
    assert r.design["gradient_evaluations"] * 20 <= r.design["full_evaluations"]
    assert r.design["index_evaluations"] == 1024 * 8 * (8 + 1 + 2)
    o = s.outputs[0]
    assert o.rest_bound.ci_high >= o.rest_total.ci_low  # the group's bound holds within intervals
    assert all(f.value.estimate > 0 for f in o.kept if f.feature in active)
    assert r.outputs[0].directions is None  # no matrices when screening


def test_result_round_trips_through_json(tmp_path):
    r = slopes_model(str(ZOO / "additive.onnx"), "normal", points=128, replicates=4, seed=1)
    data = json.loads(json.dumps(r.to_dict()))
    back = result_from_dict(data)
    assert isinstance(back, SlopesResult) and back.to_dict() == r.to_dict()
    assert data["kind"] == "slopes" and data["layers"][0]["directions"]["count"] >= 1


def test_checkpoint_resumes_to_the_same_numbers(tmp_path):
    path = tmp_path / "run.npz"
    kwargs = {"points": 128, "replicates": 4, "seed": 8, "checkpoint": str(path)}
    first = slopes_model(str(ZOO / "ridge_relu.onnx"), "normal", **kwargs)
    again = slopes_model(str(ZOO / "ridge_relu.onnx"), "normal", **kwargs)
    assert path.exists()
    assert again.outputs[0].bound_sum == first.outputs[0].bound_sum


def test_user_errors_name_the_parameter():
    with pytest.raises(UserError, match="`screen`"):
        slopes_model(str(ZOO / "additive.onnx"), "normal", screen=6)
    with pytest.raises(UserError, match="`gradient_points`"):
        slopes_model(str(ZOO / "additive.onnx"), "normal", gradient_points=1)


def test_a_layer_that_sees_two_inputs_spans_two_directions(tmp_path):
    # units tanh(w_uᵀx) with w_u supported on inputs 0 and 1: every gradient lies in span(e_0, e_1)
    torch.manual_seed(3)
    net = torch.nn.Sequential(torch.nn.Linear(6, 4), torch.nn.Tanh(), torch.nn.Linear(4, 1)).eval()
    with torch.no_grad():
        net[0].weight[:, 2:] = 0.0
    path = tmp_path / "two_inputs.pt"
    torch.jit.save(torch.jit.script(net), str(path), _extra_files={"netdim.json": json.dumps({"input_shape": [6]})})
    r = slopes_model(str(path), "normal", points=256, replicates=8, seed=7, indices=False)
    assert r.design["method"] == "autograd"
    (layer,) = r.layers
    assert layer.units == 4 and layer.directions.nonzero == 2 and layer.directions.count <= 2
    axes = [np.eye(6)[0], np.eye(6)[1]]
    assert _span_angle([d.vector for d in layer.directions.directions], axes) < ANGLE["pt"]


def test_the_gradient_job_travels_to_another_process_unchanged():
    # what the cluster sends (audit/cluster.py): the model as "open this file again"
    from audit.cluster import portable_dumps, portable_loads
    from audit.engine import Task, run_task
    from audit.models.open import open_model
    from audit.studies.options import DesignOptions
    from audit.studies.slopes import prepare_slopes

    plan = prepare_slopes(open_model(str(ZOO / "additive.onnx")), "normal", design=DesignOptions(64, 2, seed=1))
    here = run_task(plan.gradients, Task(1, 0, 32))
    there = run_task(portable_loads(portable_dumps(plan.gradients)), Task(1, 0, 32))
    for name, sums in here.items():
        for key, value in sums.state().items():
            np.testing.assert_array_equal(there[name].state()[key], value)
