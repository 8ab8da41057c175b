"""Tests of audit.report.findings.comparison: changes beyond noise and the note on the marks."""

from __future__ import annotations

from reportdata import make_comparison

from audit.report.findings import change_note, excludes_zero
from audit.results import ComparisonResult, Estimate


def test_a_change_is_beyond_noise_when_its_interval_excludes_zero():
    assert excludes_zero(Estimate(0.2, 0.1, 0.3, 0.05)) and excludes_zero(Estimate(-0.2, -0.3, -0.1, 0.05))
    assert not excludes_zero(Estimate(0.05, -0.1, 0.2, 0.05)) and not excludes_zero(Estimate(0.0, 0.0, 0.0, 0.0))


def test_the_note_says_how_intervals_were_made():
    assert "(paired over randomizations)" in change_note(make_comparison())
    assert "(independent points)" in change_note(make_comparison(paired=False))
    empty = make_comparison()
    nothing = ComparisonResult(empty.old_model, empty.new_model, empty.inputs, empty.design, [])
    assert change_note(nothing) is None
