"""The TOML input spec (audit.inputs.spec)."""

import math
import tomllib

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from audit.errors import UserError
from audit.inputs import LAWS, Law, load_spec, parse_spec, uniform_spec

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


def test_resolve_takes_the_model_side_when_the_spec_says_nothing():
    spec = uniform_spec("uniform")
    assert spec.dim is None and spec.source == "--law uniform"
    names, laws_ = spec.resolve(2, ["a", "b"])
    assert names == ["a", "b"] and laws_ == [Law("uniform")] * 2
    # default names of the wrong length are replaced by x0, x1, ...
    assert spec.resolve(3, ["a", "b"])[0] == ["x0", "x1", "x2"]
    with pytest.raises(UserError, match="does not say how many inputs"):
        spec.resolve(None)


def test_spec_new_laws_data_files_one_hot_and_groups(tmp_path):
    (tmp_path / "train.csv").write_text("w\n0.5\n0.1\n0.9\n", encoding="utf-8")
    text = """
[inputs]
names = ["t", "w", "red", "blue"]
[[inputs.feature]]
name = "t"
law = "truncated_normal"
low = 0.0
high = inf
[[inputs.feature]]
name = "w"
law = "empirical"
file = "train.csv"
column = "w"
[[inputs.one_hot]]
name = "colour"
columns = ["red", "blue"]
probabilities = [0.25, 0.75]
[groups]
[[groups.group]]
name = "tw"
inputs = ["t", "w"]
"""
    path = tmp_path / "s.toml"
    path.write_text(text, encoding="utf-8")
    spec = load_spec(path)
    assert spec.laws[0].kind == "truncated_normal" and spec.laws[0].params["high"] == math.inf
    assert spec.laws[1].params["quantiles"] == (0.1, 0.5, 0.9) and spec.laws[1].params["source"] == "train.csv:w"
    v = spec.variables(4)
    assert v.names == ["t", "w", "colour"] and v.columns == [(0,), (1,), (2, 3)]
    assert spec.groups.lists == [("tw", ("t", "w"))]


@pytest.mark.parametrize(
    ("text", "needle"),
    [
        ('[inputs]\nlaw = "discrete"\nvalues = "1, 2"', "`values` must be a list of numbers"),
        ('[inputs]\nlaw = "empirical"\nfile = "x.csv"', "needs both `file` and `column`"),
        ('[inputs]\nlaw = "empirical"\nfile = "nowhere.csv"\ncolumn = "a"', "does not exist"),
        ('[inputs]\n[[inputs.one_hot]]\nname = "c"\ncolumns = ["a"]', "at least 2 model columns"),
        ('[groups]\nby = "patches"', "Did you mean 'patch'"),
        ('[groups]\nby = "patch"', "needs the patch size"),
        ('[groups]\nby = "patch"\npatch = "2 by 2"', "HxW"),
        ("[groups]\n", "list the groups"),
    ],
)
def test_new_spec_errors_name_the_problem(text, needle):
    with pytest.raises(UserError, match=needle):
        parse_spec(tomllib.loads(text), "s.toml")
