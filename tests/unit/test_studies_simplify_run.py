"""The simplify workflow on a function with exact answers, and what it refuses.

f = x0 + 2 x1 + 3 x2 + x3 + 2 x4 + 3 x5 + 2 x0 x1 x2 (tests/clifuncs.py), x ~ N(0, I): Var f = 32, E f = 0.
Integrating x2 out and freezing x5 at 1 leaves x0 + 2 x1 + x3 + 2 x4 + 3: variance 10, mean 3, ν = 1;
Var g − τ̄²_{x2}(g) = 23 − 13 = 10; freezing x5 at 1 changes f by a mean square of 9 (1 + 1) = 18, and
at a value drawn from the law by 2 τ̄²_{x5} = 18 as well (ANOVA of a polynomial; common practice, no source).
"""

import pytest

from audit.errors import UserError
from audit.models.open import open_model
from audit.studies import simplify_model


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    model = open_model("clifuncs:additive6_plus_product", dim=6)
    out = tmp_path_factory.mktemp("py") / "additive-simplified.py"
    return simplify_model(model, "normal", integrate=["x2:8"], freeze=["x5=1"], path=out, points=1024,
                          replicates=8, seed=13)  # fmt: skip


def near(e, value, k=4.0):
    return abs(e.estimate - value) <= k * e.std_error + 1e-9


def test_after_matches_the_exact_simplified_function(run):
    o = run.outputs[0]
    assert run.written["inputs"] == ["x0", "x1", "x3", "x4"] and run.written["evaluations_per_row"] == 8
    assert run.written["spec"].endswith("additive-simplified.toml")
    assert o.after.variance.covers(10.0) or near(o.after.variance, 10.0)
    assert o.after.mean.covers(3.0) or near(o.after.mean, 3.0)
    assert near(o.after.mean_dimension, 1.0)
    assert o.before.variance.covers(32.0) or near(o.before.variance, 32.0)


def test_checks_hold_with_their_exact_values(run):
    o = run.outputs[0]
    assert o.variance_identity.agree and near(o.variance_identity.predicted, 10.0)
    assert near(o.freeze_change, 18 / 32) and near(o.freeze_bound, 18 / 32)
    assert o.mean_agrees and o.mean_allowance >= 4.0  # √18: freezing may move the mean that much
    assert run.written["metadata"]["frozen"][0] == {"feature": "x5", "position": 5, "law": "normal", "mean": 0.0,
                                                    "sd": 1.0, "value": 1.0, "chosen": "given"}  # fmt: skip


def test_without_check_only_the_file_is_written(tmp_path):
    model = open_model("clifuncs:additive6", dim=6)
    res = simplify_model(model, "normal", freeze=["x0"], path=tmp_path / "a.py", check=False, seed=1)
    assert res.outputs == [] and (tmp_path / "a.py").is_file() and res.frozen[0]["value"] == 0.0


def test_nothing_to_do_and_unknown_settings_are_refused(tmp_path):
    model = open_model("clifuncs:additive6", dim=6)
    with pytest.raises(UserError, match="Nothing to simplify"):
        simplify_model(model, "normal", path=tmp_path / "a.py")
    with pytest.raises(UserError, match="Unknown setting"):
        simplify_model(model, "normal", freeze=["x0"], path=tmp_path / "a.py", colour="red")
