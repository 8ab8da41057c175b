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


@pytest.mark.parametrize(
    "law",
    [
        Law("truncated_normal", {"mean": 1.0, "sd": 2.0, "low": 0.0, "high": 3.0}),
        Law("truncated_normal", {"mean": 0.0, "sd": 1.0, "low": -0.5, "high": math.inf}),
        Law("log_uniform", {"low": 0.1, "high": 100.0}),
    ],
)
def test_new_continuous_laws_match_scipy(law):
    # scipy.stats.truncnorm and scipy.stats.loguniform are the references
    u = np.linspace(0.01, 0.99, 9)
    np.testing.assert_allclose(law.ppf(u), law.dist.ppf(u), rtol=1e-10)
    np.testing.assert_allclose(law.cdf(law.ppf(u)), u, rtol=1e-10)
    x, w = law.quadrature(24)
    assert w.sum() == pytest.approx(1.0)
    for k in (1, 2, 3):
        assert np.dot(w, x**k) == pytest.approx(law.dist.moment(k), rel=1e-8)


def test_discrete_law_inverse_cdf_and_exact_summation():
    law = Law("discrete", {"values": [3, 1, 2], "probabilities": [0.2, 0.5, 0.3]})
    assert law.params["values"] == (1.0, 2.0, 3.0) and law.params["probabilities"] == (0.5, 0.3, 0.2)
    u = (np.arange(10_000) + 0.5) / 10_000  # a fine grid: each value gets its probability's share
    counts = np.array([(law.ppf(u) == v).mean() for v in (1, 2, 3)])
    np.testing.assert_allclose(counts, [0.5, 0.3, 0.2], atol=1e-4)
    x, w = law.quadrature(2)  # every value, whatever m: sums are exact
    assert x.tolist() == [1, 2, 3] and np.dot(w, x**2) == pytest.approx(0.5 + 1.2 + 1.8)
    np.testing.assert_allclose(law.cdf(np.array([0.5, 1, 2.5, 3])), [0, 0.5, 0.8, 1.0])
    assert law.integer and law.describe() == "discrete(1, 2, 3)"
    cats = Law("discrete", {"labels": ["clay", "loam"]})
    assert cats.params["values"] == (0.0, 1.0) and cats.describe() == "discrete(clay, loam)"


def test_empirical_law_is_numpy_s_linear_quantile_and_has_a_gauss_rule():
    # numpy.quantile (linear method) is the reference for the quantile function; the Gauss rule
    # reproduces the law's moments, which are those of uniform pieces between order statistics
    data = np.random.default_rng(4).gamma(2.0, size=200)
    law = Law("empirical", {"quantiles": np.sort(data)})
    u = np.linspace(0, 1, 33)
    np.testing.assert_allclose(law.ppf(u), np.quantile(data, u), rtol=1e-12)
    np.testing.assert_allclose(law.cdf(law.ppf(u[1:-1])), u[1:-1], atol=1e-12)
    q = np.sort(data)
    exact_mean = np.mean((q[1:] + q[:-1]) / 2)
    exact_second = np.mean((q[1:] ** 2 + q[1:] * q[:-1] + q[:-1] ** 2) / 3)
    x, w = law.quadrature(8)
    assert np.dot(w, x) == pytest.approx(exact_mean, rel=1e-12)
    assert np.dot(w, x**2) == pytest.approx(exact_second, rel=1e-12)
    d = law.to_dict()
    assert d["knots"] == 200 and d["low"] == q[0] and len(d["digest"]) == 16


@pytest.mark.parametrize(
    ("kind", "params", "needle"),
    [
        ("discrete", {"values": [1, 1]}, "listed twice"),
        ("discrete", {"values": [1, 2], "probabilities": [0.5, 0.6]}, "add up to 1"),
        ("discrete", {"values": [1, 2], "probabilities": [0.5]}, "2 values but 1 probabilities"),
        ("discrete", {}, "give its `values`"),
        ("empirical", {"quantiles": [2, 1]}, "sorted"),
        ("empirical", {"quantiles": [1, 1]}, "constant"),
        ("empirical", {"quantiles": [1, 2], "levels": [0, 0.5]}, "from 0 to 1"),
        ("truncated_normal", {"low": 20, "high": 30}, "more than 12 sd"),
        ("log_uniform", {"low": 0, "high": 1}, "low must be > 0"),
    ],
)
def test_new_law_errors(kind, params, needle):
    with pytest.raises(ValueError, match=needle):
        Law(kind, params)
