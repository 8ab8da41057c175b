"""Tests of pre-integration (audit.quadrature) and the advise workflow (audit.advice).

Reference values and where they come from:

- Gaussian integral of Φ: E Φ(a + bZ) = Φ(a / √(1 + b²)), Z ~ N(0, 1) (common
  practice, no source). Integrating x_ℓ out of Φ(s θᵀx − t) therefore gives
  the ridge Φ((s θ_{−ℓ}ᵀ x_{−ℓ} − t) / √(1 + s² θ_ℓ²)), whose exact ANOVA
  follows from its Hermite expansion (tests/exact.py, DESIGN.md §2).
- Ishigami function: analytic variance terms from "An importance
  quantification technique in uncertainty analysis for computer models",
  Proc. ISUMA '90, 1990 (tests/exact.py).
- Var E[f | x_{−ℓ}] = σ² − τ̄²_ℓ and the freezing error 2 τ̄²_u ≤ 2 Σ_{j∈u} τ̄²_j
  follow from the ANOVA decomposition (common practice, no source).
- Gauss rules with m nodes integrate polynomials of degree ≤ 2m − 1 exactly
  (common practice, no source).

Statistical checks use fixed seeds; tolerances are the estimators' own 95 %
intervals or a stated multiple of their standard errors. Over seeds 0..19 the
95 % interval of ν after on the Φ ridge covered the exact value for 48 of 55
candidates (87 %, R = 8; the project's coverage target is 85 %), which is why
only the top candidate is held to its interval and the others to 4 standard
errors.
"""

from __future__ import annotations

import io
import json
import math
from pathlib import Path

import exact
import numpy as np
import pytest
from rich.console import Console
from scipy.special import ndtr

from audit import Law, audit_function
from audit.errors import UserError
from audit.inputs import load_spec
from audit.models.open import open_model
from audit.models.python import PythonModel
from audit.nodes import choose_nodes
from audit.quadrature import MAX_NODES, PreIntegrated, PreIntegratedModel, preintegrate
from audit.report import CAUTION, make_console, markdown, render
from audit.report.text import fmt
from audit.results import AdviceResult
from audit.studies import advise_function, advise_model, prepare_advice
from model_zoo.functions import ishigami

ZOO = Path(__file__).resolve().parent.parent / "model_zoo"
RIDGE = json.loads((ZOO / "validation.json").read_text())["models"]["ridge_phi"]["parameters"]
THETA, SCALE, SHIFT = np.array(RIDGE["theta"]), float(RIDGE["scale"]), float(RIDGE["shift"])
NORMAL6 = [Law("normal")] * 6


def phi_ridge(x: np.ndarray) -> np.ndarray:
    return ndtr(SCALE * (x @ THETA) - SHIFT)


def reduced_ridge(x_rest: np.ndarray, index: int) -> np.ndarray:
    """Closed form of Φ(s θᵀx − t) with x_index integrated out."""
    rest = np.delete(THETA, index)
    return ndtr((SCALE * (x_rest @ rest) - SHIFT) / math.sqrt(1 + SCALE**2 * THETA[index] ** 2))


def reduced_exact(index: int) -> dict:
    """Exact ANOVA of the reduced ridge: g(z) with z = uᵀx_{−ℓ}, u the unit vector along θ_{−ℓ}."""
    rest = np.delete(THETA, index)
    r = float(np.linalg.norm(rest))
    c = math.sqrt(1 + SCALE**2 * THETA[index] ** 2)
    return exact.ridge_indices(lambda z: ndtr((SCALE * r * z - SHIFT) / c), rest)


# ----------------------------------------------------------------------------- the evaluator


def test_preintegrated_phi_ridge_matches_closed_form():
    x = np.random.default_rng(0).standard_normal((2000, 5)) * 1.5
    for index in range(6):
        g = PreIntegrated(phi_ridge, NORMAL6, index, nodes=32)
        assert g.cost == 32
        np.testing.assert_allclose(g(x), reduced_ridge(x, index), rtol=0, atol=1e-8)


def test_preintegrated_returns_what_the_function_returns():
    laws = [
        Law("uniform", {"low": -1, "high": 2}),
        Law("normal", {"mean": 1, "sd": 2}),
        Law("uniform"),
    ]

    # x1 ~ N(1, 4): E[x1] = 1, E[x1²] = 5; a 3-node Gauss rule is exact for degree ≤ 5
    def two(x):
        return np.stack([x[:, 0] * x[:, 1], x[:, 1] ** 2 + x[:, 2]], axis=1)

    x = np.random.default_rng(1).random((50, 2))
    g = PreIntegrated(two, laws, 1, nodes=3)
    np.testing.assert_allclose(g(x), np.stack([x[:, 0], 5 + x[:, 1]], axis=1), atol=1e-12)
    # batching does not change the answer
    np.testing.assert_allclose(
        PreIntegrated(two, laws, 1, nodes=3, max_rows=7)(x), g(x), atol=1e-15
    )
    # an evaluator returning a dict of arrays gives a dict back
    ev = PreIntegrated(lambda X: {"a": two(X), "b": X[:, :1] ** 2}, laws, 1, nodes=3)
    out = ev(x)
    assert set(out) == {"a", "b"} and out["b"].shape == (50, 1)
    np.testing.assert_allclose(out["a"], g(x), atol=1e-15)
    # a model gives a model with d - 1 inputs
    pm = preintegrate(PythonModel(two, 3, source="two"), laws, 1, 3)
    assert isinstance(pm, PreIntegratedModel)
    assert pm.inputs[0].units == 2 and pm.feature_names() == ["x[0]", "x[2]"]
    np.testing.assert_allclose(pm.evaluate(x).outputs, g(x), atol=1e-15)
    assert g(np.zeros((0, 2))).shape == (0, 2)


def test_preintegrated_onnx_network():
    # ridge_phi.onnx computes Φ(s θᵀx − t) in float32 (its model card): agree to float32 precision
    model = open_model(str(ZOO / "ridge_phi.onnx"))
    pm = PreIntegratedModel(model, NORMAL6, 1, nodes=32)
    x = np.random.default_rng(2).standard_normal((500, 5))
    np.testing.assert_allclose(pm.evaluate(x).outputs[:, 0], reduced_ridge(x, 1), atol=2e-6)


def test_bad_arguments_are_refused():
    with pytest.raises(ValueError, match=r"valid: 0\.\.5"):
        PreIntegrated(phi_ridge, NORMAL6, 6)
    with pytest.raises(ValueError, match=rf"1\.\.{MAX_NODES}"):
        PreIntegrated(phi_ridge, NORMAL6, 0, nodes=MAX_NODES + 1)
    with pytest.raises(ValueError, match="at least 2 inputs"):
        PreIntegrated(lambda x: x[:, 0], [Law("normal")], 0)
    with pytest.raises(ValueError, match=r"\(n, 5\)"):
        PreIntegrated(phi_ridge, NORMAL6, 0)(np.zeros((3, 6)))
    with pytest.raises(UserError, match="quadrature node"), np.errstate(divide="ignore"):
        PreIntegrated(lambda x: 1 / (x[:, 0] - x[:, 0]), NORMAL6, 0, nodes=4)(np.zeros((2, 5)))


def test_choose_nodes_exact_rule_and_step():
    # degree 3 in x0: the 2-node rule is exact, so 2 and 4 nodes agree to rounding
    def cubic(x):
        return x[:, 0] ** 3 * x[:, 1] + x[:, 1]

    check = choose_nodes(cubic, [Law("normal")] * 2, 0, nodes=2, tolerance=1e-10)
    assert check.converged and check.nodes == 2 and check.max_error < 1e-10
    # a step in x0: Gauss rules never settle, the cap is used and the check says so
    step = choose_nodes(
        lambda x: (x.sum(axis=1) > 0.3).astype(float), [Law("normal")] * 3, 0, nodes=16, cap=64
    )
    assert not step.converged and step.nodes == 64 and step.max_error > 1e-3
    assert step.evaluations == 64 * (16 + 32 + 64)


# ----------------------------------------------------------------------------- exact cases


@pytest.fixture(scope="module")
def ridge_advice() -> AdviceResult:
    return advise_function(
        phi_ridge, "normal", dim=6, points=1024, replicates=8, seed=0, gain_points=(256, 1024, 4096)
    )


def test_advise_phi_ridge_against_exact(ridge_advice):
    out = ridge_advice.outputs[0]
    # exact ν after for every candidate, from the Hermite expansion of the reduced ridge
    exact_nu = {c.feature: reduced_exact(int(c.feature[1:]))["nu"] for c in out.preintegrate}
    top = out.preintegrate[0]
    assert top.feature == f"x{int(np.argmax(np.abs(THETA)))}"  # the largest |θ_ℓ|
    assert top.mean_dimension_after.covers(exact_nu[top.feature])
    assert exact_nu[top.feature] == min(exact_nu.values())  # ranking by ν after is right
    for c in out.preintegrate:
        nu = c.mean_dimension_after
        assert abs(nu.estimate - exact_nu[c.feature]) < 4 * nu.std_error
        assert c.variance_identity.agree and c.converged and 4 <= c.nodes <= 32
        assert c.quadrature_error < 1e-3
    # ν drops: the audit's own ν of f is the exact 1.2376 within its interval (validation.json)
    assert out.audit.mean_dimension.ci_low > top.mean_dimension_after.ci_high


def test_variance_identity_on_ishigami():
    spec = load_spec(ZOO / "ishigami.toml")
    res = advise_function(ishigami, spec, points=1024, replicates=8, seed=3, gain_points=())
    ref = exact.ishigami()
    var, total = ref["variance"], ref["total"] * ref["variance"]
    out = res.outputs[0]
    assert {c.feature for c in out.preintegrate} == {"x1", "x2", "x3"}
    for c in out.preintegrate:
        j = int(c.feature[1:]) - 1
        vi = c.variance_identity
        assert vi.agree, c.feature
        assert vi.measured.covers(var - total[j]), c.feature
        assert vi.predicted.covers(var - total[j]), c.feature
    # x1 out leaves a sin² x2 (ν = 1 exactly) and so does x3 out (an additive function)
    assert out.best.feature in ("x1", "x3") and out.best.mean_dimension_after.covers(1.0)
    assert out.rqmc_gain is None and res.design["evaluations_by_phase"]["gain"] == 0


# ----------------------------------------------------------------------------- steps


STEP_T = 0.3
STEP_LEAD = 0.7


def _step_theta(d: int) -> np.ndarray:
    th = np.full(d, math.sqrt(1 - STEP_LEAD**2) / math.sqrt(d - 1))
    th[0] = STEP_LEAD
    return th


def _step(theta):
    return lambda x: (x @ theta > STEP_T).astype(float)


def test_step_ridge_mean_dimension_trend():
    # ν of a step ridge grows like √d; integrating the leading input out leaves
    # Φ((θ_{−1}ᵀx − t)/θ_1), whose ν stays near 1 (exact: 1.07, 1.11, 1.12).
    # Gauss rules resolve a step only to O(1/m), so the cap (256 nodes) is used.
    nu_f, nu_g = [], []
    for d in (4, 16, 64):
        f = _step(_step_theta(d))
        a = audit_function(f, "normal", dim=d, estimator="fast", points=1024, replicates=8, seed=5)
        g = PreIntegrated(f, [Law("normal")] * d, 0, nodes=MAX_NODES)
        b = audit_function(
            g, "normal", dim=d - 1, estimator="fast", points=1024, replicates=8, seed=6
        )
        nu_f.append(a.outputs[0].mean_dimension)
        nu_g.append(b.outputs[0].mean_dimension)
    print("nu of f:", [fmt(e.estimate) for e in nu_f], "nu of f~:", [fmt(e.estimate) for e in nu_g])
    assert nu_f[2].ci_low > 2.5 * nu_f[0].ci_high  # grows (√16 = 4 in the limit)
    assert all(e.ci_high < 1.6 for e in nu_g)  # order 1 at every d
    assert nu_g[2].estimate - nu_g[0].estimate < 0.25 * (nu_f[2].estimate - nu_f[0].estimate)


def test_rqmc_gain_on_step():
    d = 16
    res = advise_function(
        _step(_step_theta(d)),
        "normal",
        dim=d,
        points=256,
        replicates=8,
        seed=8,
        top=1,
        node_cap=64,
        gain_points=(256, 1024, 4096),
    )
    out = res.outputs[0]
    gain = out.rqmc_gain
    assert out.best.feature == "x0" and gain.feature == "x0"
    assert not out.best.converged and any("not smooth" in n for n in res.notices)
    print(
        "RQMC variance ratio on the step:",
        [fmt(r.ratio) for r in gain.rows],
        "slopes",
        gain.slope_before,
        gain.slope_after,
    )
    assert gain.ratio > 1 and all(r.ratio > 1 for r in gain.rows)
    assert gain.evaluations_after == gain.evaluations_before * gain.nodes == 4096 * 8 * 64


# ----------------------------------------------------------------------------- freezing


_rng = np.random.default_rng(7)
_W = _rng.standard_normal((6, 8)) / math.sqrt(8)
_W[:, 5:] *= 0.01  # x5, x6, x7 barely reach the hidden layer
_B = _rng.standard_normal(6) * 0.5
_V = _rng.standard_normal(6)


def small_net(x: np.ndarray) -> np.ndarray:
    """A tanh layer where 3 of 8 inputs have tiny weights, plus tiny interactions among them.

    The interactions make the bound strict: Σ_j τ̄²_j counts each pair twice, τ̄²_u once.
    """
    tiny = x[:, 5] * x[:, 6] + x[:, 6] * x[:, 7] + x[:, 5] * x[:, 7]
    return np.tanh(x @ _W.T + _B) @ _V + 0.003 * tiny


@pytest.fixture(scope="module")
def net_advice() -> AdviceResult:
    return advise_function(
        small_net,
        "normal",
        dim=8,
        points=1024,
        replicates=8,
        seed=1,
        top=1,
        gain_points=(256, 1024, 4096),
    )


def test_freeze_bound_holds(net_advice):
    out = net_advice.outputs[0]
    assert {f.feature for f in out.freeze} == {"x5", "x6", "x7"}
    assert all(f.grouped and f.total_index.ci_high < 1e-3 for f in out.freeze)
    g = out.freeze_group
    assert sorted(g.features) == ["x5", "x6", "x7"]
    print("freeze bound", g.bound_normalised, "measured", g.measured_normalised)
    assert g.holds
    assert g.measured_normalised.estimate <= g.bound_normalised.ci_high
    assert g.measured.estimate <= g.bound.ci_high
    assert g.bound_normalised.ci_high <= g.budget
    assert net_advice.design["evaluations_by_phase"]["freeze_check"] == 1024 * 8 * 2


# ----------------------------------------------------------------------------- JSON and reports


def test_json_round_trip(net_advice):
    d = net_advice.to_dict()
    assert d["tool"] == "netdim" and d["schema"] == 1 and d["kind"] == "advice"
    entry = d["outputs"][0]
    for key in (
        "preintegrate",
        "freeze",
        "freeze_group",
        "rqmc_gain",
        "mean_dimension",
        "total_index",
    ):
        assert key in entry
    cand = entry["preintegrate"][0]
    assert set(cand["mean_dimension_after"]) == {"estimate", "ci_low", "ci_high", "std_error"}
    for key in ("feature", "variance_after", "variance_identity", "nodes", "quadrature_error"):
        assert key in cand
    text = json.dumps(d)
    back = AdviceResult.from_dict(json.loads(text))
    assert back.to_dict() == json.loads(text)
    assert back.outputs[0].freeze_group.holds == net_advice.outputs[0].freeze_group.holds
    with pytest.raises(ValueError, match="advice"):
        AdviceResult.from_dict({**d, "kind": "audit"})
    s = sum(v for v in d["design"]["evaluations_by_phase"].values())
    assert d["design"]["evaluations"] == s


def _render(result: AdviceResult, encoding: str = "utf-8") -> str:
    buf = io.TextIOWrapper(io.BytesIO(), encoding=encoding, errors="strict")
    console = (
        make_console(buf, width=80)
        if encoding == "utf-8"
        else Console(
            file=buf,
            width=80,
            color_system=None,
            no_color=True,
            highlight=False,
            markup=False,
            emoji=False,
        )
    )
    render(result, console)
    buf.flush()
    return buf.buffer.getvalue().decode(encoding)


@pytest.mark.parametrize("fixture", ["net_advice", "ridge_advice"])
def test_terminal_report_fits_and_shows_the_numbers(fixture, request):
    res: AdviceResult = request.getfixturevalue(fixture)
    text = _render(res)
    assert "\x1b[" not in text
    assert max(len(line) for line in text.splitlines()) <= 80
    out = res.outputs[0]
    best = out.best
    flat = " ".join(text.split())
    assert fmt(out.audit.mean_dimension.estimate) in text
    assert fmt(best.mean_dimension_after.estimate) in text
    assert fmt(best.variance_identity.measured.estimate) in text
    assert fmt(out.rqmc_gain.rows[-1].ratio, 3) in text
    if out.freeze_group is not None:
        assert fmt(out.freeze_group.bound.estimate) in flat
        assert fmt(out.freeze_group.measured.estimate) in flat
    assert " ".join(CAUTION.split()) in flat
    md = markdown(res)
    assert fmt(best.mean_dimension_after.estimate) in md and CAUTION in md
    assert md.count("| input |") >= 1
    ascii_text = _render(res, "ascii")
    assert ascii_text.isascii() and max(len(line) for line in ascii_text.splitlines()) <= 80


# ----------------------------------------------------------------------------- settings


def test_settings_are_checked():
    model = PythonModel(phi_ridge, 6, source="ridge")
    for options, words in [
        ({"gain_points": (300, 1024)}, "powers of two"),
        ({"gain_points": (1024,)}, "two point counts"),
        ({"top": -1}, "`top`"),
        ({"nodes": 0}, "`nodes`"),
        ({"nodes": 64, "node_cap": 32}, "node cap"),
        ({"freeze_budget": 0}, "`freeze_budget`"),
        ({"tolerance": "x"}, "`tolerance`"),
    ]:
        with pytest.raises(UserError, match=words):
            prepare_advice(model, "normal", **options)
    plan = prepare_advice(model, "normal", points=1000, seed=1)
    assert plan.setup.design.points == 1024 and plan.evaluations > plan.setup.evaluations


def test_single_input_and_top_zero():
    res = advise_model(
        PythonModel(lambda x: x[:, 0] ** 2, 1, source="square"), "normal", points=256, seed=2
    )
    assert res.outputs[0].preintegrate == [] and res.outputs[0].rqmc_gain is None
    assert any("single input" in n for n in res.notices)
    text = _render(res)
    assert max(len(line) for line in text.splitlines()) <= 80
