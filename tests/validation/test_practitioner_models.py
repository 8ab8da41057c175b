"""Models as practitioners bring them: converted scikit-learn classifiers, several input tensors,
a GELU layer split by the exporter — every number shown is possible, and exact where it can be.

References:
- a unit h = GELU(wᵀx + b) with x ~ N(0, I) is a ridge function g(θᵀx), θ = w/|w|, g(z) =
  GELU(|w| z + b); its Hermite coefficients a_k = E[g(Z) He_k(Z)]/√k! give the total indices
  τ̄²_j = Σ_k a_k² (1 − (1 − θ_j²)^k) ("Mean dimension of ridge functions", SIAM J. Numer. Anal.,
  2020, and DESIGN.md §2); the coefficients are computed here by Gauss–Hermite quadrature
  (numpy.polynomial.hermite_e.hermegauss, 160 nodes; GELU is smooth, so the rule converges fast);
- a sum of functions of separate inputs is additive: ν = 1 (common practice, no source);
- class probabilities sum to one, so the last is an exact affine function of the others
  (common practice, no source).
Data: scikit-learn's bundled iris and breast-cancer sets (no download).
"""

from __future__ import annotations

import numpy as np
import pytest
import torch
from scipy import special, stats

from audit import audit_model
from audit.inputs import InputSpec, Law

R = 8
FAMILY_ERROR = 0.01


def _possible(result, d: int) -> None:
    """Every ν in [1, d] and every index in [0, 1], within its interval (unreliable ones excepted)."""
    for o in result.outputs:
        if o.inert or o.relation or o.mean_dimension is None:
            continue
        nu = o.mean_dimension
        assert nu.ci_low <= d and nu.ci_high >= 1, (o.name, nu)
        for f in o.total_index + o.first_order:
            assert f.value.ci_low <= 1 and f.value.ci_high >= 0, (o.name, f)
    for layer in result.layers:
        for u in layer.units:
            if u.inert or u.unreliable or u.mean_dimension is None:
                continue
            assert u.mean_dimension.ci_low <= d and u.mean_dimension.ci_high >= 1, (layer.name, u)


def _spec_from(X: np.ndarray) -> InputSpec:
    lo, hi = X.min(axis=0), X.max(axis=0)
    return InputSpec(laws=[Law("uniform", {"low": float(a), "high": float(b)}) for a, b in zip(lo, hi, strict=True)])


def _convert(model, X, path):
    from skl2onnx import to_onnx

    onx = to_onnx(model, X[:1].astype(np.float32), options={id(model): {"zipmap": False}})
    path.write_bytes(onx.SerializeToString())
    return path


def test_logistic_regression_binary_probabilities(tmp_path):
    from sklearn.datasets import load_breast_cancer
    from sklearn.linear_model import LogisticRegression

    X, y = load_breast_cancer(return_X_y=True)
    X = X[:, :6]
    path = _convert(LogisticRegression(max_iter=2000).fit(X, y), X, tmp_path / "lr.onnx")
    r = audit_model(path, _spec_from(X), points=1024, replicates=R, seed=1)
    assert any("label" in n and "left out" in n for n in r.notices), r.notices
    names = [o.name for o in r.outputs]
    assert names == ["probabilities[0]", "probabilities[1]"]
    assert r.outputs[1].relation == "= 1 − probabilities[0]"  # p1 = 1 − p0, noted once
    _possible(r, 6)
    # asking for the label by name says what it holds and which outputs can be chosen
    from audit.errors import UserError

    with pytest.raises(UserError, match=r"output 'label' holds int64, not real numbers.*probabilities\[0\]"):
        audit_model(path, _spec_from(X), points=64, replicates=2, seed=1, outputs=["label"])


def test_random_forest_three_classes(tmp_path):
    from sklearn.datasets import load_iris
    from sklearn.ensemble import RandomForestClassifier

    X, y = load_iris(return_X_y=True)
    model = RandomForestClassifier(n_estimators=20, max_depth=4, random_state=0).fit(X, y)
    path = _convert(model, X, tmp_path / "rf.onnx")
    r = audit_model(path, _spec_from(X), points=1024, replicates=R, seed=2)
    assert any("label" in n for n in r.notices)
    # p2 = 1 − p0 − p1, a combination of two outputs: its indices are its own, so it is measured and shown
    assert len(r.outputs) == 3 and r.outputs[2].relation == ""
    _possible(r, 4)
    # choosing outputs by unit name keeps only those
    one = audit_model(path, _spec_from(X), points=256, replicates=4, seed=2, outputs=["probabilities[1]"])
    assert [o.name for o in one.outputs] == ["probabilities[1]"]


class _TwoInputs(torch.nn.Module):
    def forward(self, a: torch.Tensor, b: torch.Tensor) -> torch.Tensor:
        return torch.sin(a).sum(dim=1, keepdim=True) + 2.0 * (b**2).sum(dim=(1, 2)).unsqueeze(1)


def test_two_input_tensors_additive_model(tmp_path):
    path = tmp_path / "two.onnx"
    torch.onnx.export(
        _TwoInputs(), (torch.zeros(2, 3), torch.zeros(2, 2, 2)), str(path), input_names=["a", "b"],
        output_names=["y"], dynamic_axes={"a": {0: "n"}, "b": {0: "n"}, "y": {0: "n"}}, opset_version=17,
        dynamo=False,
    )  # fmt: skip
    r = audit_model(path, "normal", points=1024, replicates=R, seed=3)
    out = r.outputs[0]
    names = [f.feature for f in out.total_index]
    assert names[:3] == ["a[0]", "a[1]", "a[2]"] and names[3:] == ["b[0,0]", "b[0,1]", "b[1,0]", "b[1,1]"]
    assert out.mean_dimension.covers(1.0), out.mean_dimension


class _GeluNet(torch.nn.Module):
    def __init__(self) -> None:
        super().__init__()
        torch.manual_seed(4)
        self.fc = torch.nn.Linear(5, 4)
        self.act = torch.nn.GELU()
        self.out = torch.nn.Linear(4, 1)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.out(self.act(self.fc(x)))


def _gelu_ridge_nu(w: np.ndarray, b: float, nodes: int = 160, kmax: int = 40) -> float:
    """Exact ν of GELU(wᵀx + b), x ~ N(0, I), from its Hermite expansion by Gauss–Hermite quadrature."""
    z, weights = np.polynomial.hermite_e.hermegauss(nodes)
    weights = weights / weights.sum()
    s = float(np.linalg.norm(w))
    t = s * z + b
    g = t * special.ndtr(t)  # GELU (exact form)
    he = np.polynomial.hermite_e.hermevander(z, kmax)  # He_0..He_kmax at the nodes
    a = (weights * g) @ he / np.sqrt(special.factorial(np.arange(kmax + 1)))
    theta2 = (w / s) ** 2
    k = np.arange(kmax + 1)
    total = (a[None, 1:] ** 2 * (1 - (1 - theta2[:, None]) ** k[None, 1:])).sum(axis=1)
    return float(total.sum() / (a[1:] ** 2).sum())


def test_first_layer_gelu_units_match_their_hermite_expansion(tmp_path):
    net = _GeluNet().eval()
    path = tmp_path / "gelu.onnx"
    torch.onnx.export(
        net, torch.zeros(2, 5), str(path), input_names=["x"], output_names=["y"],
        dynamic_axes={"x": {0: "n"}, "y": {0: "n"}}, opset_version=17, dynamo=False,
    )  # fmt: skip
    r = audit_model(path, "normal", points=2048, replicates=R, seed=5)
    gelu = [layer for layer in r.layers if layer.op == "gelu"]
    assert len(gelu) == 1, [(x.name, x.op) for x in r.layers]  # one layer at the GELU's output, not its Erf
    w = net.fc.weight.detach().double().numpy()
    b = net.fc.bias.detach().double().numpy()
    units = gelu[0].units
    bound = float(stats.t.ppf(1 - FAMILY_ERROR / (2 * len(units)), R - 1))  # Bonferroni over the units
    for u, unit in enumerate(units):
        exact_nu = _gelu_ridge_nu(w[u], float(b[u]))
        est = unit.mean_dimension
        assert abs(est.estimate - exact_nu) <= bound * est.std_error, (unit.unit, est, exact_nu)
    _possible(r, 5)


@pytest.mark.parametrize("nodes", [80, 160])
def test_the_gauss_hermite_reference_has_converged(nodes):
    # the reference itself: 80 and 160 nodes agree, and a linear unit (GELU far in its linear range) has ν = 1
    w = np.array([0.3, -0.2, 0.1, 0.4, 0.05])
    assert _gelu_ridge_nu(w, 0.2, nodes) == pytest.approx(_gelu_ridge_nu(w, 0.2, 160), rel=1e-10)
    assert _gelu_ridge_nu(w * 1e-3, 50.0, nodes) == pytest.approx(1.0, abs=1e-6)
