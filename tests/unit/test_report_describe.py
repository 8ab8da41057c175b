"""Tests of audit.report.describe: input laws, run header rows, the line under an output."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from reportdata import est, layer, make_comparison, make_result

from audit.report.describe import (
    describe_comparison_run,
    describe_design,
    describe_inputs,
    describe_law,
    describe_model,
    describe_output,
    describe_run,
    layer_inert,
    layer_units,
    output_units,
)
from audit.report.document import Field
from audit.report.text import GLUE, fmt, fmt_interval
from audit.results import Estimate, LayerResult, OutputResult, UnitResult


def test_laws_are_described_with_parameters_in_order_and_units():
    assert describe_law({"law": "uniform", "low": 0, "high": 16, "unit": "W/m²"}) == "uniform(0, 16) W/m²"
    assert describe_law({"law": "triangular", "high": 1, "mode": 0.2, "low": 0}) == "triangular(0, 0.2, 1)"
    assert describe_law({"law": "lognormal", "log_mean": 1.0, "log_sd": 0.5}) == "lognormal(1, 0.5)"
    assert describe_law({"name": "x", "law": "custom", "shape": 2.5}) == "custom(2.5)"
    assert describe_law({}) == "?"


def test_inputs_one_law_listed_counted_and_by_family():
    same = [{"name": f"x{j}", "law": "uniform", "low": 0, "high": 16} for j in range(64)]
    assert describe_inputs(same) == ("64 inputs, all uniform(0, 16)",)
    assert describe_inputs(same[:1]) == ("1 input, all uniform(0, 16)",)
    assert describe_inputs([]) == ("no inputs recorded",)
    mixed = [
        {"name": "wind_speed", "law": "uniform", "low": 0, "high": 12, "unit": "m/s"},
        {"name": "vent", "law": "normal", "mean": 0, "sd": 1},
    ]
    assert describe_inputs(mixed) == ("2 inputs:", "wind_speed uniform(0, 12) m/s", "vent normal(0, 1)")
    counted = same[:60] + [{"name": f"z{j}", "law": "normal", "mean": 0, "sd": 1} for j in range(40)]
    assert describe_inputs(counted) == ("100 inputs: uniform(0, 16) (60), normal(0, 1) (40)",)
    many = [{"name": f"u{j}", "law": "uniform", "low": 0, "high": j + 1} for j in range(12)]
    assert describe_inputs(many) == ("12 inputs: uniform (12)",)


def test_run_rows_in_order_with_numbers_glued_to_their_labels():
    result = make_result()
    rows = describe_run(result)
    assert [r.label for r in rows] == ["model", "inputs", "design", "run", "intervals", "notice"]
    assert rows[0].text == "model_zoo/greenhouse_v1.onnx (onnx)"
    assert f"N{GLUE}={GLUE}1,024{GLUE}points" in rows[2].text
    assert f"R{GLUE}={GLUE}8{GLUE}randomizations" in rows[2].text and f"seed{GLUE}7" in rows[2].text
    assert rows[3].text == f"212,992 model evaluations in 3.2{GLUE}s"
    assert rows[-1] == Field("notice", "points rounded up to 1024, a power of two", tone="warning")
    assert all("\n" not in r.text and all("\n" not in line for line in r.lines) for r in rows)


def test_design_rows_leave_out_what_is_missing_and_say_how_points_are_shared():
    assert describe_design({}) == []
    rows = describe_design({"replicates": 1, "sampler": "mc", "estimator": "fast", "paired": False})
    assert rows[0].text == (
        f"R{GLUE}={GLUE}1{GLUE}randomization, plain Monte Carlo, one-coordinate estimator (mean dimension only), "
        "independent points"
    )
    assert describe_design({"paired": True})[0].text == "same points for both (paired)"
    assert describe_design({"seconds": math.nan, "evaluations": 10})[0].text == "10 model evaluations"
    labels = [r.label for r in describe_comparison_run(make_comparison())]
    assert labels[:3] == ["old", "new", "inputs"] and "design" in labels
    assert describe_model(None) == "unknown model" and describe_model({"source": "f"}) == "f"


def test_output_line_has_mean_variance_nu_interval_and_share():
    o = OutputResult("y", est(1.0, 0.1), est(2.5, 0.1), est(1.2, 0.01), [], [])
    nu = f"mean dimension ν {fmt(1.2)} {fmt_interval(1.19, 1.21)}"
    assert describe_output(o) == f"mean {fmt(1.0)}, variance {fmt(2.5)}, {nu}"
    assert describe_output(o, "°C").replace(GLUE, " ") == f"mean {fmt(1.0)} °C, variance {fmt(2.5)} (°C)², {nu}"
    inert = OutputResult("z", est(0.0, 0.0), Estimate(0.0, 0.0, 0.0, 0.0), None, inert=True)
    assert describe_output(inert) == "mean 0, variance 0: constant under these input laws"


def test_output_units_follow_the_outputs_when_there_is_one_each():
    result = make_result()
    names = [o.name for o in result.outputs]
    units = ["°C", "%", "1", ""][: len(names)] + [""] * (len(names) - 4)
    with_units = dataclasses.replace(result, model={**result.model, "output_units": units})
    assert output_units(with_units) == {names[0]: "°C", names[1]: "%"}  # "1" (no unit) and "" are not shown
    short = dataclasses.replace(result, model={**result.model, "output_units": ["°C"]})
    assert output_units(short) == {}  # not one per output (some outputs left out): none shown


def test_layer_counts_fall_back_to_units_and_shape():
    full = layer("l", "Relu", np.array([1.1, 1.2]), inert=3)
    assert layer_units(full) == 5 and layer_inert(full) == 3
    units = [UnitResult("u0", est(1.0, 0.1), None, inert=True), UnitResult("u1", est(1.0, 0.1), est(1.1, 0.1))]
    bare = LayerResult("b", "Tanh", (4, 2), {}, units)
    assert layer_units(bare) == 2 and layer_inert(bare) == 1
    assert layer_units(LayerResult("s", "Tanh", (4, 2), {}, [])) == 8
