"""Simplified models written to files, against exact answers and against netdim's own evaluator.

Reference values and where they come from:

- E[Φ(a + bZ)] = Φ(a / √(1 + b²)) for Z ~ N(0, 1), so integrating x_ℓ out of the
  zoo's ridge Φ(wᵀx + c) (w = s θ / ‖θ‖, c = −t, model_zoo/validation.json) gives
  Φ((w_{−ℓ}ᵀ x_{−ℓ} + c) / √(1 + w_ℓ²)) (common practice, no source).
- Var E[f | x_{−ℓ}] = σ² − τ̄²_ℓ and E E[f | x_{−ℓ}] = E f follow from the ANOVA
  decomposition (common practice, no source); both are checked within the
  estimators' own 95 % intervals at a fixed seed.
- A frozen export only copies values, so it must reproduce the source bit for bit.
"""

import json
from pathlib import Path

import numpy as np
import onnxruntime as ort
import pytest
import torch
from scipy.special import ndtr

from audit.inputs import Law, load_spec
from audit.models.open import open_model
from audit.quadrature import PreIntegratedModel
from audit.studies import simplify_model

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"
RIDGE = json.loads((ZOO / "validation.json").read_text())["models"]["ridge_phi"]["parameters"]
GREENHOUSE = ZOO / "greenhouse_v1.onnx"
SPEC = ZOO / "greenhouse_v1.toml"


def ridge_weights() -> tuple[np.ndarray, float]:
    theta = np.array(RIDGE["theta"])
    return RIDGE["scale"] * theta / np.linalg.norm(theta), -float(RIDGE["shift"])


def closed_form(x: np.ndarray, ell: int) -> np.ndarray:
    w, c = ridge_weights()
    rest = np.delete(w, ell)
    return ndtr((x @ rest + c) / np.sqrt(1 + w[ell] ** 2))


@pytest.mark.parametrize("suffix", [".onnx", ".pt"])
def test_phi_ridge_preintegrated_equals_closed_form(tmp_path, suffix):
    ell = int(np.argmax(np.abs(RIDGE["theta"])))  # x2, the largest weight
    out = tmp_path / f"ridge{suffix}"
    res = simplify_model(ZOO / f"ridge_phi{suffix}", "normal", integrate=[f"x[{ell}]"], path=out, tolerance=1e-6,
                         output_dtype="float64", check=False, seed=4)  # fmt: skip
    meta = res.written["metadata"]["integrated"][0]
    assert meta["feature"] == f"x[{ell}]" and meta["quadrature_error"] < 1e-6 and meta["converged"]
    x = np.random.default_rng(11).standard_normal((200, 5))
    if suffix == ".onnx":
        y = ort.InferenceSession(str(out)).run(None, {"x": x.astype(np.float32)})[0][:, 0]
    else:
        y = torch.jit.load(str(out))(torch.from_numpy(x).float()).detach().numpy()[:, 0]
    assert y.dtype == np.float64
    assert np.max(np.abs(y - closed_form(x, ell))) < 1e-6


@pytest.fixture(scope="module")
def greenhouse_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("gh") / "greenhouse-preintegrated.onnx"
    res = simplify_model(GREENHOUSE, str(SPEC), integrate=["solar_irradiance"], path=out, output_dtype="float64",
                         points=1024, replicates=8, seed=21)  # fmt: skip
    return res, out


def test_greenhouse_export_equals_netdims_evaluator(greenhouse_run):
    res, out = greenhouse_run
    spec = load_spec(SPEC)
    source = open_model(str(GREENHOUSE))
    nodes = res.written["metadata"]["integrated"][0]["nodes"]
    reference = PreIntegratedModel(source, spec.laws, 1, nodes)
    rng = np.random.default_rng(5)
    kept = [law for j, law in enumerate(spec.laws) if j != 1]
    x = np.column_stack([law.ppf(rng.random(300)) for law in kept])
    y = ort.InferenceSession(str(out)).run(None, {"x": x.astype(np.float32)})[0]
    assert np.max(np.abs(y - reference.evaluate(x).outputs)) < 1e-6


def test_greenhouse_export_mean_and_variance_identity(greenhouse_run):
    res, _ = greenhouse_run
    assert [o.name for o in res.outputs] == ["inside_temperature", "inside_humidity"]
    for o in res.outputs:
        # same mean: the difference of two independent RQMC means covers 0, widened by the quadrature error
        d, allowance = o.mean_change, o.mean_allowance
        assert o.mean_agrees and d.ci_low - allowance <= 0 <= d.ci_high + allowance
        # Var after = σ² − τ̄²_ℓ, each side with its own interval
        vi = o.variance_identity
        assert vi.agree and vi.difference.covers(0.0)
        # and the same identity from the source audit's own total index of the integrated input
        tau = o.before.total_index[1].value.estimate * o.before.variance.estimate
        assert abs(o.after.variance.estimate - (o.before.variance.estimate - tau)) < 4 * vi.difference.std_error
        assert o.after.mean_dimension.estimate < o.before.mean_dimension.estimate


@pytest.mark.parametrize("name", ["greenhouse_v1.onnx", "greenhouse_v1.pt", "greenhouse_v1.pt2"])
def test_frozen_export_is_bit_for_bit(tmp_path, name):
    out = tmp_path / ("frozen" + Path(name).suffix)
    res = simplify_model(ZOO / name, str(SPEC), freeze=["wind_speed=6.5", "vent_opening"], path=out, check=False,
                         seed=2)  # fmt: skip
    spec = load_spec(SPEC)
    rng = np.random.default_rng(8)
    kept = [j for j in range(8) if j not in (2, 7)]
    x = np.column_stack([spec.laws[j].ppf(rng.random(257)) for j in kept]).astype(np.float32)
    full = np.empty((257, 8), dtype=np.float32)
    full[:, kept], full[:, 7], full[:, 2] = x, 6.5, 0.5  # U(0, 1): median 0.5
    if name.endswith(".onnx"):
        y = ort.InferenceSession(str(out)).run(None, {"x": x})[0]
        ref = ort.InferenceSession(str(ZOO / name)).run(None, {"x": full})[0]
    else:
        load = (lambda p: torch.export.load(p).module()) if name.endswith(".pt2") else torch.jit.load
        with torch.no_grad():
            y = load(str(out))(torch.from_numpy(x)).numpy()
            ref = load(str(ZOO / name))(torch.from_numpy(full)).numpy()
    assert y.dtype == np.float32 and np.array_equal(y, ref)
    assert [f["value"] for f in res.written["metadata"]["frozen"]] == [0.5, 6.5]


def test_a_converted_scikit_learn_regressor(tmp_path):
    # outside the zoo: an MLP regressor fitted on scikit-learn's bundled diabetes data, converted by skl2onnx
    # (its graph casts, multiplies and reshapes in its own way); inputs N(0, 1) after scaling
    from skl2onnx import to_onnx
    from sklearn.datasets import load_diabetes
    from sklearn.neural_network import MLPRegressor

    x, y = load_diabetes(return_X_y=True)
    x = (x - x.mean(0)) / x.std(0)
    reg = MLPRegressor(hidden_layer_sizes=(12,), activation="tanh", max_iter=300, random_state=0).fit(x, y / 100)
    source = tmp_path / "diabetes.onnx"
    source.write_bytes(to_onnx(reg, x[:1].astype(np.float32), target_opset=17).SerializeToString())
    out = tmp_path / "diabetes-simplified.onnx"
    res = simplify_model(source, "normal", integrate=["X[2]"], path=out, output_dtype="float64", points=512,
                         seed=6)  # fmt: skip
    o = res.outputs[0]
    assert o.variance_identity.agree and o.mean_agrees
    assert 1 <= o.after.mean_dimension.estimate <= 9  # ν may rise when an additive input leaves (9 inputs left)
    nodes = res.written["metadata"]["integrated"][0]["nodes"]
    rows = np.random.default_rng(1).standard_normal((64, 9))
    reference = PreIntegratedModel(open_model(str(source)), [Law("normal")] * 10, 2, nodes).evaluate(rows).outputs
    got = ort.InferenceSession(str(out)).run(None, {"X": rows.astype(np.float32)})[0]
    assert np.max(np.abs(got - reference)) < 1e-6
