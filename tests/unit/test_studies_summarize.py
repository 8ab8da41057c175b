"""From per-randomization sums to results (audit.studies.summarize): ratios per randomization, then t intervals.

The reference for every figure is audit.estimators.t_interval applied here to the per-randomization
values computed by hand: indices and ν are ratios formed in each randomization, then averaged.
"""

import math

import numpy as np
import pytest
from fake_models import Layered
from hypothesis import given, settings
from hypothesis import strategies as st

from audit.estimators import t_interval
from audit.estimators.base import RepEstimates
from audit.inputs import InputSpec, Law
from audit.models.base import LayerInfo, TensorInfo
from audit.studies.options import DesignOptions
from audit.studies.setup import prepare
from audit.studies.summarize import (
    GroupStats,
    _quantile,
    design_info,
    estimate,
    estimates,
    inputs_info,
    layer_result,
    model_info,
    model_signature,
    output_results,
    run_choices,
)

R, G, K = 6, 3, 3
RNG = np.random.default_rng(41)
MEAN = RNG.normal(size=(R, K))
VAR = np.abs(RNG.normal(2.0, 0.3, size=(R, K)))
VAR[:, 2] = 0.0  # the third unit is constant
TOTAL = np.abs(RNG.normal(0.9, 0.05, size=(R, G, K)))  # nu about 1.35: a possible value, in [1, G]
TOTAL[:, :, 2] = 0.0
FIRST = 0.8 * TOTAL


class _Sums:
    """Sums whose finish() returns given per-randomization estimates."""

    def __init__(self, r, total=True, first=True):
        self.r, self.total, self.first = r, total, first

    def finish(self, ddof):
        tot = TOTAL[self.r] if self.total else None
        return RepEstimates(MEAN[self.r], VAR[self.r], tot, FIRST[self.r] if self.first else None, TOTAL[self.r].sum(0))


def _stats(**kw):
    return GroupStats.of([_Sums(r, **kw) for r in range(R)], ddof=0)


def _same(e, interval):
    assert (e.estimate, e.ci_low, e.ci_high, e.std_error) == pytest.approx(tuple(float(x) for x in interval), rel=1e-12)


def test_group_stats_gather_the_randomizations_and_find_inert_units():
    st = _stats()
    np.testing.assert_array_equal(st.mean, MEAN)
    np.testing.assert_array_equal(st.var, VAR)
    assert st.total.shape == (R, G, K) and st.total_sum.shape == (R, K)
    assert st.inert.tolist() == [False, False, True]
    ratio = st.ratio(st.total_sum)
    assert np.isnan(ratio[:, 2]).all() and np.allclose(ratio[:, :2], TOTAL.sum(1)[:, :2] / VAR[:, :2])
    np.testing.assert_allclose(st.weighted_nu(), TOTAL.sum(1)[:, :2].sum(1) / VAR[:, :2].sum(1), rtol=1e-14)


def test_output_results_are_intervals_of_per_randomization_ratios():
    outs = output_results(_stats(), ["y0", "y1", "y2"], ["a", "b", "c"])
    assert [o.name for o in outs] == ["y0", "y1", "y2"]
    for k in (0, 1):
        o = outs[k]
        _same(o.mean, t_interval(MEAN[:, k]))
        _same(o.variance, t_interval(VAR[:, k]))
        _same(o.mean_dimension, t_interval(TOTAL[:, :, k].sum(1) / VAR[:, k]))
        assert [f.feature for f in o.total_index] == ["a", "b", "c"]
        for j in range(G):
            _same(o.total_index[j].value, t_interval(TOTAL[:, j, k] / VAR[:, k]))
            _same(o.first_order[j].value, t_interval(FIRST[:, j, k] / VAR[:, k]))
    dead = outs[2]
    assert dead.inert and dead.mean_dimension is None and dead.total_index == [] and dead.first_order == []
    _same(dead.mean, t_interval(MEAN[:, 2]))


def test_estimators_without_first_order_or_detail_give_what_they_have():
    fast = output_results(_stats(first=False), ["y0", "y1", "y2"], ["a", "b", "c"])
    assert fast[0].first_order == [] and len(fast[0].total_index) == G
    short = output_results(_stats(total=False, first=False), ["y0", "y1", "y2"], ["a", "b", "c"])
    assert short[0].total_index == [] and short[0].mean_dimension is not None


def test_layer_result_summarizes_the_live_units():
    info = LayerInfo("h", "Tanh", (1, 3), True)
    layer = layer_result(info, _stats(), ["a", "b", "c"])
    assert [u.unit for u in layer.units] == ["h[0,0]", "h[0,1]", "h[0,2]"] and layer.shape == (1, 3)
    nus = [u.mean_dimension.estimate for u in layer.units[:2]]
    s = layer.summary
    assert s["units"] == 3 and s["inert_units"] == 1
    assert (s["nu_min"], s["nu_max"], s["nu_median"]) == pytest.approx((min(nus), max(nus), np.median(nus)))
    weighted = t_interval(TOTAL.sum(1)[:, :2].sum(1) / VAR[:, :2].sum(1))
    assert (s["nu_weighted"], s["nu_weighted_ci_low"], s["nu_weighted_ci_high"]) == pytest.approx(
        (float(weighted.estimate), float(weighted.low), float(weighted.high)), rel=1e-12
    )
    assert layer.units[2].inert and layer.units[2].mean_dimension is None


def test_a_layer_of_inert_units_has_undefined_summaries():
    class Dead(_Sums):
        def finish(self, ddof):
            zero = np.zeros(K)
            return RepEstimates(np.ones(K), zero, None, None, zero)

    layer = layer_result(LayerInfo("h", "Relu", (3,), True), GroupStats.of([Dead(r) for r in range(R)], 0), [])
    assert layer.summary["inert_units"] == 3 and np.isnan(layer.summary["nu_weighted"])
    assert np.isnan(layer.summary["nu_median"]) and all(u.inert for u in layer.units)


def test_estimates_from_intervals():
    iv = t_interval(np.array([[1.0, 2.0], [2.0, 4.0], [3.0, 9.0]]))
    es = estimates(iv)
    assert len(es) == 2 and es[0].estimate == 2.0 and es[1].ci_low == pytest.approx(float(iv.low[1]))
    assert estimate(t_interval(np.array([1.0, 3.0]))).estimate == 2.0


def test_descriptions_of_the_run():
    spec = InputSpec(names=["a", "b", "c"], laws=[Law("normal"), Law("uniform"), Law("normal")],
                     units=["m", "", "s"], outputs=["u", "v"], output_units=["K", "%"], source="s.toml",
                     title="A test")  # fmt: skip
    setup = prepare(Layered(), spec, design=DesignOptions(points=64, replicates=3, seed=7), layers="none")
    inputs = inputs_info(setup)
    assert inputs[0] == {"name": "a", "law": "normal", "mean": 0.0, "sd": 1.0, "unit": "m"}
    assert "unit" not in inputs[1]
    design = design_info(setup, 1.23456)
    assert (design["points"], design["replicates"], design["seed"], design["estimator"]) == (64, 3, 7, "jansen")
    assert design["evaluations"] == 64 * 3 * 5 and design["seconds"] == 1.235 and design["spec"] == "s.toml"
    assert design["interval"] == "Student-t over 3 independent randomizations, 95%" and design["level"] == 0.95
    info = model_info(setup)
    assert info["input"] == {"name": "x", "shape": [3]} and info["title"] == "A test"
    assert info["output_units"] == ["K", "%"]
    assert "spec" not in design_info(prepare(Layered(), "normal", design=DesignOptions(seed=1)), 0.0)


def test_models_with_several_input_tensors_list_them_all():
    model = Layered()
    model.inputs = [TensorInfo("x", (2,), "float64"), TensorInfo("t", (), "float64")]
    setup = prepare(model, "normal", design=DesignOptions(points=64, seed=1), layers="none")
    assert model_info(setup)["inputs"] == [{"name": "x", "shape": [2]}, {"name": "t", "shape": []}]


def test_model_signature_lists_tensors_layers_and_notices():
    sig = model_signature(Layered())
    assert sig.source == "layered" and sig.features == 3
    assert [t.name for t in sig.outputs] == ["y"] and [x.name for x in sig.layers] == ["pre", "act"]
    assert sig.layers[1].units == 4 and sig.notices == ["a remark of the backend"]


def test_the_design_records_what_a_command_must_repeat():
    plain = prepare(Layered(), "normal", design=DesignOptions(points=64, seed=1))
    assert "options" not in design_info(plain, 0.0) and run_choices(plain) == {}
    model = Layered()
    model.open_args = {"ref": "/m.pt", "torch_class": "pkg:Net", "torch_arguments": {"hidden": 4}, "trust": False,
                       "input_shape": (1, 3)}  # fmt: skip
    setup = prepare(model, "normal", design=DesignOptions(points=64, seed=1), layers="pre", unit_detail=["pre"])
    assert design_info(setup, 0.0)["options"] == {
        "input_shape": [1, 3], "torch_class": "pkg:Net", "torch_arguments": {"hidden": 4},
        "layers": "pre", "unit_detail": ["pre"],
    }  # fmt: skip
    model.open_args = {"ref": "/m.onnx", "input_shape": {"a": (2,), "b": (1, 4)}, "trust": True}
    assert run_choices(prepare(model, "normal", design=DesignOptions(points=64, seed=1), layers="none")) == {
        "input_shape": {"a": [2], "b": [1, 4]}, "trust": True, "layers": "none",
    }  # fmt: skip


@settings(max_examples=100, deadline=None)
@given(st.lists(st.floats(0.5, 60.0), min_size=0, max_size=300), st.sampled_from([0.0, 0.5, 0.9, 1.0]))
def test_layer_quantiles_are_numpys_linear_quantiles(values, p) -> None:
    """The layer summary's ν quantiles: numpy's ``np.quantile`` (method ``linear``) is the reference."""
    got = _quantile(np.sort(np.array(values)))(p)
    if not values:
        assert math.isnan(got)
    else:
        assert got == pytest.approx(float(np.quantile(values, p)), rel=1e-15, abs=0)
