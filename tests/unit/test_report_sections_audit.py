"""Tests of audit.report.sections.audit: what an audit report holds, as plain content."""

from __future__ import annotations

import dataclasses
import json
import math

import pytest
from reportdata import N_FEATURES, THRESHOLD, est, make_result, render_text

from audit.report import build_report, markdown
from audit.report.document import Bar, Bullets, Cell, Fields, Note, Paragraph, Table
from audit.report.findings import derive_findings
from audit.report.sections.audit import (
    MAX_UNITS,
    SECTION_TITLES,
    UNIT_TITLE,
    audit_report,
    inputs_section,
    outputs_table,
)
from audit.report.terms import LEGEND_TITLE, explain
from audit.report.text import fmt, fmt_interval, fmt_setting
from audit.results import AuditResult, Estimate, FeatureEstimate, OutputResult


def test_sections_in_order_with_their_blocks():
    report = audit_report(make_result())
    assert report.kind == "audit" and report.title == "Audit of model_zoo/greenhouse_v1.onnx"
    titles = [s.title for s in report.sections]
    assert titles == [
        SECTION_TITLES["header"],
        SECTION_TITLES["outputs"],
        *(SECTION_TITLES["inputs"].format(name=o.name) for o in make_result().outputs[:3]),
        None,  # "1 more output not ranked here"
        SECTION_TITLES["layers"],
        SECTION_TITLES["findings"],
    ]
    assert isinstance(report.sections[0].blocks[0], Fields)
    assert isinstance(report.sections[-1].blocks[0], Bullets)
    note = report.sections[5].blocks[0]
    assert note == Note("… 1 more output not ranked here; --all-outputs (all_outputs=True) ranks them.")
    built = build_report(make_result())
    assert built == explain(report) and built.sections[-1].title == LEGEND_TITLE


def test_outputs_table_groups_nu_with_its_interval_and_marks_inert_outputs():
    result = make_result()
    table = outputs_table(result)
    assert [c.header for c in table.columns] == [
        "output", "mean", "variance", "mean dimension ν", "95 % interval", "additive share", "leading inputs",
    ]  # fmt: skip
    assert [c.role for c in table.columns] == ["name", "number", "number", "number", "number", "number", "note"]
    assert table.columns[3].group == table.columns[4].group == "mean dimension ν and 95 % interval"
    first = result.outputs[0]
    assert table.rows[0][:5] == (
        first.name,
        fmt(first.mean.estimate),
        fmt(first.variance.estimate),
        fmt(first.mean_dimension.estimate),
        fmt_interval(first.mean_dimension.ci_low, first.mean_dimension.ci_high),
    )
    assert table.rows[2][5] == ""  # no first-order indices: no additive share
    inert = result.outputs[3]
    assert table.rows[3] == ("alarm_flag", fmt(inert.mean.estimate), fmt(0.0), Cell("inert (constant)", "muted"),
                             "", "", "")  # fmt: skip


def test_outputs_table_shows_the_units_of_the_spec():
    result = make_result()
    units = ["°C", "%"] + [""] * (len(result.outputs) - 2)
    table = outputs_table(dataclasses.replace(result, model={**result.model, "output_units": units}))
    assert [c.header for c in table.columns][:3] == ["output", "unit", "mean"]
    assert [row[1] for row in table.rows] == units


def test_inputs_section_ranks_folds_and_draws_bars():
    o = make_result().outputs[0]
    section = inputs_section(o, THRESHOLD)
    heading, table, folded = section.blocks
    lead = f"mean {fmt(o.mean.estimate)}, variance {fmt(o.variance.estimate)}, mean dimension ν "
    assert isinstance(heading, Paragraph) and heading.text.startswith(lead)
    assert isinstance(table, Table) and [c.role for c in table.columns][3] == "bar"
    ranked = [f for f in o.ranked() if f.value.estimate >= THRESHOLD]
    assert [row[0] for row in table.rows] == [f.feature for f in ranked]
    assert table.rows[0][3] == Bar(ranked[0].value.estimate)
    assert folded == Note(f"… {N_FEATURES - 6} more below {fmt_setting(THRESHOLD)}")
    no_first = inputs_section(make_result().outputs[2], THRESHOLD).blocks[1]
    assert [c.header for c in no_first.columns][-1] == "size (0–1)"


def test_outputs_without_indices_or_variance_say_so():
    only_nu = OutputResult("y", est(1.0, 0.1), est(2.0, 0.1), est(1.2, 0.01))
    assert inputs_section(only_nu).blocks[-1] == Note("This estimator measures ν only; no per-input indices.")
    inert = OutputResult("z", est(0.0, 0.0), Estimate(0.0, 0.0, 0.0, 0.0), None, inert=True)
    assert len(inputs_section(inert).blocks) == 1
    empty = audit_report(AuditResult({}, [], {}, []))
    assert empty.sections[1].blocks == (Note("No outputs recorded."),)
    assert empty.sections[-1].blocks == (Paragraph("Nothing stands out under the rules of thumb used here."),)
    assert empty.title == "Audit of model"


def test_folding_below_threshold():
    result = make_result()
    text = render_text(result)
    o = result.outputs[0]
    below = sum(f.value.estimate < THRESHOLD for f in o.total_index)
    assert below == N_FEATURES - 6
    assert f"… {below} more below {fmt_setting(THRESHOLD)}" in text
    # lowering the threshold to zero unfolds everything
    assert "more below" not in render_text(result, threshold=0.0)


def test_all_outputs_and_max_outputs():
    result = make_result()
    assert SECTION_TITLES["inputs"].format(name="alarm_flag") in render_text(result, all_outputs=True)
    one = render_text(result, max_outputs=1)
    assert SECTION_TITLES["inputs"].format(name="inside_humidity") not in one
    assert "3 more outputs not ranked" in one
    with pytest.raises(ValueError, match="max_outputs"):
        audit_report(result, max_outputs=-1)


def test_round_trip_through_json_gives_identical_text():
    result = make_result()
    again = AuditResult.from_dict(json.loads(json.dumps(result.to_dict())))
    assert render_text(again) == render_text(result)
    assert markdown(again) == markdown(result)
    assert audit_report(again) == audit_report(result)


def test_single_randomization_and_fast_estimator():
    nan = math.nan
    names = ["outside_temperature", "solar_irradiance", "vent_opening", "wind_speed"]
    inputs = [
        {"name": "outside_temperature", "law": "uniform", "low": -5, "high": 30, "unit": "°C"},
        {"name": "solar_irradiance", "law": "uniform", "low": 0, "high": 900},
        {"name": "vent_opening", "law": "triangular", "low": 0, "mode": 0.2, "high": 1},
        {"name": "wind_speed", "law": "lognormal", "log_mean": 1.0, "log_sd": 0.5},
    ]
    one = OutputResult(
        "inside_temperature",
        Estimate(20.0, nan, nan, nan),
        Estimate(4.5, nan, nan, nan),
        Estimate(1.3, nan, nan, nan),
        [FeatureEstimate(n, Estimate(0.1 * (i + 1), nan, nan, nan)) for i, n in enumerate(names)],
    )
    fast = OutputResult("inside_humidity", est(70.0, 1.0), est(25.0, 1.0), est(1.2, 0.01))
    design = {"points": 256, "replicates": 1, "estimator": "fast", "sampler": "mc"}
    result = AuditResult({"source": "zoo:f", "format": "python"}, inputs, design, [one, fast])
    text = render_text(result)
    assert max(len(line) for line in text.splitlines()) <= 80
    assert "R = 1 randomization," in text
    assert "vent_opening triangular(0, 0.2, 1)" in text
    assert "wind_speed lognormal(1, 0.5)" in text
    assert "outside_temperature uniform(-5, 30) °C" in text
    assert "1.300 n/a" in text  # no interval from one randomization
    assert "measures ν only" in text
    found = {f.kind: f for f in derive_findings(result)}
    assert found["no_interval"].subjects == ("inside_temperature",)
    md = markdown(result)
    assert "  - vent_opening triangular(0, 0.2, 1)" in md


def test_layers_measured_unit_by_unit_get_a_section_of_their_own():
    result = make_result()
    layer = result.layers[1]
    names = [f["name"] for f in result.inputs]
    detailed = [
        dataclasses.replace(u, total_index=[FeatureEstimate(n, est(0.5 / (k + 1), 0.01)) for k, n in enumerate(names)])
        for u in layer.units
    ]
    with_detail = dataclasses.replace(result, layers=[result.layers[0], dataclasses.replace(layer, units=detailed)])
    report = audit_report(with_detail)
    titles = [s.title for s in report.sections]
    at = titles.index(UNIT_TITLE.format(name=layer.name))
    assert titles[at - 1] == SECTION_TITLES["layers"] and UNIT_TITLE.format(name=result.layers[0].name) not in titles
    table, more = report.sections[at].blocks[:2]
    assert isinstance(table, Table) and len(table.rows) == MAX_UNITS
    by_variance = sorted(detailed, key=lambda u: -u.variance.estimate)[:MAX_UNITS]
    assert [row[0] for row in table.rows] == [u.unit for u in by_variance]
    assert table.rows[0][-1] == f"{names[0]} {fmt(0.5, 3)}, {names[1]} {fmt(0.25, 3)}, {names[2]} {fmt(0.5 / 3, 3)}"
    assert more == Note(f"… {len(detailed) - MAX_UNITS} more units; every unit's indices are in the JSON report.")
    assert "Units of encoder.relu2" in render_text(with_detail)
