"""Grouped audits of models as practitioners have them: image patches of the digits CNN, and a
Friedman #1 surrogate audited under a spec made from its own training data."""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy import special, stats

from audit import audit_model
from audit.inputs import parse_spec
from audit.inputs.fromdata import spec_from_table
from audit.inputs.tables import read_table

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


def test_digits_cnn_patches_cost_18_of_66_and_rank_like_summed_pixels(capsys):
    # 2x2 patches of the (1, 8, 8) input: 16 groups, so N(16 + 2) evaluations against N(64 + 2) per
    # pixel, read from the evaluation counts of one run asking for both views. The ranking of the
    # patches by total index must agree with the per-pixel totals summed over each patch (Kendall τ,
    # scipy.stats.kendalltau; a patch's total is at most that sum, equal without interactions inside it).
    doc = tomllib.loads((ZOO / "digits_cnn.toml").read_text(encoding="utf-8"))
    doc["groups"] = {"by": "patch", "patch": "2x2"}
    spec = parse_spec(doc, str(ZOO / "digits_cnn.toml"))
    r = audit_model(str(ZOO / "digits_cnn.onnx"), spec, points=1024, replicates=4, seed=31, view="both", layers="none")
    g = r.by_group
    assert len(g.groups) == 16 and all(len(x["inputs"]) == 4 for x in g.groups)
    assert g.design["evaluations"] * 66 == r.design["evaluations"] * 18
    taus = []
    for per_pixel, per_patch in zip(r.outputs, g.outputs, strict=True):
        pixel = {f.feature: f.value.estimate for f in per_pixel.total_index}
        patch = {f.feature: f.value.estimate for f in per_patch.total_index}
        summed = [sum(pixel[p] for p in x["inputs"]) for x in g.groups]
        taus.append(stats.kendalltau(summed, [patch[x["name"]] for x in g.groups]).statistic)
    with capsys.disabled():
        print(
            f"\ndigits CNN, 2x2 patches: cost {g.design['evaluations']}/{r.design['evaluations']} evaluations; "
            f"Kendall tau per output min {min(taus):.3f}, mean {np.mean(taus):.3f}"
        )
    assert min(taus) >= 0.7


def friedman_nu() -> float:
    """ν of Friedman #1 on U[0, 1]^10, exactly, from its closed-form ANOVA terms.

    f = g(x1, x2) + 20 (x3 − ½)² + 10 x4 + 5 x5 with g = 10 sin(π x1 x2) ("Multivariate adaptive
    regression splines", Annals of Statistics, 1991); the only interaction is x1·x2 inside g, so
    ν = Σ_u |u| V_u / V = (V + V12)/V. With h(x) = E[sin(π x x2) | x] = (1 − cos πx)/(πx), Si and Ci the
    sine and cosine integrals (scipy.special.sici), γ Euler's constant (derivation from memory):
      m  = E h = (γ + ln π − Ci(π))/π,
      E h² = ∫0^1 (1 − cos πx)²/(πx)² dx = (2 Si(π) − Si(2π) − 4/π)/π   (by parts),
      E sin²(π x1 x2) = ½ − ½ E cos(2π x1 x2) = ½ − Si(2π)/(4π),
    so V_g = 100 (½ − Si(2π)/(4π) − m²), V1 = V2 = 100 (E h² − m²), V12 = V_g − 2 V1, and
    V3 = 400 (1/80 − 1/144), V4 = 100/12, V5 = 25/12.
    """
    si, ci = (lambda z: special.sici(z)[0]), (lambda z: special.sici(z)[1])
    m = (np.euler_gamma + np.log(np.pi) - ci(np.pi)) / np.pi
    v_g = 100 * (0.5 - si(2 * np.pi) / (4 * np.pi) - m**2)
    v1 = 100 * ((2 * si(np.pi) - si(2 * np.pi) - 4 / np.pi) / np.pi - m**2)
    var = v_g + 400 * (1 / 80 - 1 / 144) + 100 / 12 + 25 / 12
    return float(1 + (v_g - 2 * v1) / var)


def test_exact_friedman_nu_matches_a_direct_quadrature():
    # the closed form against scipy.integrate on a 2-d grid of g alone, plus the additive terms
    from scipy import integrate

    g = lambda b, a: 10 * np.sin(np.pi * a * b)  # noqa: E731
    mean = integrate.dblquad(g, 0, 1, 0, 1)[0]
    second = integrate.dblquad(lambda b, a: g(b, a) ** 2, 0, 1, 0, 1)[0]
    h = lambda a: integrate.quad(lambda b: g(b, a), 0, 1)[0]  # noqa: E731
    v1 = integrate.quad(lambda a: h(a) ** 2, 0, 1)[0] - mean**2
    v_g = second - mean**2
    var = v_g + 400 * (1 / 80 - 1 / 144) + 100 / 12 + 25 / 12
    assert friedman_nu() == pytest.approx(1 + (v_g - 2 * v1) / var, rel=1e-8)


@pytest.fixture(scope="module")
def friedman(tmp_path_factory):
    from model_zoo import friedman

    folder = tmp_path_factory.mktemp("friedman")
    x, y = friedman.training_data()
    model = friedman.train(x, y)
    return friedman.write_table(x, folder / "train.csv"), friedman.to_onnx(model, folder / "mlp.onnx"), model, x, y


def test_friedman_surrogate_under_its_training_spec_has_the_function_s_nu(friedman, capsys):
    table, onnx, model, x, y = friedman
    made = spec_from_table(read_table(table))
    assert [c.law.kind for c in made.columns] == ["empirical"] * 10
    spec = parse_spec(tomllib.loads(made.text))
    r = audit_model(str(onnx), spec, points=4096, replicates=8, seed=41, layers="none")
    nu = r.outputs[0].mean_dimension
    exact = friedman_nu()
    with capsys.disabled():
        print(
            f"\nFriedman #1 MLP surrogate (training R² {model.score(x, y):.4f}): ν {nu.estimate:.4f} "
            f"[{nu.ci_low:.4f}, {nu.ci_high:.4f}] under its training spec; exact ν of the function {exact:.4f}"
        )
    assert abs(nu.estimate - exact) < 0.02
    # the noise inputs x6..x10 look freezable under the right law
    assert all(f.value.estimate < 0.01 for f in r.outputs[0].total_index[5:])
