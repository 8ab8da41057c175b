"""Input laws and the TOML input spec."""

import math
import tomllib

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, stats

from audit.errors import UserError
from audit.inputs import LAWS, Law, load_spec, parse_spec, uniform_spec

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
    return Law(kind, {"low": lo, "mode": lo + draw(st.floats(0, 1)) * (hi - lo), "high": hi})


@settings(max_examples=80, deadline=None)
@given(laws(), st.lists(st.floats(1e-9, 1 - 1e-9), min_size=2, max_size=20))
def test_inverse_cdf_monotone_and_inside_support(law, us):
    u = np.sort(np.array(us))
    x = law.ppf(u)
    assert np.all(np.isfinite(x))
    assert np.all(np.diff(x) >= -1e-9 * (1 + np.abs(x[:-1])))
    lo, hi = law.dist.support()
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


SPEC = """
title = "test"
[inputs]
law = "uniform"
low = 0.0
high = 2.0
[[inputs.feature]]
name = "a"
[[inputs.feature]]
name = "b"
law = "normal"
sd = 3
[[inputs.feature]]
name = "c"
high = 5.0
unit = "m"
[outputs]
names = ["y1", "y2"]
"""


def test_spec_features_in_order_with_default_and_overrides():
    spec = parse_spec(tomllib.loads(SPEC), "spec.toml")
    names, laws_ = spec.resolve(3)
    assert names == ["a", "b", "c"]
    assert laws_[0] == Law("uniform", {"low": 0, "high": 2})
    assert laws_[1] == Law("normal", {"mean": 0, "sd": 3})
    assert laws_[2] == Law("uniform", {"low": 0, "high": 5})
    assert spec.units == ["", "", "m"] and spec.outputs == ["y1", "y2"]


def test_spec_names_with_override_by_name():
    spec = parse_spec(
        tomllib.loads('[inputs]\nnames=["p","q","r"]\nlaw="normal"\n[[inputs.feature]]\nname="q"\nlaw="uniform"\n')
    )
    _, laws_ = spec.resolve(3)
    assert [x.kind for x in laws_] == ["normal", "uniform", "normal"]


@pytest.mark.parametrize(
    "text,needle",
    [
        ('[inputs]\nlaw = "normal"\nsdd = 2\n', "Did you mean 'sd'"),
        ('[input]\nlaw = "normal"\n', "Did you mean 'inputs'"),
        ('[inputs]\nlaw = "uniform"\nlow = 2\nhigh = 1\n', "low must be < high"),
        ('[inputs]\nlaw = "normal"\nsd = -1\n', "sd must be > 0"),
        ('[inputs]\nlaw = "normal"\nmean = nan\n', "finite"),
        ('[inputs]\nlaw = "weibull"\n', "valid laws"),
        ("[inputs]\ncount = 0\n", "count"),
        ('[inputs]\nnames = ["a", "a"]\n', "twice"),
        ('[[inputs.feature]]\nname = "a"\nlaw = "normal"\nlow = 1\n', "Did you mean"),
        ('[inputs]\nnames = ["a"]\n[[inputs.feature]]\nname = "b"\n', "not in `names`"),
    ],
)
def test_spec_errors_name_the_problem(text, needle):
    with pytest.raises(UserError, match=needle.replace("(", r"\(")) as e:
        parse_spec(tomllib.loads(text), "bad.toml")
    assert "bad.toml" in str(e.value)


def test_spec_file_errors(tmp_path):
    with pytest.raises(UserError, match="does not exist"):
        load_spec(tmp_path / "missing.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text('[inputs]\nlaw = "normal\n')
    with pytest.raises(UserError, match=r"line 2, column"):
        load_spec(bad)
    spec_ok = tmp_path / "ok.toml"
    spec_ok.write_text("[inputs]\ncount = 4\n")
    with pytest.raises(UserError, match="describes 4 input features but the model takes 3"):
        load_spec(spec_ok).resolve(3)


toml_values = st.recursive(
    st.one_of(st.integers(-5, 5), st.floats(allow_nan=True), st.text(max_size=5), st.booleans()),
    lambda children: st.lists(children, max_size=3) | st.dictionaries(st.text(max_size=6), children, max_size=3),
    max_leaves=8,
)
keys = st.sampled_from(["law", "low", "high", "mean", "sd", "count", "names", "feature", "mode", "name", "x"])


@settings(max_examples=150, deadline=None)
@given(
    st.dictionaries(
        st.sampled_from(["inputs", "outputs", "model", "title", "other"]),
        st.dictionaries(keys, toml_values, max_size=4) | toml_values,
        max_size=3,
    )
)
def test_any_document_parses_or_raises_the_project_error(doc):
    try:
        spec = parse_spec(doc, "fuzz.toml")
    except UserError:
        return
    assert spec.default.kind in LAWS


def test_ppf_matches_scipy_reference():
    # scipy.stats is the reference for the laws
    u = np.linspace(0.01, 0.99, 7)
    np.testing.assert_allclose(Law("normal", {"mean": 1, "sd": 2}).ppf(u), stats.norm.ppf(u, 1, 2))
