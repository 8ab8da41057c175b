"""Tests of audit.report.charts: which charts each kind of result gets, and in which section."""

from __future__ import annotations

import dataclasses

from reportdata import all_kinds, grid_result

from audit.report.charts import charts_for
from audit.report.charts.depth import DEPTH_TITLE
from audit.report.charts.indices import indices_title
from audit.report.sections.advice import ADVICE_TITLES
from audit.report.sections.audit import SECTION_TITLES
from audit.report.sections.comparison import COMPARISON_TITLES


def test_an_audit_gets_ranked_indices_per_output_and_the_depth_chart():
    result = all_kinds()["audit"]
    charts = charts_for(result, "p")
    ranked = [o for o in result.outputs if o.total_index and not o.inert]
    titles = [indices_title(o.name, bool(o.first_order)) for o in ranked]
    assert [c.title for c in charts] == [*titles, DEPTH_TITLE]
    assert [c.section for c in charts[:-1]] == [SECTION_TITLES["inputs"].format(name=o.name) for o in ranked]
    assert all(c.key.startswith("p") for c in charts) and len({c.key for c in charts}) == len(charts)


def test_only_the_charts_of_the_sections_asked_for_are_drawn():
    result = all_kinds()["audit"]
    assert [c.title for c in charts_for(result, sections={SECTION_TITLES["layers"]})] == [DEPTH_TITLE]
    assert charts_for(result, sections=set()) == []


def test_an_image_input_gets_heat_maps_overall_and_per_output():
    result = grid_result({}, n_out=3)
    result = dataclasses.replace(result, model={**result.model, "input": {"name": "image", "shape": [1, 8, 8]}})
    charts = charts_for(result)
    maps = [c for c in charts if c.shape]
    assert [c.shape for c in maps] == [(8, 8), (8, 8)]
    assert "for all outputs together" in maps[0].title and maps[1].title.endswith("per output")
    assert all(c.section == SECTION_TITLES["outputs"] for c in maps)


def test_comparisons_and_advice_get_their_own_charts():
    comparison = charts_for(all_kinds()["comparison"])
    assert comparison[0].section == COMPARISON_TITLES["outputs"]
    assert {c.section for c in comparison[1:]} == {COMPARISON_TITLES["inputs"]}
    advice = all_kinds()["advice"]
    charts = charts_for(advice)
    first = ADVICE_TITLES["output"].format(name=advice.outputs[0].name)
    assert [c.section for c in charts].count(first) == 3  # pre-integration, gain, freezing
    assert all(c.heading for c in charts)
