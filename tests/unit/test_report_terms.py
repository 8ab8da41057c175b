"""Tests of audit.report.terms: ν named at its first mention in every section, and the legend of terms.

What is checked is the issue's rule itself (common practice, no source): a reader meets the words
"mean dimension" before the symbol in each section, and every term of the report's vocabulary that
a report uses is defined in its legend, and no other.
"""

from __future__ import annotations

import re

import pytest
from reportdata import all_kinds, render_text

from audit.report import build_report, markdown
from audit.report.document import Fields, Report
from audit.report.terms import LEGEND_TITLE, NAMED, TERMS, explain, legend_section, name_first, report_text

NU = re.compile(r"(?<![\w])ν(?![\w])")


def _section_texts(report: Report):
    for section in report.sections:
        yield section, report_text(Report(report.kind, "", (section,))).split("\n", 1)[1]


def test_name_first_names_the_first_nu_only():
    assert name_first("ν 1.2 and ν 1.3") == ("mean dimension ν 1.2 and ν 1.3", True)
    assert name_first("(ν below 1.1)") == ("(mean dimension ν below 1.1)", True)
    assert name_first("Mean dimension ν, old → new") == ("Mean dimension ν, old → new", True)
    assert name_first("the mean dimension falls") == ("the mean dimension falls", False)
    assert name_first("no symbol here") == ("no symbol here", False)
    assert name_first("weights νx") == ("weights νx", False)  # part of a word, not the symbol


@pytest.mark.parametrize("kind", ["audit", "comparison", "advice"])
def test_every_section_names_nu_at_its_first_mention(kind):
    report = build_report(all_kinds()[kind])
    checked = 0
    for section, text in _section_texts(report):
        first = NU.search(text)
        if first is None:
            continue
        checked += 1
        assert text[: first.end()].lower().endswith(NAMED), (section.title, text[: first.end()][-60:])
    assert checked >= 2


@pytest.mark.parametrize("kind", ["audit", "comparison", "advice"])
def test_the_legend_defines_the_terms_used_and_no_others(kind):
    result = all_kinds()[kind]
    report = build_report(result)
    legend = report.sections[-1]
    assert legend.title == LEGEND_TITLE and isinstance(legend.blocks[0], Fields)
    defined = [f.label for f in legend.blocks[0].rows]
    body = report_text(Report(report.kind, report.title, report.sections[:-1]))
    assert defined == [term for term, pattern, _ in TERMS if re.search(pattern, body)]
    # the words a newcomer would stumble on, whenever the report shows them
    jargon = {"additive share": "additive share", "inert": "inert", "p90": "p90", "ν weighted": "ν weighted",
              "rank agreement": "Kendall τ", "top-k": "top-k", "RQMC": "RQMC", "pre-integrate": "pre-integrat"}
    for term, word in jargon.items():
        if word in body:
            assert term in defined, term
    assert LEGEND_TITLE in render_text(result) and f"## {LEGEND_TITLE}" in markdown(result)


def test_legend_only_for_reports_that_use_terms():
    empty = Report("audit", "t", ())
    assert legend_section(empty) is None and explain(empty) == empty
