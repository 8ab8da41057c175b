"""Standardised coordinates and Poincaré constants of the laws (audit/inputs/scales.py)."""

import math

import numpy as np
import pytest
from scipy import integrate

from audit.inputs import Law
from audit.inputs.scales import bound_note, poincare_constant, slope, stencil, support

LAWS = [
    Law("normal", {"mean": 1.0, "sd": 2.0}),
    Law("uniform", {"low": -1.0, "high": 3.0}),
    Law("triangular", {"low": 0.0, "mode": 1.0, "high": 4.0}),
    Law("lognormal", {"log_mean": 0.2, "log_sd": 0.5}),
]


def _moments(law, f, df):
    """Var f(X) and E[f'(X)²] by quadrature of the law's density (scipy)."""
    lo, hi = law.dist.ppf(1e-12), law.dist.ppf(1 - 1e-12)  # the design's clip; no overflow in the tails
    pdf = law.dist.pdf
    m1 = integrate.quad(lambda x: f(x) * pdf(x), lo, hi)[0]
    m2 = integrate.quad(lambda x: f(x) ** 2 * pdf(x), lo, hi)[0]
    g2 = integrate.quad(lambda x: df(x) ** 2 * pdf(x), lo, hi)[0]
    return m2 - m1**2, g2


def test_constants_are_the_known_ones():
    # normal sd², uniform (b − a)²/π² ("Derivative based global sensitivity measures...", MCS, 2009)
    assert poincare_constant(LAWS[0]) == pytest.approx(4.0)
    assert poincare_constant(LAWS[1]) == pytest.approx(16.0 / math.pi**2)
    assert poincare_constant(LAWS[2]) == pytest.approx(16.0 / math.pi**2)
    assert poincare_constant(LAWS[3]) is None
    assert "log x" in bound_note(LAWS[3])


def test_extremal_functions_attain_the_constant():
    # equality cases: a linear function of a normal; cos(π (x − a)/(b − a)) of a uniform (the first
    # Neumann eigenfunction of an interval; from memory), checked by scipy quadrature
    normal, uniform = LAWS[0], LAWS[1]
    var, g2 = _moments(normal, lambda x: 3 * x, lambda x: 3.0 + 0 * x)
    assert var == pytest.approx(poincare_constant(normal) * g2, rel=1e-9)
    a, b = uniform.params["low"], uniform.params["high"]
    k = math.pi / (b - a)
    var, g2 = _moments(uniform, lambda x: math.cos(k * (x - a)), lambda x: -k * math.sin(k * (x - a)))
    assert var == pytest.approx(poincare_constant(uniform) * g2, rel=1e-9)


@pytest.mark.parametrize("law", LAWS[:3], ids=lambda law: law.kind)
@pytest.mark.parametrize("f", ["x", "sin", "square", "exp"])
def test_the_inequality_holds_for_smooth_functions(law, f):
    funcs = {
        "x": (lambda x: x, lambda x: 1.0),
        "sin": (lambda x: math.sin(2 * x), lambda x: 2 * math.cos(2 * x)),
        "square": (lambda x: x * x, lambda x: 2 * x),
        "exp": (lambda x: math.exp(0.3 * x), lambda x: 0.3 * math.exp(0.3 * x)),
    }
    var, g2 = _moments(law, *funcs[f])
    assert var <= poincare_constant(law) * g2 * (1 + 1e-9)


def test_lognormal_bound_in_the_log_coordinate():
    # f(x) = log x is linear in the normal coordinate: Var = log_sd², and E[(dx/dz · f'(x))²] = log_sd²
    law = LAWS[3]
    x = law.ppf(np.array([0.1, 0.5, 0.9]))
    assert slope(law, x) * (1 / x) == pytest.approx(np.full(3, law.params["log_sd"]))


@pytest.mark.parametrize("law", LAWS, ids=lambda law: law.kind)
def test_slope_is_the_derivative_of_the_standardised_map(law):
    # dx/dz against a central difference of x(z), with z the standardised coordinate of the module table
    x = law.ppf(np.array([0.2, 0.5, 0.8]))
    h = 1e-6
    lo, hi = stencil(law, x, h)
    assert (hi - lo) / (2 * h) == pytest.approx(slope(law, x), rel=1e-6)


def test_stencil_stays_within_the_support():
    law = LAWS[1]
    lo, hi = stencil(law, np.array([-1.0, 3.0, 1.0]), 0.1)
    assert lo.min() >= -1.0 and hi.max() <= 3.0
    assert np.all(hi > lo)
    assert support(LAWS[3]) == (0.0, math.inf)
