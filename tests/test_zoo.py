"""Tests of the model zoo: shipped files, their metrics, the simulator, the validation nets.

* every shipped file loads with its own runtime (onnxruntime, torch.jit.load,
  torch.export.load, state dict + class) and all formats of a model agree;
* every card metric is recomputed from the shipped weights on the held-out data
  rebuilt from the seed recorded in ``cards.json``;
* rebuilding small models reproduces their metric within a stated tolerance;
* the validation networks equal their closed forms, and their exact ANOVA values
  in ``validation.json`` agree with an independent Hermite-expansion computation;
* audit-based checks (netdim's own estimator on the zoo) run when ``audit``
  provides ``audit_model`` / ``audit_function``.
"""

from __future__ import annotations

import importlib
import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy import special, stats

torch = pytest.importorskip("torch")
ort = pytest.importorskip("onnxruntime")

from model_zoo import greenhouse  # noqa: E402

ZOO = Path(__file__).resolve().parents[1] / "model_zoo"
CARDS = json.loads((ZOO / "cards.json").read_text(encoding="utf-8"))
VALIDATION = json.loads((ZOO / "validation.json").read_text(encoding="utf-8"))
MODELS = CARDS["models"]
TRAINED = [n for n, r in MODELS.items() if r["task"] != "validation"]
VALIDATION_NETS = list(VALIDATION["models"])
SIZE_LIMIT = 5 * 1024 * 1024
pytestmark = pytest.mark.filterwarnings("ignore:.*is deprecated:DeprecationWarning")


# ----------------------------------------------------------------------------- helpers


def _spec(name: str) -> dict:
    return tomllib.loads((ZOO / f"{name}.toml").read_text(encoding="utf-8"))


def _sample_spec(name: str, n: int, seed: int) -> np.ndarray:
    """Draw n rows from the input spec of ``name`` (independent laws), read with tomllib."""
    spec = _spec(name)["inputs"]
    rng = np.random.default_rng(seed)
    entries = spec.get("feature") or [{}] * spec["count"]
    cols = []
    for e in entries:
        law = {k: v for k, v in spec.items() if k not in ("count", "names", "feature")}
        law.update(e)
        if law["law"] == "uniform":
            cols.append(rng.uniform(law["low"], law["high"], n))
        elif law["law"] == "normal":
            cols.append(rng.normal(law["mean"], law["sd"], n))
        else:
            raise AssertionError(f"unexpected law {law['law']} in {name}.toml")
    return np.column_stack(cols)


def _shaped(name: str, x: np.ndarray) -> np.ndarray:
    return x.reshape(-1, *MODELS[name]["input_shape"]).astype(np.float32)


def _run(name: str, fmt: str, x: np.ndarray) -> np.ndarray:
    """Run one shipped file with its own runtime (no zoo code)."""
    rec = MODELS[name]
    path = ZOO / rec["formats"][fmt]
    xs = _shaped(name, x)
    if fmt == "onnx":
        session = ort.InferenceSession(str(path), providers=["CPUExecutionProvider"])
        return session.run(None, {session.get_inputs()[0].name: xs})[0].astype(np.float64)
    with torch.no_grad():
        if fmt == "torchscript":
            module = torch.jit.load(str(path))
        elif fmt == "torch-export":
            module = torch.export.load(str(path)).module()
        elif fmt == "state-dict":
            module_name, _, cls_name = rec["class"].partition(":")
            cls = getattr(importlib.import_module(module_name), cls_name)
            module = cls(**rec["arguments"])
            module.load_state_dict(torch.load(str(path), weights_only=True))
            module.eval()
        else:
            raise AssertionError(fmt)
        return module(torch.from_numpy(xs)).double().numpy()


def _r2(y: np.ndarray, pred: np.ndarray) -> np.ndarray:
    y, pred = y.reshape(len(y), -1), pred.reshape(len(pred), -1)
    return 1.0 - ((y - pred) ** 2).sum(0) / ((y - y.mean(0)) ** 2).sum(0)


def _held_out(name: str) -> tuple[np.ndarray, np.ndarray]:
    """Held-out data rebuilt from the seed and fraction recorded in cards.json."""
    h = MODELS[name]["held_out"]
    if h["kind"] == "simulator":
        x = greenhouse.sample_inputs(h["rows"], seed=h["seed"])
        return x, greenhouse.simulate(x)
    from sklearn import datasets
    from sklearn.model_selection import train_test_split

    data = datasets.load_digits() if name.startswith("digits") else datasets.load_diabetes()
    strat = data.target if h["stratified"] else None
    _, x_te, _, y_te = train_test_split(
        data.data, data.target, test_size=h["fraction"], random_state=h["seed"], stratify=strat
    )
    assert len(y_te) == h["rows"]
    return x_te, y_te


def _metrics(name: str, fmt: str = "onnx") -> dict[str, float]:
    x, y = _held_out(name)
    pred = _run(name, fmt, x)
    if MODELS[name]["task"] == "classification":
        return {"accuracy": float((pred.argmax(1) == y).mean())}
    r2 = _r2(y, pred)
    if name.startswith("greenhouse"):
        return {f"r2_{n}": float(v) for (n, _), v in zip(greenhouse.OUTPUTS, r2, strict=True)}
    return {"r2": float(r2[0])}


# ----------------------------------------------------------------------------- shipped files


def test_catalogue_is_complete_and_small():
    expected = {"greenhouse_v1", "greenhouse_v2", "digits_mlp", "digits_cnn", "diabetes_mlp"}
    assert expected | set(VALIDATION_NETS) == set(MODELS)
    assert set(VALIDATION_NETS) == {"ridge_phi", "ridge_relu", "additive"}
    files = []
    for name, rec in MODELS.items():
        assert {"onnx", "torchscript"} <= set(rec["formats"]), name
        files += [ZOO / f for f in rec["formats"].values()]
        files += [ZOO / f"{name}.toml", ZOO / f"{name}.md"]
    assert set(MODELS["greenhouse_v1"]["formats"]) == {
        "onnx", "torchscript", "torch-export", "state-dict"
    }
    files += [ZOO / "cards.json", ZOO / "validation.json", ZOO / "README.md"]
    assert all(f.is_file() for f in files)
    assert sum(f.stat().st_size for f in files) < SIZE_LIMIT  # the brief's 5 MB limit


@pytest.mark.parametrize("name", list(MODELS))
def test_formats_agree(name):
    x = _sample_spec(name, 65, seed=3)
    ref = _run(name, "onnx", x)
    assert ref.ndim == 2 and ref.shape[0] == 65
    assert np.all(np.isfinite(ref))
    scale = float(np.max(np.abs(ref)))
    for fmt in MODELS[name]["formats"]:
        out = _run(name, fmt, x)
        # float32 networks in two runtimes: agree to 1e-5 relative (common practice, no source)
        np.testing.assert_allclose(out, ref, rtol=1e-5, atol=1e-5 * scale, err_msg=fmt)
    # dynamic batch axis: one row alone gives the same answer as inside a batch
    np.testing.assert_allclose(_run(name, "onnx", x[:1]), ref[:1], rtol=1e-5, atol=1e-5 * scale)


@pytest.mark.parametrize("name", list(MODELS))
def test_spec_matches_model(name):
    spec = _spec(name)
    rec = MODELS[name]
    d = math.prod(rec["input_shape"])
    assert spec["inputs"]["count"] == d
    y = _run(name, "onnx", _sample_spec(name, 2, seed=0))
    assert len(spec["outputs"]["names"]) == y.shape[1]
    card = (ZOO / f"{name}.md").read_text(encoding="utf-8")
    assert CARDS["caution"] in card
    assert "not a safety validation" in CARDS["caution"]


def test_spec_files_parse_with_netdim():
    import audit

    for name, rec in MODELS.items():
        spec = audit.load_spec(ZOO / f"{name}.toml")
        assert spec.dim == math.prod(rec["input_shape"]), name
    gh = audit.load_spec(ZOO / "greenhouse_v1.toml")
    assert gh.model["class"] == MODELS["greenhouse_v1"]["class"]
    assert gh.model["arguments"] == MODELS["greenhouse_v1"]["arguments"]


def test_state_dict_spec_names_the_class():
    model = _spec("greenhouse_v1")["model"]
    assert model["class"] == "model_zoo.nets:GreenhouseMLP"
    x = _sample_spec("greenhouse_v1", 9, seed=4)
    np.testing.assert_allclose(
        _run("greenhouse_v1", "state-dict", x), _run("greenhouse_v1", "onnx", x), rtol=1e-5
    )


def test_torchscript_files_record_their_input_shape():
    for name, rec in MODELS.items():
        extra = {"netdim.json": ""}
        torch.jit.load(str(ZOO / rec["formats"]["torchscript"]), _extra_files=extra)
        assert json.loads(extra["netdim.json"])["input_shape"] == rec["input_shape"], name


@pytest.mark.parametrize("name", list(MODELS))
def test_netdim_opens_every_shipped_file(name):
    """netdim's own loaders open every file and evaluate it like the native runtime."""
    audit = pytest.importorskip("audit")
    if not hasattr(audit, "open_model"):
        pytest.skip("audit.open_model is not available yet")
    rec = MODELS[name]
    x = _sample_spec(name, 7, seed=8)
    ref = _run(name, "onnx", x)
    for fmt, file in rec["formats"].items():
        path = str(ZOO / file)
        kwargs = {}
        if fmt == "state-dict":
            kwargs = {"torch_class": rec["class"], "torch_arguments": rec["arguments"]}
        try:
            model = audit.open_model(path, **kwargs)
        except audit.UserError:
            if fmt != "torchscript":
                raise
            # TorchScript does not record input shapes; the zoo's archives carry it in
            # netdim.json, which the backend may not read yet: pass it explicitly.
            from audit.models import open_torch

            model = open_torch(path, input_shape=rec["input_shape"])
        assert sum(t.units for t in model.inputs) == x.shape[1], (fmt, model.inputs)
        got = model.evaluate(x).outputs
        np.testing.assert_allclose(got, ref, rtol=1e-5, atol=1e-5 * np.abs(ref).max(), err_msg=fmt)


# ----------------------------------------------------------------------------- metrics


@pytest.mark.parametrize("name", TRAINED)
def test_card_metric_is_reproduced_from_shipped_weights(name):
    got = _metrics(name)
    card = MODELS[name]["metrics"]
    assert set(got) == set(card)
    for key, value in got.items():
        if key == "accuracy":
            # argmax can flip on a float32 near-tie: allow one image
            assert abs(value - card[key]) <= 1.0 / MODELS[name]["held_out"]["rows"] + 1e-12
        else:
            # R² from the ONNX runtime vs. the training run's Torch: float32 rounding only
            assert value == pytest.approx(card[key], abs=1e-5)


def test_metrics_meet_the_brief():
    for name in ("greenhouse_v1", "greenhouse_v2"):
        assert min(MODELS[name]["metrics"].values()) >= 0.98, name
    # the retrained, wider v2 is the better surrogate on both outputs
    v1, v2 = MODELS["greenhouse_v1"]["metrics"], MODELS["greenhouse_v2"]["metrics"]
    assert all(v2[k] > v1[k] for k in v1)
    for name in ("digits_mlp", "digits_cnn"):
        assert MODELS[name]["metrics"]["accuracy"] >= 0.9, name
    # linear fits of this data reach R² ≈ 0.4-0.5 (from memory); a net must at least be useful
    assert 0.3 <= MODELS["diabetes_mlp"]["metrics"]["r2"] <= 0.7


@pytest.mark.parametrize("name", ["digits_mlp", "diabetes_mlp"])
def test_rebuild_reproduces_metric(name, tmp_path):
    pytest.importorskip("sklearn")
    from model_zoo import build

    result = build.build_model(name, tmp_path)
    rows = MODELS[name]["held_out"]["rows"]
    for key, shipped in MODELS[name]["metrics"].items():
        rebuilt = result.metrics[key]
        # Same seeds, one thread: on the build platform the rebuild is identical. Elsewhere
        # only float reduction order differs, which nudges the training path. Accuracy: allow
        # two binomial standard errors of the held-out accuracy. R²: its standard error at
        # R² ≈ 0.5 on 89 held-out rows is about 0.07 (delta method, common practice, no
        # source); allow less than one of them.
        binomial = math.sqrt(shipped * (1.0 - shipped) / rows)
        tol = 2.0 * binomial if key == "accuracy" else 0.05
        assert abs(rebuilt - shipped) <= tol, (key, rebuilt, shipped)
    assert (tmp_path / f"{name}.onnx").is_file() and (tmp_path / f"{name}.md").is_file()


# ----------------------------------------------------------------------------- simulator


def test_simulator_shapes_ranges_and_errors():
    x = greenhouse.sample_inputs(20000, seed=11)
    lo, hi = greenhouse.lower_bounds(), greenhouse.upper_bounds()
    assert np.all((x >= lo) & (x <= hi))
    y = greenhouse.simulate(x)
    assert y.shape == (20000, 2)
    np.testing.assert_array_equal(y[:, 0], greenhouse.simulate_temperature(x))
    np.testing.assert_array_equal(y[:, 1], greenhouse.simulate_humidity(x))
    # physically plausible (a closed house in full summer sun runs hot, never boiling)
    assert y[:, 0].min() > -10.0 and y[:, 0].max() < 80.0
    assert y[:, 1].min() > 0.0 and y[:, 1].max() <= 100.0
    # the house is warmer than outside on average (heating pipes, sun)
    assert np.mean(y[:, 0] > x[:, 0]) > 0.95
    with pytest.raises(ValueError, match="shape"):
        greenhouse.simulate(np.zeros((3, 7)))
    assert [f.name for f in greenhouse.FEATURES][:3] == [
        "outside_temperature", "solar_irradiance", "vent_opening"
    ]


def test_simulator_vent_kink_and_interactions():
    x = greenhouse.sample_inputs(500, seed=12)
    a, b = x.copy(), x.copy()
    a[:, 2], b[:, 2] = 0.0, greenhouse.VENT_THRESHOLD
    # below the threshold the vents do nothing at all
    np.testing.assert_array_equal(greenhouse.simulate(a), greenhouse.simulate(b))
    b[:, 2] = 0.8
    assert np.all(greenhouse.simulate(b)[:, 0] != greenhouse.simulate(a)[:, 0])

    def mixed(i: int, j: int) -> float:
        """|f(x_i', x_j') − f(x_i', x_j) − f(x_i, x_j') + f(x)| at the centre; 0 if additive."""
        lo, hi = greenhouse.lower_bounds(), greenhouse.upper_bounds()
        base = np.tile((lo + hi) / 2, (1, 1))
        p = [base.copy() for _ in range(4)]
        p[1][:, i] = hi[i]
        p[2][:, j] = hi[j]
        p[3][:, [i, j]] = hi[[i, j]]
        f = [greenhouse.simulate_temperature(q)[0] for q in p]
        return abs(f[3] - f[1] - f[2] + f[0])

    assert mixed(2, 7) > 0.5  # vent x wind
    assert mixed(1, 5) > 0.5  # irradiance x screen
    assert mixed(4, 7) == 0.0  # outside humidity does not touch the temperature


# ----------------------------------------------------------------------------- validation nets


def _closed_form(name: str, x: np.ndarray) -> np.ndarray:
    p = VALIDATION["models"][name]["parameters"]
    if p["kind"] == "ridge":
        z = p["scale"] * (x @ np.asarray(p["theta"])) - p["shift"]
        return special.ndtr(z) if p["link"] == "phi" else np.maximum(z, 0.0)
    w, c, a = (np.asarray(p[k]) for k in ("inner_weight", "inner_bias", "outer_weight"))
    return np.einsum("jk,njk->n", a, np.tanh(w * x[:, :, None] + c)) + p["outer_bias"]


@pytest.mark.parametrize("name", VALIDATION_NETS)
def test_validation_nets_equal_closed_form(name):
    x = np.random.default_rng(21).standard_normal((1000, 6))
    exact = _closed_form(name, x)
    for fmt in MODELS[name]["formats"]:
        got = _run(name, fmt, x)[:, 0]
        # float32 arithmetic on inputs of size ~3: 1e-5 absolute is ~100 float32 ulps
        np.testing.assert_allclose(got, exact, rtol=1e-5, atol=1e-5, err_msg=fmt)


def _hermite_table(z: np.ndarray, kmax: int) -> np.ndarray:
    """He_k(z)/√k!, k = 0..kmax (stable recurrence), shape (kmax + 1, len(z))."""
    h = np.zeros((kmax + 1, len(z)))
    h[0] = 1.0
    h[1] = z
    for k in range(1, kmax):
        h[k + 1] = (z * h[k] - math.sqrt(k) * h[k - 1]) / math.sqrt(k + 1)
    return h


def _ridge_from_hermite(a: np.ndarray, theta: np.ndarray) -> tuple[float, np.ndarray, np.ndarray]:
    """Variance, normalised total and first-order indices of Σ_k a_k He_k(θᵀx)/√k!."""
    k = np.arange(len(a))[1:]
    a2 = a[1:] ** 2
    var = a2.sum()
    total = np.array([(a2 * (1.0 - (1.0 - t * t) ** k)).sum() for t in theta]) / var
    first = np.array([(a2 * (t * t) ** k).sum() for t in theta]) / var
    return float(var), total, first


@pytest.mark.parametrize("name", VALIDATION_NETS)
def test_validation_exact_values_by_independent_method(name):
    """validation.json (quadrature of conditional means) vs. a Hermite expansion.

    Reference: the total-index formula for ridge functions of Gaussian inputs,
    τ̄²_j = Σ_k a_k² (1 − (1 − θ_j²)^k), is the one in DESIGN.md §2 (Hermite
    expansion; orthonormality of He_k/√k! under N(0, 1): common practice, no source).
    """
    entry = VALIDATION["models"][name]
    p, ex = entry["parameters"], entry["exact"]
    if p["kind"] == "ridge":
        theta = np.asarray(p["theta"])
        assert theta @ theta == pytest.approx(1.0, abs=1e-15)
        s, t = p["scale"], p["shift"]
        if p["link"] == "phi":
            # a_k = E[Φ(sZ − t) He_k(Z)/√k!] by 200-node Gauss-Hermite (smooth integrand)
            z, w = np.polynomial.hermite_e.hermegauss(200)
            w = w / w.sum()
            a = _hermite_table(z, 120) @ (w * special.ndtr(s * z - t))
            tol = 1e-9
        else:
            # g(z) = max(0, z + b), b = −t, s = 1: two Gaussian integrations by parts give
            # a_k = φ(b) He_{k−2}(−b)/√k! for k ≥ 2, a_1 = Φ(b) (common practice, no source)
            assert s == 1.0
            b, kmax = -t, 200000
            h = _hermite_table(np.array([-b]), kmax)[:, 0]
            k = np.arange(2, kmax + 1)
            a = np.concatenate(
                [[0.0, special.ndtr(b)], stats.norm.pdf(b) * h[:-2] / np.sqrt(k * (k - 1.0))]
            )
            # closed-form variance of max(0, Z + b) (common practice, no source)
            m1 = b * special.ndtr(b) + stats.norm.pdf(b)
            m2 = (1 + b * b) * special.ndtr(b) + b * stats.norm.pdf(b)
            assert ex["variance"] == pytest.approx(m2 - m1 * m1, rel=1e-10)
            assert ex["mean"] == pytest.approx(m1, rel=1e-10)
            # the series tail beyond k decays like k^(-3/2): 200000 terms leave < 1e-6
            tol = 2e-6
        var, total, first = _ridge_from_hermite(a, theta)
        assert ex["variance"] == pytest.approx(var, rel=tol)
        np.testing.assert_allclose(ex["total_index"], total, atol=tol)
        np.testing.assert_allclose(ex["first_order"], first, atol=tol)
        assert ex["mean_dimension"] == pytest.approx(total.sum(), abs=6 * tol)
        assert 1.05 < ex["mean_dimension"] < 2.0  # the ridge nets are not additive
    else:
        # trapezoidal rule on a fine grid: geometric convergence for integrands analytic in a
        # strip and decaying like the normal density (common practice, no source); tanh's poles
        # make Gauss-Hermite converge slowly here
        z = np.linspace(-12.0, 12.0, 9601)
        w = stats.norm.pdf(z) * (z[1] - z[0])
        wi, c, a = (np.asarray(p[k]) for k in ("inner_weight", "inner_bias", "outer_weight"))
        g = np.einsum("jk,njk->jn", a, np.tanh(wi[None] * z[:, None, None] + c[None]))
        parts = g**2 @ w - (g @ w) ** 2
        assert ex["variance"] == pytest.approx(parts.sum(), rel=1e-9)
        np.testing.assert_allclose(ex["total_index"], parts / parts.sum(), atol=1e-9)
        assert ex["first_order"] == ex["total_index"]
        assert ex["mean_dimension"] == 1.0


# ----------------------------------------------------------------------------- audit-based


def _audit_api():
    import audit

    return audit


@pytest.mark.parametrize("name", ["greenhouse_v1", "greenhouse_v2"])
def test_surrogate_ranks_inputs_like_the_simulator(name):
    """Kendall τ ≥ 0.8 between the total indices of surrogate and simulator, per output."""
    audit = _audit_api()
    spec = audit.load_spec(ZOO / f"{name}.toml")
    options = {"points": 2048, "replicates": 4, "seed": 5}
    truth = audit.audit_function(greenhouse.simulate, spec, **options)
    surrogate = audit.audit_model(str(ZOO / f"{name}.onnx"), spec, layers="none", **options)
    for o_true, o_net in zip(truth.outputs, surrogate.outputs, strict=True):
        a = [f.value.estimate for f in o_true.total_index]
        b = [f.value.estimate for f in o_net.total_index]
        tau = stats.kendalltau(a, b).statistic
        print(f"{name} / {o_true.name}: Kendall τ = {tau:.3f}")
        print("  simulator:", [f.feature for f in o_true.ranked()])
        print("  surrogate:", [f.feature for f in o_net.ranked()])
        assert tau >= 0.8, o_true.name


@pytest.mark.parametrize("name", VALIDATION_NETS)
def test_audit_recovers_exact_validation_answers(name):
    """netdim's estimates are within 4 standard errors of the exact values.

    4 SE of a Student-t with R − 1 = 9 degrees of freedom leaves a 0.3 % chance per check
    of a false alarm (common practice, no source); seeds are fixed.
    """
    audit = _audit_api()
    ex = VALIDATION["models"][name]["exact"]
    spec = audit.load_spec(ZOO / f"{name}.toml")
    r = audit.audit_model(
        str(ZOO / f"{name}.onnx"), spec, points=4096, replicates=10, seed=17, layers="all"
    )
    out = r.outputs[0]

    def near(e, value):
        return abs(e.estimate - value) <= 4.0 * e.std_error + 1e-12

    assert near(out.mean_dimension, ex["mean_dimension"]), (out.mean_dimension, ex)
    for fe, value in zip(out.total_index, ex["total_index"], strict=True):
        assert near(fe.value, value), (fe, value)
    if name == "additive":
        # every tanh unit sees one input only: mean dimension 1
        units = [u for layer in r.layers for u in layer.units if u.mean_dimension is not None]
        tanh_units = [
            u for layer in r.layers if layer.op.lower().startswith("tanh") for u in layer.units
        ]
        assert tanh_units, [layer.op for layer in r.layers]
        for u in units:
            assert near(u.mean_dimension, 1.0), u
