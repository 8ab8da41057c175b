"""Tests of audit.report.html: every kind of result as a page with its charts."""

from __future__ import annotations

import pytest
from htmlcheck import read_page
from reportdata import all_kinds, grid_result

from audit.report import build_report, html_fragment, html_page
from audit.report.charts import charts_for
from audit.report.charts.indices import indices_title
from audit.report.html import GENERATOR


@pytest.mark.parametrize("kind", ["audit", "comparison", "advice"])
def test_each_kind_is_one_page_with_every_chart_of_its_sections(kind):
    result = all_kinds()[kind]
    text = html_page(result)
    parsed = read_page(text)
    assert not parsed.problems and not parsed.external and parsed.scripts == 0
    assert f'content="{GENERATOR}"' in text and parsed.titles() == [c.title for c in charts_for(result)]
    assert len(set(parsed.ids)) == len(parsed.ids)  # ids are unique, the charts' included
    report = build_report(result, **({"all_outputs": True} if kind == "audit" else {}))
    for section in report.sections:
        if section.title:
            assert section.title in parsed.text


def test_the_same_result_gives_the_same_page():
    result = all_kinds()["comparison"]
    assert html_page(result) == html_page(result)


def test_the_notebook_fragment_shows_what_the_terminal_shows():
    result = grid_result({}, n_out=5)  # five outputs: the terminal ranks the first three
    piece = read_page(html_fragment(result))
    assert piece.titles() == [indices_title(o.name) for o in result.outputs[:3]]
    assert len(read_page(html_page(result)).titles()) == 5
    assert not piece.problems and not piece.external


def test_two_runs_of_one_model_keep_their_ids_apart_in_one_notebook():
    import dataclasses

    first = grid_result({}, n_out=2)
    second = dataclasses.replace(first, design={**first.design, "seed": 12345})
    ids = [read_page(html_fragment(r)).ids for r in (first, second)]
    assert ids[0] and not set(ids[0]) & set(ids[1])  # section links and chart ids stay with their own report
    assert read_page(html_fragment(first)).ids == ids[0]  # and a report's ids do not change between displays
