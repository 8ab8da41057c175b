"""Tests of audit.report.findings.advice: what pre-integration and freezing buy, in words."""

from __future__ import annotations

import dataclasses

from reportdata import est, make_advice

from audit.report.findings import derive_advice_findings
from audit.report.findings.advice import lowers
from audit.report.text import fmt
from audit.results import AdviceResult, OutputAdvice


def test_advice_findings_in_their_order():
    found = derive_advice_findings(make_advice())
    assert [f.kind for f in found] == [
        "preintegrate", "gain", "no_gain", "costly", "identity", "quadrature", "freeze", "inert",
    ]  # fmt: skip
    by = {f.kind: f for f in found}
    assert by["preintegrate"].subjects == ("inside_temperature", "solar_irradiance")
    assert f"from {fmt(1.044)} to {fmt(1.010)}" in by["preintegrate"].text
    assert "4 Gauss nodes" in by["preintegrate"].text
    # equal-cost ratio 2.5 pays; 0.218 does not
    assert by["gain"].subjects == ("inside_humidity", "vent_opening") and "6.00 times smaller" in by["gain"].text
    assert by["costly"].subjects == ("inside_temperature",) and "0.218 at equal cost" in by["costly"].text
    # ν after 1.25 ± 0.01 overlaps ν 1.24 ± 0.012
    assert by["no_gain"].subjects == ("inside_humidity",)
    assert by["identity"].subjects == ("vent_opening",) and "vent_opening (inside_temperature)" in by["identity"].text
    assert by["quadrature"].subjects == ("vent_opening",)
    assert by["freeze"].subjects == ("inside_temperature", "outside_humidity")
    assert "at most 0.02400 %" in by["freeze"].text and "measured 0.02000 %" in by["freeze"].text
    assert by["inert"].subjects == ("alarm_flag",)


def test_a_measured_change_above_the_bound_asks_for_more_points():
    by = {f.kind: f for f in derive_advice_findings(make_advice(holds=False))}
    assert by["freeze_bound"].subjects == ("inside_temperature",) and "more points" in by["freeze_bound"].text


def test_inputs_frozen_for_every_output_are_named_once():
    base = make_advice()
    first = base.outputs[0]
    twin = OutputAdvice(dataclasses.replace(first.audit, name="twin"), [], first.freeze, first.freeze_group)
    result = AdviceResult(base.model, base.inputs, base.design, [first, twin], base.settings)
    by = {f.kind: f for f in derive_advice_findings(result)}
    assert by["freeze_everywhere"].subjects == ("outside_humidity",)
    assert derive_advice_findings(AdviceResult(base.model, base.inputs, base.design, [])) == []


def test_lower_means_a_whole_interval_below_or_constant():
    assert lowers(est(1.2, 0.01), None) and lowers(est(1.2, 0.01), est(1.1, 0.01))
    assert not lowers(est(1.2, 0.05), est(1.16, 0.05)) and not lowers(None, est(1.0, 0.01))
