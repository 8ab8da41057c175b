"""Derivative-based bounds of the validation ridges against their exact values.

The exact bound of input j is E[(∂f/∂x_j)²] with x ~ N(0, I) (sd 1, so the standardised
coordinate is x itself), in closed form:

* ridge_phi, f = Φ(s w − t), w = θᵀx ~ N(0, ‖θ‖²): ∂_j f = s θ_j φ(s w − t), and
  E[φ(a w − t)²] = exp(−t² / (1 + 2 a² ‖θ‖²)) / (2π √(1 + 2 a² ‖θ‖²)) (a Gaussian integral;
  from memory, checked here against scipy's adaptive quadrature);
* ridge_relu, f = max(0, w + b): ∂_j f = θ_j 1{w + b > 0}, so E = θ_j² Φ(b / ‖θ‖).

Normalised by the exact variance of model_zoo/validation.json. Each estimate must lie within a
Bonferroni-adjusted Student-t band (6 inputs × 2 formats per network) of the exact value.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate, stats

from audit.studies.slopes import slopes_model

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"
MODELS = json.loads((ZOO / "validation.json").read_text())["models"]
R = 8
COMPARISONS = 12


def _exact(name: str) -> np.ndarray:
    p = MODELS[name]["parameters"]
    theta = np.array(p["theta"])
    norm2 = float(theta @ theta)
    if name == "ridge_phi":
        a, t = p["scale"], p["shift"]
        c = 1 + 2 * a * a * norm2
        closed = math.exp(-t * t / c) / (2 * math.pi * math.sqrt(c))
        sd = math.sqrt(norm2)
        quad = integrate.quad(lambda z: stats.norm.pdf(a * sd * z - t) ** 2 * stats.norm.pdf(z), -12, 12)[0]
        assert closed == pytest.approx(quad, rel=1e-9)
        return a * a * theta**2 * closed
    b = -p["shift"]  # formula y = max(0, θᵀx + b), b = −t
    return theta**2 * stats.norm.cdf(b / math.sqrt(norm2))


@pytest.mark.parametrize("name", ["ridge_phi", "ridge_relu"])
@pytest.mark.parametrize("ext", ["pt", "onnx"])
def test_bounds_match_their_exact_values(name, ext):
    exact = _exact(name)
    variance = MODELS[name]["exact"]["variance"]
    r = slopes_model(str(ZOO / f"{name}.{ext}"), "normal", points=1024, replicates=R, seed=11, indices=False)
    q = stats.t.ppf(1 - 0.05 / (2 * COMPARISONS), R - 1)
    for b, e in zip(r.outputs[0].bounds, exact, strict=True):
        ms = b.mean_square
        assert abs(ms.estimate - e) <= q * ms.std_error + 1e-9 * e, (b.feature, ms, e)
    # normalised by the estimated variance, the bound's sum against the exact Σ_j E[(∂_j f)²] / σ²
    total = r.outputs[0].bound_sum
    assert abs(total.estimate - exact.sum() / variance) <= q * total.std_error + 1e-9
    # and the exact bound is at least the exact total index of every input
    assert np.all(exact / variance >= np.array(MODELS[name]["exact"]["total_index"]))


@pytest.mark.slow
def test_bound_intervals_cover_the_exact_value_at_their_level():
    # 40 seeds × 6 inputs of ridge_phi by autograd: the 95 % intervals of E[(∂_j f)²] should cover the
    # closed form about 95 % of the time; fewer than 85 % would be a binomial tail below 1e-6
    exact = _exact("ridge_phi")
    covered = total = 0
    for seed in range(40):
        r = slopes_model(str(ZOO / "ridge_phi.pt"), "normal", points=256, replicates=R, seed=seed, indices=False)
        for b, e in zip(r.outputs[0].bounds, exact, strict=True):
            covered += b.mean_square.covers(e)
            total += 1
    assert covered / total >= 0.85, covered / total
