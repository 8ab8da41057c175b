"""Tests of audit.report.summary: a result in a few lines, for its repr."""

from __future__ import annotations

from reportdata import all_kinds, grid_result

from audit.report.summary import SUMMARY_OUTPUTS, summary
from audit.report.text import fmt


def test_each_kind_names_the_model_the_run_and_its_outputs():
    kinds = all_kinds()
    audit_lines = summary(kinds["audit"]).splitlines()
    assert audit_lines[0].startswith("AuditResult of model_zoo/greenhouse_v1.onnx (onnx): 24 inputs, 4 outputs")
    assert "N = 1,024 points × R = 8" in audit_lines[1] and "seed 7" in audit_lines[1]
    first = kinds["audit"].outputs[0]
    assert audit_lines[2] == (
        f"  {first.name}: mean dimension ν {fmt(first.mean_dimension.estimate)} "
        f"[{fmt(first.mean_dimension.ci_low)}, {fmt(first.mean_dimension.ci_high)}]; leading "
        + ", ".join(f.feature for f in first.ranked()[:3])
    )
    assert "… 1 more output" in audit_lines[-2] and "notebook" in audit_lines[-1]
    comparison = summary(kinds["comparison"])
    assert comparison.startswith("ComparisonResult of model_zoo/greenhouse_v1.onnx (onnx) → ")
    assert "gates FAILED (2)" in comparison and "moved: x0, x1" in comparison
    advice = summary(kinds["advice"])
    assert "pre-integrate solar_irradiance (ν after 1.010)" in advice and "freeze outside_humidity" in advice
    assert "inert (constant)" in advice


def test_many_outputs_stay_a_few_lines():
    text = summary(grid_result({}, n_out=10))
    assert len(text.splitlines()) == 2 + SUMMARY_OUTPUTS + 2 and "… 7 more outputs" in text
