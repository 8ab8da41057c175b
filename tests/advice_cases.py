"""Functions with known answers for the pre-integration and advise tests (test helpers).

Reference values and where they come from:

- Gaussian integral of Φ: E Φ(a + bZ) = Φ(a / √(1 + b²)), Z ~ N(0, 1) (common
  practice, no source). Integrating x_ℓ out of Φ(s θᵀx − t) therefore gives
  the ridge Φ((s θ_{−ℓ}ᵀ x_{−ℓ} − t) / √(1 + s² θ_ℓ²)), whose exact ANOVA
  follows from its Hermite expansion (tests/exact.py, DESIGN.md §2).
- Var E[f | x_{−ℓ}] = σ² − τ̄²_ℓ and the freezing error 2 τ̄²_u ≤ 2 Σ_{j∈u} τ̄²_j
  follow from the ANOVA decomposition (common practice, no source).

The two advise runs every test shares are the session fixtures ``ridge_advice`` and
``net_advice`` of tests/conftest.py.
"""

from __future__ import annotations

import io
import json
import math
from pathlib import Path

import exact
import numpy as np
from rich.console import Console
from scipy.special import ndtr

from audit import Law
from audit.report import make_console
from audit.report import render as render_report
from audit.results import AdviceResult
from audit.studies import advise_function

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


# ----------------------------------------------------------------------------- steps


STEP_T = 0.3
STEP_LEAD = 0.7


def step_theta(d: int) -> np.ndarray:
    th = np.full(d, math.sqrt(1 - STEP_LEAD**2) / math.sqrt(d - 1))
    th[0] = STEP_LEAD
    return th


def step(theta):
    return lambda x: (x @ theta > STEP_T).astype(float)


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


# ----------------------------------------------------------------------------- the shared runs


def ridge_advice() -> AdviceResult:
    return advise_function(phi_ridge, "normal", dim=6, points=1024, replicates=8, seed=0, gain_points=(256, 1024, 4096))


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


# ----------------------------------------------------------------------------- rendering


def render(result: AdviceResult, encoding: str = "utf-8") -> str:
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
    render_report(result, console)
    buf.flush()
    return buf.buffer.getvalue().decode(encoding)
