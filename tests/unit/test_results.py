"""Result objects and their JSON form (audit.results): round trips for every kind, and refusals."""

import json
import math

import pytest

import audit.results.base
from audit.results import (
    SCHEMA,
    AdviceResult,
    AuditResult,
    Candidate,
    ComparisonResult,
    Estimate,
    FeatureEstimate,
    FreezeGroup,
    FreezeItem,
    GainRow,
    GateCheck,
    LayerChange,
    LayerEntry,
    LayerResult,
    ModelSignature,
    OutputAdvice,
    OutputChange,
    OutputResult,
    RqmcGain,
    TensorEntry,
    UnitResult,
    VarianceIdentity,
    result_from_dict,
    set_renderer,
)

NAN = math.nan
E = Estimate(1.5, 1.0, 2.0, 0.25)
SMALL = Estimate(0.001, 0.0005, 0.002, 0.0004)
UNDEFINED = Estimate(NAN, NAN, NAN, NAN)
OUT = OutputResult("y", E, E, E, [FeatureEstimate("a", E), FeatureEstimate("b", SMALL)], [FeatureEstimate("a", E)])
INERT = OutputResult("z", E, Estimate(0.0, 0.0, 0.0, 0.0), None, inert=True)
LAYER = LayerResult(
    "h",
    "Tanh",
    (2, 2),
    {"units": 4, "inert_units": 1, "nu_min": 1.0, "nu_median": 1.2, "nu_weighted": NAN},
    [UnitResult("h[0,0]", E, E, total_index=[FeatureEstimate("a", E)]), UnitResult("h[0,1]", E, None, inert=True)],
)
INPUTS = [
    {"name": "a", "law": "normal", "mean": 0.0, "sd": 1.0},
    {"name": "b", "law": "uniform", "low": 0.0, "high": 1.0, "unit": "m"},
]


def _audit():
    model = {"source": "m.onnx", "format": "onnx"}
    return AuditResult(model, INPUTS, {"points": 64, "seed": 3}, [OUT, INERT], [LAYER], ["points rounded up"])


def _comparison():
    shifts = [FeatureEstimate("a", E), FeatureEstimate("b", UNDEFINED)]
    change = OutputChange("y", OUT, OUT, E, shifts, ["a"], 0.6667, 2, 0.5)
    inert = OutputChange("z", INERT, INERT, None, [], [], NAN, 0, NAN)
    layers = [LayerChange("h", 4, {"units": 4, "nu_weighted": 1.2}, {"units": 4, "nu_weighted": NAN}, E)]
    gates = [
        GateCheck("max_dimension_rise", 0.1, 1.0, False, "largest lower end"),
        GateCheck("min_rank_agreement", 0.5, 0.6667, True),
    ]
    old, new = {"source": "old"}, {"source": "new"}
    return ComparisonResult(old, new, INPUTS, {"paired": True}, [change, inert], layers, gates, ["a notice"])


def _advice():
    identity = VarianceIdentity(E, E, Estimate(0.0, -0.1, 0.1, 0.05), True)
    candidate = Candidate("a", E, E, E, identity, 16, 2e-4, True, 5000)
    constant = Candidate("b", SMALL, None, E, identity, 4, NAN, False)
    gain = RqmcGain("a", 16, 8, [GainRow(256, 1e-3, 1e-5), GainRow(1024, 2e-4, 0.0)], -1.2, -2.1, 40.0, 8192, 131072)
    group = FreezeGroup(["b"], SMALL, SMALL, SMALL, SMALL, 0.01, 2048)
    advice = OutputAdvice(OUT, [candidate, constant], [FreezeItem("b", SMALL, True)], group, gain)
    bare = OutputAdvice(INERT)
    design = {"points": 64, "evaluations": 9}
    return AdviceResult({"source": "m"}, INPUTS, design, [advice, bare], {"top": 3}, ["advice notice"])


KINDS = {"audit": _audit, "comparison": _comparison, "advice": _advice}


@pytest.mark.parametrize("kind", list(KINDS))
def test_every_kind_round_trips_through_json(kind):
    result = KINDS[kind]()
    data = result.to_dict()
    text = json.dumps(data, allow_nan=False)  # NaN and infinities are written as null: strict JSON
    assert data["tool"] == "netdim" and data["schema"] == SCHEMA and data["kind"] == kind
    back = result_from_dict(json.loads(text))
    assert type(back) is type(result) and back.to_dict() == data


def test_round_trips_keep_the_objects_and_the_undefined_values():
    back = result_from_dict(json.loads(json.dumps(_audit().to_dict())))
    assert back.outputs == _audit().outputs  # no NaN there: the objects themselves are equal
    assert back.output("z").inert and back.output("z").mean_dimension is None
    assert math.isnan(back.layers[0].summary["nu_weighted"]) and back.layers[0].shape == (2, 2)
    assert back.layers[0].units[1].mean_dimension is None and back.layers[0].units[1].total_index == []
    comparison = result_from_dict(_comparison().to_dict())
    assert not comparison.passed and math.isnan(comparison.outputs[1].kendall_tau)
    assert math.isnan(comparison.outputs[0].total_index_change[1].value.estimate)
    advice = result_from_dict(_advice().to_dict())
    assert advice.outputs[0].best.feature == "a" and advice.outputs[0].preintegrate[1].mean_dimension_after is None
    assert advice.outputs[0].rqmc_gain.rows[1].ratio == math.inf  # f̃ constant at that n
    assert advice.outputs[1].freeze_group is None and advice.outputs[1].rqmc_gain is None
    assert advice.audit.outputs == [OUT, INERT] and advice.output("y").name == "y"


def test_a_report_without_a_kind_is_an_audit():
    data = _audit().to_dict()
    del data["kind"]
    assert isinstance(result_from_dict(data), AuditResult)


@pytest.mark.parametrize(
    "data,needle",
    [
        ([1, 2], "a report is a JSON object, got list"),
        ("text", "a report is a JSON object, got str"),
        ({"kind": "forecast"}, "unknown report kind 'forecast'; known kinds: audit, comparison, advice"),
        ({"schema": 1, "kind": "audit"}, 'not a netdim report (missing "tool": "netdim")'),
        ({"tool": "netdim", "schema": 2, "kind": "audit"}, "report schema 2 is not supported (expected 1)"),
        ({"tool": "netdim", "schema": 2, "kind": "advice"}, "report schema 2 is not supported"),
        ({"tool": "other", "kind": "comparison"}, "not a netdim comparison report"),
    ],
)
def test_bad_reports_raise_value_error_saying_why(data, needle):
    with pytest.raises(ValueError) as e:
        result_from_dict(data)
    assert needle in str(e.value)
    with pytest.raises(ValueError, match="not an advice report"):
        AdviceResult.from_dict({**_advice().to_dict(), "kind": "comparison"})


def test_a_comparison_of_another_schema_is_refused():
    with pytest.raises(ValueError, match="schema"):
        result_from_dict({**_comparison().to_dict(), "schema": SCHEMA + 1})


def _without(path):
    data = json.loads(json.dumps(_audit().to_dict()))
    where = data
    for key in path[:-1]:
        where = where[key]
    del where[path[-1]]
    return data


@pytest.mark.parametrize(
    "data",
    [
        {"tool": "netdim", "schema": 1, "kind": "audit"},
        _without(("outputs", 0, "mean")),
        _without(("layers", 0, "units")),
        {**_audit().to_dict(), "outputs": "y"},
    ],
    ids=["only a header", "an output without a mean", "a layer without units", "outputs of the wrong type"],
)
def test_an_incomplete_report_raises_value_error(data):
    with pytest.raises(ValueError):
        result_from_dict(data)


def test_estimates_and_their_json_form():
    assert E.width == 1.0 and E.covers(1.0) and E.covers(2.0) and not E.covers(2.1)
    assert E.to_dict() == {"estimate": 1.5, "ci_low": 1.0, "ci_high": 2.0, "std_error": 0.25}
    assert UNDEFINED.to_dict() == {"estimate": None, "ci_low": None, "ci_high": None, "std_error": None}
    assert Estimate.from_dict(E.to_dict()) == E
    assert math.isnan(Estimate.from_dict({"estimate": 1.0, "ci_low": 0.0, "ci_high": 2.0}).std_error)
    assert not UNDEFINED.covers(0.0)
    assert FeatureEstimate.from_dict(FeatureEstimate("a", E).to_dict()) == FeatureEstimate("a", E)


def test_derived_figures():
    assert OUT.additive_share == 1.5 and [f.feature for f in OUT.ranked()] == ["a", "b"]
    assert FreezeGroup(["b"], SMALL, SMALL, E, E, 0.01).holds is False  # measured wholly above the bound
    assert FreezeGroup(["b"], SMALL, SMALL, SMALL, SMALL, 0.01).holds
    assert math.isnan(RqmcGain("a", 4, 8, [], NAN, NAN, NAN, 0, 0).ratio)  # no rows, no ratio
    with pytest.raises(KeyError, match="no output named 'w'"):
        _audit().output("w")


def test_the_model_signature():
    inputs = [TensorEntry("x", (2, 3), "float32"), TensorEntry("t", (), "float32")]
    outputs = [TensorEntry("y", (2,), "float32")]
    sig = ModelSignature("m.onnx", "onnx", inputs, outputs, [LayerEntry("h", "Tanh", (4,), True)], ["note"])
    assert sig.features == 7 and sig.kind == "signature" and sig.layers[0].units == 4
    assert sig.to_dict()["inputs"][0] == {"name": "x", "shape": [2, 3], "dtype": "float32"}
    assert sig.to_dict()["layers"] == [{"name": "h", "op": "Tanh", "shape": [4], "activation": True}]


def test_results_are_shown_through_the_registered_renderer(monkeypatch):
    for name in ("_RENDERER", "_HTML", "_SUMMARY"):
        monkeypatch.setattr(audit.results.base, name, None)
    assert _audit().__rich__() == "AuditResult (import audit to render it)"
    assert _audit()._repr_html_() is None  # a notebook then shows the repr
    assert repr(_audit()) == f"<AuditResult: {len(_audit().outputs)} outputs (import audit for a summary)>"
    set_renderer(lambda result: f"rendered {result.kind}", html=lambda r: f"<p>{r.kind}</p>", summary=lambda r: "few")
    assert _comparison().__rich__() == "rendered comparison"
    assert _comparison()._repr_html_() == "<p>comparison</p>" and repr(_comparison()) == "few"


def test_results_repr_is_short_not_the_dataclass_dump():
    for result in (_audit(), _comparison()):
        assert len(repr(result).splitlines()) <= 8 and len(repr(result)) < 2000
        assert not repr(result).startswith(f"{type(result).__name__}(model=")


def test_json_round_trip(net_advice):
    d = net_advice.to_dict()
    assert d["tool"] == "netdim" and d["schema"] == 1 and d["kind"] == "advice"
    entry = d["outputs"][0]
    for key in (
        "preintegrate",
        "freeze",
        "freeze_group",
        "rqmc_gain",
        "mean_dimension",
        "total_index",
    ):
        assert key in entry
    cand = entry["preintegrate"][0]
    assert set(cand["mean_dimension_after"]) == {"estimate", "ci_low", "ci_high", "std_error"}
    for key in ("feature", "variance_after", "variance_identity", "nodes", "quadrature_error"):
        assert key in cand
    text = json.dumps(d)
    back = AdviceResult.from_dict(json.loads(text))
    assert back.to_dict() == json.loads(text)
    assert back.outputs[0].freeze_group.holds == net_advice.outputs[0].freeze_group.holds
    with pytest.raises(ValueError, match="advice"):
        AdviceResult.from_dict({**d, "kind": "audit"})
    s = sum(v for v in d["design"]["evaluations_by_phase"].values())
    assert d["design"]["evaluations"] == s


def test_the_json_says_which_indices_lie_outside_their_range() -> None:
    """The text report's two marks, in the JSON: an index outside [0, 1] (or a first-order index above
    its input's total) is ``within noise`` when its interval reaches back into the range, else
    ``beyond noise``; an index inside its range carries no such key."""
    inside = Estimate(0.4, 0.3, 0.5, 0.05)
    total_b = Estimate(0.1, 0.08, 0.12, 0.01)
    out = OutputResult(
        "y", E, E, E,
        [FeatureEstimate("a", inside), FeatureEstimate("b", total_b),
         FeatureEstimate("c", Estimate(1.02, 0.99, 1.05, 0.01))],  # above 1, interval reaches 1
        [FeatureEstimate("a", Estimate(-0.01, -0.03, 0.01, 0.01)),  # below 0, interval reaches 0
         FeatureEstimate("b", Estimate(0.3, 0.25, 0.35, 0.02)),  # above the total, interval wholly above it
         FeatureEstimate("c", Estimate(-0.2, -0.3, -0.1, 0.05))],  # wholly below 0
    )  # fmt: skip
    d = out.to_dict()
    assert [t.get("outside_range") for t in d["total_index"]] == [None, None, "within noise"]
    assert [f.get("outside_range") for f in d["first_order"]] == ["within noise", "beyond noise", "beyond noise"]
    again = OutputResult.from_dict(json.loads(json.dumps(d)))
    assert again == out and again.to_dict() == d


def test_the_json_says_which_mean_dimensions_lie_outside_one_to_d() -> None:
    """ν of a unit with variance lies in [1, d] (a sum of d total indices, each at most 1, at least the sum
    of first-order indices, which is 1; common practice, no source). Outside it, ν's dict carries the same
    words as an index: ``within noise`` when its interval reaches back into [1, d], else ``beyond noise``."""
    totals = [FeatureEstimate(f, Estimate(0.5, 0.4, 0.6, 0.05)) for f in "abc"]  # d = 3

    def nu_of(nu):
        return OutputResult("y", E, E, nu, totals, []).to_dict()["mean_dimension"].get("outside_range")
    assert nu_of(Estimate(1.5, 1.2, 1.8, 0.1)) is None
    assert nu_of(Estimate(0.97, 0.9, 1.04, 0.03)) == "within noise"
    assert nu_of(Estimate(3.5, 3.2, 3.8, 0.1)) == "beyond noise"
    unit = UnitResult("h[0]", E, Estimate(0.8, 0.7, 0.9, 0.05))
    assert "outside_range" not in unit.to_dict()["mean_dimension"]  # no d known: nothing said
    assert unit.to_dict(3)["mean_dimension"]["outside_range"] == "beyond noise"
    assert UnitResult.from_dict(json.loads(json.dumps(unit.to_dict(3)))) == unit
    layer = LayerResult("h", "relu", (1,), {"units": 1}, [unit])
    base = dict(model={}, design={}, outputs=[], layers=[layer])
    inputs = [{"name": f} for f in "abcd"]
    wide = UnitResult("h[0]", E, Estimate(2.5, 2.3, 2.7, 0.1))  # inside [1, 4], beyond 2 groups
    grouped = AuditResult(**{**base, "layers": [LayerResult("h", "relu", (1,), {}, [wide])]}, inputs=inputs,
                          groups=[{"name": "g1", "inputs": ["a", "b"]}, {"name": "g2", "inputs": ["c", "d"]}])
    whole = AuditResult(**base, inputs=inputs).to_dict()
    assert whole["layers"][0]["units"][0]["mean_dimension"]["outside_range"] == "beyond noise"  # d = 4 inputs
    assert grouped.dimension == 2
    assert grouped.to_dict()["layers"][0]["units"][0]["mean_dimension"]["outside_range"] == "beyond noise"
