"""The compare workflow (audit.studies.compare): two versions on the same points, paired intervals, gates."""

from pathlib import Path

import clifuncs
import numpy as np
import pytest

from audit import memory
from audit.errors import UserError
from audit.models.base import Evaluation, LayerInfo, TensorInfo
from audit.models.python import PythonModel
from audit.studies import Gates, compare_models, parse_output_map
from audit.studies.options import DesignOptions
from audit.studies.setup import prepare

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


def _m(f, d=6):
    return PythonModel(f, d, source=f.__name__)


def test_model_against_itself_changes_nothing_and_passes():
    m = _m(clifuncs.additive6_plus_product)
    r = compare_models(
        m,
        m,
        "normal",
        points=256,
        replicates=8,
        seed=1,
        gates=Gates(dimension_rise=0.0, mean_dimension=0.0, total_index=0.0, first_order=0.0, ranking=1.0),
    )
    o = r.outputs[0]
    e = o.mean_dimension_change
    assert (e.estimate, e.ci_low, e.ci_high) == (0.0, 0.0, 0.0)
    assert all(c.value.estimate == 0.0 for c in o.total_index_change)
    assert o.moved == [] and o.kendall_tau == pytest.approx(1.0) and o.rank_agreement.estimate == 1.0
    assert o.swapped == 0 and o.top_k_overlap == 1.0 and o.variance_change.estimate == 0.0
    assert r.passed


def test_common_random_numbers_narrow_the_interval():
    # Two versions of a retrained network (the zoo's greenhouse surrogates v1 and v2), paired (same
    # points) against independent points at equal cost: the interval of the ν change should be at
    # least 3× narrower for every output (the compare issue's target).
    from audit.inputs import load_spec
    from audit.models.open import open_model

    spec = load_spec(ZOO / "greenhouse_v1.toml")
    old, new = open_model(str(ZOO / "greenhouse_v1.onnx")), open_model(str(ZOO / "greenhouse_v2.onnx"))
    kw = dict(points=1024, replicates=10, seed=3, layers="none")
    paired = compare_models(old, new, spec, **kw)
    indep = compare_models(old, new, spec, paired=False, **kw)
    for a, b in zip(paired.outputs, indep.outputs, strict=True):
        ratio = b.mean_dimension_change.width / a.mean_dimension_change.width
        print(f"{a.name}: interval width, independent / paired = {ratio:.1f}")
        assert ratio >= 3.0


def test_signatures_must_match():
    with pytest.raises(UserError, match="different numbers of inputs"):
        compare_models(_m(clifuncs.additive6), _m(clifuncs.two_outputs, 5), "normal", points=64, seed=1)
    with pytest.raises(UserError, match="`output_map`"):
        compare_models(_m(clifuncs.additive6), _m(clifuncs.two_outputs), "normal", points=64, seed=1)
    r = compare_models(
        _m(clifuncs.additive6), _m(clifuncs.two_outputs), "normal", points=64, seed=1, output_map=[(0, 0)]
    )
    assert len(r.outputs) == 1


def _shifted(x):
    return clifuncs.additive6_plus_product(x) + 5.0


def test_a_constant_shift_changes_nothing_on_the_same_points():
    # adding a constant changes neither the variance nor any index (common practice, no source)
    kw = dict(points=256, replicates=8, seed=4)
    r = compare_models(_m(clifuncs.additive6_plus_product), _m(_shifted), "normal", **kw)
    o = r.outputs[0]
    assert abs(o.mean_dimension_change.estimate) < 1e-9 and o.mean_dimension_change.width < 1e-9
    assert all(abs(c.value.estimate) < 1e-9 for c in o.total_index_change)
    assert o.new.mean.estimate == pytest.approx(o.old.mean.estimate + 5.0, rel=1e-12)
    assert r.design["paired"] is True and r.design["evaluations"] == 2 * 256 * 8 * 8
    # on independent points the same two models differ by noise, with a far wider interval
    indep = compare_models(_m(clifuncs.additive6_plus_product), _m(_shifted), "normal", paired=False, **kw)
    change = indep.outputs[0].mean_dimension_change
    assert indep.design["paired"] is False and change.width > 1e3 * o.mean_dimension_change.width


def test_a_constant_shift_moves_no_input():
    r = compare_models(
        _m(clifuncs.additive6_plus_product), _m(_shifted), "normal", points=256, replicates=8, seed=4,
        gates=Gates(total_index=0.0),
    )  # fmt: skip
    assert r.outputs[0].moved == [] and r.passed


def test_outputs_are_paired_by_the_output_map():
    old, new = _m(clifuncs.additive6), _m(clifuncs.two_outputs)
    pairs = parse_output_map("y=y[1]", old.output_names(), new.output_names())
    assert pairs == [(0, 1)]
    r = compare_models(old, new, "normal", points=64, replicates=4, seed=1, output_map=pairs)
    assert [o.name for o in r.outputs] == ["y → y[1]"]
    assert r.outputs[0].new.name == "y[1]" and r.outputs[0].old.name == "y"


class _Net:
    """A two-layer model of the Model protocol: layer sizes and a scale of the output are settings."""

    format = "net"

    def __init__(self, hidden=4, scale=1.0, name="act"):
        rng = np.random.default_rng(0)
        self.W, self.scale, self.name = rng.normal(size=(hidden, 3)), scale, name
        self.source, self.notices = f"net{hidden}", []
        self.inputs = [TensorInfo("x", (3,), "float64")]
        self.outputs = [TensorInfo("y", (), "float64")]

    def layers(self):
        return [LayerInfo(self.name, "Tanh", (len(self.W),), True)]

    def feature_names(self):
        return ["a", "b", "c"]

    def output_names(self):
        return ["y"]

    def evaluate(self, x, capture=()):
        h = np.tanh(x @ self.W.T)
        return Evaluation(self.scale * h.sum(axis=1, keepdims=True) ** 2, {n: h for n in capture})


def test_layers_are_compared_when_both_models_have_them_with_the_same_size():
    kw = dict(points=64, replicates=4, seed=2)
    same = compare_models(_Net(), _Net(scale=2.0), "normal", **kw)
    assert [x.name for x in same.layers] == ["act"] and same.layers[0].units == 4
    # the same hidden layer: the change of its variance-weighted ν is exactly 0 on the same points
    assert same.layers[0].nu_weighted_change.estimate == 0.0
    assert not any("Layers compared" in n for n in same.notices)
    sized = compare_models(_Net(), _Net(hidden=5), "normal", **kw)
    assert sized.layers == []  # other unit count
    renamed = compare_models(_Net(), _Net(name="other"), "normal", **kw)
    assert renamed.layers == []  # other name
    for r in (sized, renamed):  # the layer left out is named, so that a pass does not hide it
        assert any("Layers compared: 0 of the 1 chosen" in n and "'act'" in n for n in r.notices), r.notices
    none = compare_models(_Net(), _Net(), "normal", layers="none", **kw)
    assert none.layers == [] and not any("Layers compared" in n for n in none.notices)


def test_a_baseline_layer_the_new_model_lacks_is_named():
    from audit.studies import audit_model

    kw = dict(points=64, replicates=4, seed=2)
    baseline = audit_model(_Net(), "normal", layers="all", **kw)
    kept = compare_models(baseline, _Net(scale=2.0), "normal", layers="all")
    assert [x.name for x in kept.layers] == ["act"] and not any("Layers compared" in n for n in kept.notices)
    renamed = compare_models(baseline, _Net(name="other"), "normal", layers="all")
    assert renamed.layers == []
    assert any("Layers compared: 0 of the 1 chosen" in n and "'act'" in n for n in renamed.notices)


def test_gates_are_judged_on_the_result():
    gates = Gates(dimension_rise=0.1, ranking=0.5, total_index=0.01)
    r = compare_models(_m(clifuncs.additive6), _m(clifuncs.additive6_plus_product), "normal", points=256,
                       replicates=8, seed=5, gates=gates)  # fmt: skip
    assert [g.name for g in r.gates] == [
        "mean_dimension", "dimension_rise", "total_index", "first_order", "ranking", "top_k_kept",
        "layer_mean_dimension", "variance",
    ]  # fmt: skip
    rise = r.gates[1]
    e = r.outputs[0].mean_dimension_change
    assert rise.passed == (not e.ci_low > 0.1)  # a rise counts when even the interval's lower end exceeds 0.1
    assert r.passed == all(g.passed for g in r.gates)
    off = Gates(**dict.fromkeys(("mean_dimension", "total_index", "first_order", "ranking", "top_k_kept",
                                 "layer_mean_dimension", "variance")))  # fmt: skip
    assert compare_models(_m(clifuncs.additive6), _m(clifuncs.additive6), "normal", points=64, seed=5,
                          gates=off).gates == []  # fmt: skip


def test_design_options_are_checked_for_both_sides():
    with pytest.raises(UserError, match="At least 2 replicates"):
        compare_models(_m(clifuncs.additive6), _m(clifuncs.additive6), "normal", replicates=1)


def _wide(x):
    """2000 outputs of 10 inputs: wide enough for the memory plan to matter."""
    return np.repeat(x[:, :1], 2000, axis=1) * np.arange(1, 2001) + x[:, 1:2]


def test_a_comparison_that_fits_the_memory_limit_is_not_refused(monkeypatch):
    monkeypatch.setattr(memory, "available_memory", lambda: 8 << 30)
    model = PythonModel(_wide, 10, source="wide")
    limit = 200 << 20
    options = DesignOptions(points=256, replicates=2, seed=1)
    assert prepare(model, "normal", design=options, layers="none", memory_limit=limit).block < 256  # audit fits
    compare_models(model, model, "normal", points=256, replicates=2, seed=1, layers="none", memory_limit=limit)
