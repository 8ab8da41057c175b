"""Tests of audit.report.ranges: estimates outside their possible range are marked, never clamped.

The ranges are the definitions: a normalised Sobol' index lies in [0, 1] and a first-order index at
most at the total index of the same input; ν = Σ_j total index lies in [1, d] (Sobol', "Sensitivity
estimates for nonlinear mathematical models", Math. Modeling Comput. Experiment, 1993; Owen,
"The dimension distribution and quadrature test functions", Statistica Sinica, 2003).
"""

from __future__ import annotations

import dataclasses

from reportdata import THRESHOLD, est, make_result

from audit.report.document import Cell, Note, Table
from audit.report.ranges import BEYOND, NOISE, Marks, place
from audit.report.sections.audit import inputs_section
from audit.report.text import fmt, to_ascii
from audit.results import Estimate, FeatureEstimate


def test_place_says_inside_noise_or_beyond():
    assert place(est(0.5, 0.1), 0.0, 1.0) == "inside"
    assert place(est(-0.001, 0.002), 0.0, 1.0) == "noise"  # the interval reaches 0
    assert place(est(-0.01, 0.002), 0.0, 1.0) == "beyond"
    assert place(est(1.02, 0.05), 0.0, 1.0) == "noise"
    assert place(Estimate(-0.1, float("nan"), float("nan"), float("nan")), 0.0, 1.0) == "beyond"
    assert place(Estimate(float("nan"), 0, 0, 0), 0.0, 1.0) == "inside"  # nothing to mark


def test_marks_keep_the_estimate_and_explain_themselves():
    marks = Marks()
    assert marks.index(est(0.3, 0.1)) == fmt(0.3) and marks.note() is None
    assert marks.index(est(-8.5e-4, 1e-3)) == f"{fmt(-8.5e-4)} {NOISE}"
    assert marks.nu(est(0.98, 0.03), d=8) == f"{fmt(0.98)} {NOISE}"
    assert marks.nu(est(9.5, 0.1), d=8) == Cell(f"{fmt(9.5)} {BEYOND}", "alert")
    note = marks.note()
    assert isinstance(note, Note) and NOISE in note.text and BEYOND in note.text and "[1, d]" in note.text


def test_first_order_above_the_total_is_noise_when_the_intervals_meet():
    marks = Marks()
    total = est(0.10, 0.01)
    assert marks.first_order(est(0.105, 0.01), total) == f"{fmt(0.105)} {NOISE}"
    assert marks.first_order(est(0.2, 0.01), total) == Cell(f"{fmt(0.2)} {BEYOND}", "alert")
    assert marks.first_order(est(0.09, 0.01), total) == fmt(0.09)
    assert to_ascii(NOISE).isascii() and to_ascii(BEYOND).isascii()


def test_the_inputs_section_marks_a_negative_first_order_index_and_says_why():
    o = make_result().outputs[0]
    first = list(o.first_order)
    j = next(i for i, f in enumerate(o.total_index) if f.value.estimate >= THRESHOLD)
    first[j] = FeatureEstimate(first[j].feature, est(-0.002, 0.003))  # noise around 0
    section = inputs_section(dataclasses.replace(o, first_order=first), THRESHOLD)
    table = next(b for b in section.blocks if isinstance(b, Table))
    row = next(r for r in table.rows if r[0] == first[j].feature)
    assert row[-1] == f"{fmt(-0.002)} {NOISE}"
    assert any(isinstance(b, Note) and b.text.startswith(NOISE) for b in section.blocks)


def test_advice_and_comparison_tables_mark_their_indices_too():
    from reportdata import make_advice, make_comparison

    from audit.report.sections.advice import output_section
    from audit.report.sections.comparison import moved_blocks
    from audit.results import FreezeItem

    first = make_advice().outputs[0]
    negative = dataclasses.replace(first, freeze=[FreezeItem("outside_humidity", est(-2e-5, 4e-5), True)])
    section = output_section(negative, 0.001)
    rows = [r for b in section.blocks if isinstance(b, Table) for r in b.rows if r[0] == "outside_humidity"]
    assert rows[-1][1] == f"{fmt(-2e-5)} {NOISE}" and section.blocks[-1].text.startswith(NOISE)
    result = make_comparison()
    moved = result.outputs[0]
    name = moved.moved[0]
    noisy = est(-1e-4, 2e-4)
    old = [FeatureEstimate(f.feature, noisy if f.feature == name else f.value) for f in moved.old.total_index]
    side = dataclasses.replace(moved.old, total_index=old)
    changed = dataclasses.replace(result, outputs=[dataclasses.replace(moved, old=side)])
    blocks = moved_blocks(changed)
    table = next(b for b in blocks if isinstance(b, Table))
    assert table.rows[0][1] == f"{fmt(-1e-4, 3)} {NOISE}" and isinstance(blocks[-1], Note)


def test_a_layer_summary_below_1_is_marked_as_noise_and_explained():
    # Summaries leave out units whose ν interval lies wholly outside [1, d] (DEVELOPERS.md, inert.py), so a
    # quantile below 1 comes from a unit whose interval reaches 1: noise by the definition of the range.
    from audit.report import build_report
    from audit.report.sections.audit import SECTION_TITLES, layers_table

    result = make_result()
    low = dataclasses.replace(result.layers[0], summary={**result.layers[0].summary, "nu_min": 0.9622})
    result = dataclasses.replace(result, layers=[low, *result.layers[1:]])
    marks = Marks()
    rows = layers_table(result, marks).rows
    assert rows[0][4].startswith(f"0.9622 {NOISE} / ") and NOISE not in rows[1][4]
    assert marks.used == {NOISE}
    section = next(s for s in build_report(result).sections if s.title == SECTION_TITLES["layers"])
    notes = [b.text for b in section.blocks if isinstance(b, Note)]
    assert any(n.startswith(NOISE) and "[1, d] for ν" in n for n in notes)
    assert Marks().summary_nu(1.5, 8) == fmt(1.5) and Marks().summary_nu(None, 8) == fmt(None)
    assert Marks().summary_nu(9.0, 8).endswith(NOISE)  # above d
    # the units the summary counts decide: one wholly below 1 is beyond noise; without units or intervals, beyond
    assert Marks().summary_nu(0.97, 8, [est(0.97, 0.01), est(1.2, 0.1)]).endswith(BEYOND)
    assert Marks().summary_nu(0.99, 8, [est(0.99, 0.02), est(1.2, 0.1)]).endswith(NOISE)
    assert Marks().summary_nu(0.99, 8, [], intervals=False).endswith(BEYOND)
