"""Marginal laws of the inputs (audit.inputs.laws): inverse CDFs, Gauss rules, parameter checks."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, stats

from audit.errors import UserError
from audit.inputs import LAWS, Law, law_from_dict, uniform_spec

finite = st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False)
positive = st.floats(1e-3, 1e3, allow_nan=False, allow_infinity=False)


@st.composite
def laws(draw):
    kind = draw(st.sampled_from(sorted(LAWS)))
    if kind == "normal":
        return Law(kind, {"mean": draw(finite), "sd": draw(positive)})
    if kind == "lognormal":
        return Law(kind, {"log_mean": draw(st.floats(-5, 5)), "log_sd": draw(st.floats(0.01, 2))})
    lo = draw(finite)
    hi = lo + draw(positive)
    if kind == "uniform":
        return Law(kind, {"low": lo, "high": hi})
    if kind == "truncated_normal":
        return Law(kind, {"mean": lo + draw(st.floats(-1, 2)) * (hi - lo), "sd": hi - lo, "low": lo, "high": hi})
    if kind == "log_uniform":
        return Law(kind, {"low": draw(positive), "high": draw(positive) + 1e3 + 1e-3})
    if kind == "discrete":
        values = draw(st.lists(finite, min_size=1, max_size=8, unique=True))
        return Law(kind, {"values": values})
    if kind == "empirical":
        q = sorted(draw(st.lists(finite, min_size=2, max_size=30)))
        if q[0] == q[-1]:
            q[-1] = q[0] + 1
        return Law(kind, {"quantiles": q})
    return Law(kind, {"low": lo, "mode": lo + draw(st.floats(0, 1)) * (hi - lo), "high": hi})


@settings(max_examples=80, deadline=None)
@given(laws(), st.lists(st.floats(1e-9, 1 - 1e-9), min_size=2, max_size=20))
def test_inverse_cdf_monotone_and_inside_support(law, us):
    u = np.sort(np.array(us))
    x = law.ppf(u)
    assert np.all(np.isfinite(x))
    assert np.all(np.diff(x) >= -1e-9 * (1 + np.abs(x[:-1])))
    lo, hi = law.support()
    assert np.all(x >= lo - 1e-9 * (1 + abs(lo))) and np.all(x <= hi + 1e-9 * (1 + abs(hi)))


@pytest.mark.parametrize(
    "law",
    [
        Law("normal", {"mean": 1.0, "sd": 2.0}),
        Law("uniform", {"low": -1, "high": 3}),
        Law("lognormal", {"log_mean": 0.2, "log_sd": 0.5}),
        Law("triangular", {"low": 0, "mode": 1, "high": 4}),
    ],
)
def test_quadrature_reproduces_moments(law):
    # reference: scipy.stats moments of the same law (and scipy.integrate.quad for E[cos X])
    x, w = law.quadrature(40)
    assert w.sum() == pytest.approx(1.0)
    for k in (1, 2, 3):
        assert np.dot(w, x**k) == pytest.approx(law.dist.moment(k), rel=1e-6)
    lo, hi = law.dist.support()
    ref = integrate.quad(lambda t: math.cos(t) * law.dist.pdf(t), max(lo, -50), min(hi, 50), limit=200)[0]
    assert np.dot(w, np.cos(x)) == pytest.approx(ref, abs=1e-6)


def test_bad_law_parameters():
    with pytest.raises(ValueError, match="sd must be > 0"):
        Law("normal", {"sd": 0})
    with pytest.raises(ValueError, match="low must be < high"):
        Law("uniform", {"low": 1, "high": 1})
    with pytest.raises(ValueError, match="valid laws: normal, uniform"):
        Law("gauss")
    with pytest.raises(ValueError, match="finite"):
        Law("normal", {"mean": math.inf})
    with pytest.raises(UserError, match="valid choices: normal, uniform"):
        uniform_spec("unifrom")


def test_ppf_matches_scipy_reference():
    # scipy.stats is the reference for the laws
    u = np.linspace(0.01, 0.99, 7)
    np.testing.assert_allclose(Law("normal", {"mean": 1, "sd": 2}).ppf(u), stats.norm.ppf(u, 1, 2))


def test_law_from_dict_fills_defaults_and_names_the_place():
    assert law_from_dict({"law": "uniform", "high": 3}) == Law("uniform", {"low": 0.0, "high": 3.0})
    assert law_from_dict({}) == Law("normal")  # the default law is N(0, 1)
    assert law_from_dict({"law": "normal", "name": "a", "unit": "m"}).params == {"mean": 0.0, "sd": 1.0}
    with pytest.raises(UserError, match=r"^feature 'a': normal law: sd must be > 0"):
        law_from_dict({"law": "normal", "sd": -1}, where="feature 'a': ")
    with pytest.raises(UserError, match="Did you mean 'normal'"):
        law_from_dict({"law": "normall"})


def test_describe_and_to_dict():
    law = Law("triangular", {"low": 0, "mode": 1, "high": 4})
    assert law.describe() == "triangular(0, 1, 4)"
    assert law.to_dict() == {"law": "triangular", "low": 0.0, "mode": 1.0, "high": 4.0}
    assert law_from_dict(law.to_dict()) == law  # the JSON form reads back
    with pytest.raises(ValueError, match="at least 1 node"):
        law.quadrature(0)
