"""Audits of networks layer by layer against exact answers: per-unit Hermite expansions, ν = 1 of linear nets,
and the same numbers in every file format."""

import exact
import netbuild
import numpy as np
import pytest
import torch
from scipy import stats

from audit import audit_model
from audit.models.open import open_model

R = 10
FAMILY_ERROR = 0.01


def t_bound(m: int) -> float:
    """Bonferroni-adjusted two-sided t quantile for m comparisons (common practice, no source)."""
    return float(stats.t.ppf(1 - FAMILY_ERROR / (2 * m), R - 1))


@pytest.fixture(scope="module")
def mlp_files(tmp_path_factory):
    net = netbuild.seeded(netbuild.TinyMLP, seed=3, d=4, hidden=5, k=2)
    return net, netbuild.export_all(net, torch.zeros(2, 4), tmp_path_factory.mktemp("mlp"))


def test_first_layer_tanh_units_match_their_hermite_expansion(mlp_files):
    # h_k = tanh(w_kᵀx + b_k) with x ~ N(0, I) is a ridge function g(θᵀx), θ = w_k/|w_k|,
    # g(z) = tanh(|w_k| z + b_k): exact ν from the Hermite expansion (DESIGN.md §2, tests/exact.py).
    net, files = mlp_files
    model = open_model(str(files["torchscript"]))
    r = audit_model(model, "normal", points=2048, replicates=R, seed=5, layers=["net.1"])
    w = net.net[0].weight.detach().double().numpy()
    b = net.net[0].bias.detach().double().numpy()
    units = r.layers[0].units
    k = t_bound(len(units))
    errors = []
    for u, unit in enumerate(units):
        scale = np.linalg.norm(w[u])
        ref = exact.ridge_indices(lambda z, s=scale, c=b[u]: float(np.tanh(s * z + c)), w[u])
        est = unit.mean_dimension
        errors.append(abs(est.estimate - ref["nu"]))
        assert abs(est.estimate - ref["nu"]) <= k * est.std_error, (unit.unit, est, ref["nu"])
    print("per-unit |ν error| of the tanh layer:", np.round(errors, 5))


def test_same_output_nu_in_every_format(mlp_files):
    _, files = mlp_files
    nus = {}
    for kind in ("onnx", "torchscript", "pt2", "state_dict"):
        kw = {"torch_class": "netbuild:TinyMLP", "torch_arguments": {"d": 4, "hidden": 5, "k": 2}}
        model = open_model(str(files[kind]), **(kw if kind == "state_dict" else {}))
        r = audit_model(model, "normal", points=512, replicates=4, seed=7, layers="none")
        nus[kind] = np.array([o.mean_dimension.estimate for o in r.outputs])
    for kind, v in nus.items():
        np.testing.assert_allclose(v, nus["onnx"], rtol=1e-4, err_msg=kind)


def test_linear_network_has_nu_one_everywhere(tmp_path):
    torch.manual_seed(0)
    net = torch.nn.Sequential(torch.nn.Linear(3, 4), torch.nn.Linear(4, 2)).eval()
    path = netbuild.export_all(net, torch.zeros(2, 3), tmp_path)["onnx"]
    r = audit_model(open_model(str(path)), "uniform", points=1024, replicates=R, seed=8, layers="all")
    ests = [o.mean_dimension for o in r.outputs] + [u.mean_dimension for x in r.layers for u in x.units]
    assert len(r.layers) >= 1 and len(ests) >= 6
    k = t_bound(len(ests))
    for e in ests:  # an affine function is additive: ν = 1 (common practice, no source)
        assert abs(e.estimate - 1.0) <= k * e.std_error + 1e-9, e
