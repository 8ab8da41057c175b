"""The zoo's validation nets against their exact answers, and netdim's audits of the zoo against them.

* the validation networks equal their closed forms, and their exact ANOVA values
  in ``validation.json`` agree with an independent Hermite-expansion computation;
* audit-based checks (netdim's own estimator on the zoo): the exact validation
  answers are recovered, and each surrogate ranks its inputs like its simulator.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import special, stats

torch = pytest.importorskip("torch")
ort = pytest.importorskip("onnxruntime")

from zoofiles import MODELS, VALIDATION, VALIDATION_NETS, ZOO, run_file  # noqa: E402

from model_zoo import greenhouse  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore:.*is deprecated:DeprecationWarning")


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
        got = run_file(name, fmt, x)[:, 0]
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
            a = np.concatenate([[0.0, special.ndtr(b)], stats.norm.pdf(b) * h[:-2] / np.sqrt(k * (k - 1.0))])
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
    r = audit.audit_model(str(ZOO / f"{name}.onnx"), spec, points=4096, replicates=10, seed=17, layers="all")
    out = r.outputs[0]

    def near(e, value):
        return abs(e.estimate - value) <= 4.0 * e.std_error + 1e-12

    assert near(out.mean_dimension, ex["mean_dimension"]), (out.mean_dimension, ex)
    for fe, value in zip(out.total_index, ex["total_index"], strict=True):
        assert near(fe.value, value), (fe, value)
    if name == "additive":
        # every tanh unit sees one input only: mean dimension 1
        units = [u for layer in r.layers for u in layer.units if u.mean_dimension is not None]
        tanh_units = [u for layer in r.layers if layer.op.lower().startswith("tanh") for u in layer.units]
        assert tanh_units, [layer.op for layer in r.layers]
        for u in units:
            assert near(u.mean_dimension, 1.0), u
