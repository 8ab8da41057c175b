"""Tests of audit.report.sections.advice: what an advise report holds, as plain content."""

from __future__ import annotations

from reportdata import make_advice

from audit.report.document import Bullets, Cell, Fields, Heading, Note, Paragraph, Table
from audit.report.sections.advice import (
    ADVICE_TITLES,
    advice_report,
    candidates_table,
    gain_lines,
    group_line,
    nodes_line,
    nu_line,
)
from audit.report.sections.audit import SECTION_TITLES
from audit.report.text import fmt
from audit.results import AdviceResult, OutputAdvice


def test_sections_per_output_between_the_header_and_the_findings():
    result = make_advice()
    report = advice_report(result)
    assert report.kind == "advice" and report.title == "Advice for model_zoo/greenhouse_v1.onnx"
    assert [s.title for s in report.sections] == [
        SECTION_TITLES["header"],
        *(ADVICE_TITLES["output"].format(name=o.name) for o in result.outputs),
        ADVICE_TITLES["findings"],
    ]
    assert isinstance(report.sections[0].blocks[0], Fields) and isinstance(report.sections[-1].blocks[0], Bullets)
    headings = [b.text for b in report.sections[1].blocks if isinstance(b, Heading)]
    assert headings == [
        ADVICE_TITLES["candidates"],
        ADVICE_TITLES["gain"].format(feature="solar_irradiance"),
        ADVICE_TITLES["freeze"].format(eps="0.001"),
    ]
    assert len(report.sections[3].blocks) == 1  # an inert output: its line only


def test_candidates_show_nu_after_and_flag_a_failed_variance_check():
    o = make_advice().outputs[0]
    table = candidates_table(o)
    assert [c.header for c in table.columns] == [
        "input", "total index", "ν after", "95 % interval", "Var after", "σ² − total", "check",
    ]  # fmt: skip
    assert [row[-1] for row in table.rows] == [Cell("agrees"), Cell("DIFFERS", "alert"), Cell("agrees")]
    assert table.rows[2][2:4] == ("constant", "")
    assert nu_line(o).startswith(f"ν before → after: {fmt(1.044)} ") and nu_line(o).endswith("(solar_irradiance)")
    assert nodes_line(o).startswith("Gauss nodes: solar_irradiance 4, vent_opening 32, outside_temperature 8;")
    assert nu_line(OutputAdvice(o.audit)) == "" and nodes_line(OutputAdvice(o.audit)) == ""


def test_gain_and_freezing_sentences():
    o = make_advice().outputs[0]
    lines = gain_lines(o.rqmc_gain)
    assert len(lines) == 3 and "model -1.58, pre-integrated -2.00" in lines[0] and lines[2].endswith("0.218.")
    text = group_line(o.freeze_group)
    assert text.startswith("Freezing outside_humidity at a random draw:") and text.endswith("within the bound.")
    assert group_line(make_advice(holds=False).outputs[0].freeze_group).endswith("ABOVE the bound.")


def test_missing_candidates_freezing_and_groups_are_said_in_notes():
    base = make_advice()
    bare = OutputAdvice(base.outputs[1].audit)
    freeze_only = OutputAdvice(base.outputs[0].audit, [], base.outputs[0].freeze, None)
    result = AdviceResult(base.model, base.inputs, base.design, [bare, freeze_only], base.settings)
    report = advice_report(result)
    notes = [b.text for s in report.sections for b in s.blocks if isinstance(b, Note)]
    assert notes == [
        "No candidates (a single input, or none with a total index worth integrating).",
        "None: every input matters at this threshold.",
        "No candidates (a single input, or none with a total index worth integrating).",
        "None fits the error budget on its own; nothing is grouped.",
    ]
    assert isinstance(report.sections[2].blocks[-2], Table)
    empty = advice_report(AdviceResult({}, [], {}, []))
    assert empty.sections[-1].blocks == (Paragraph("Nothing to advise under the rules used here."),)
    assert empty.title == "Advice for model"


def test_parts_not_done_are_said_once_and_not_shown_as_empty_sections():
    from dataclasses import replace

    from audit.report import markdown
    from audit.report.sections.advice import left_out_lines

    base = make_advice()
    bare = [OutputAdvice(o.audit, freeze=o.freeze, freeze_group=o.freeze_group) for o in base.outputs]
    skipped = {"pre-integration": "not asked for: only freezing", "rqmc gain": "not asked for: only freezing"}
    plan = {"evaluations": {}, "total": 10, "max_evaluations": 5000, "cuts": ["RQMC gain left out"]}
    result = replace(base, outputs=bare, skipped=skipped, plan=plan)
    report = advice_report(result)
    assert report.sections[1].title == ADVICE_TITLES["left_out"]
    assert left_out_lines(result) == [
        "Pre-integration: not done (not asked for: only freezing).",
        "RQMC gain: not done (not asked for: only freezing).",
        "Evaluation budget 5,000: RQMC gain left out.",
    ]
    first = report.sections[2]
    headings = [b.text for b in first.blocks if isinstance(b, Heading)]
    assert headings == [ADVICE_TITLES["freeze"].format(eps="0.001")]  # no candidates heading, no gain heading
    assert Note("Pre-integration: not done (not asked for: only freezing).") in first.blocks
    text = markdown(result)
    assert (
        "No candidates" not in text and text.count("Pre-integration: not done") == 1 + 2
    )  # once up top, per live output
    frozen = replace(base, skipped={"freezing": "not asked for: only pre-integration"})
    blocks = advice_report(frozen).sections[2].blocks
    assert ADVICE_TITLES["freeze"].format(eps="0.001") not in [b.text for b in blocks if isinstance(b, Heading)]
    assert Note("Freezing: not done (not asked for: only pre-integration).") in blocks
    assert [s.title for s in advice_report(base).sections][1] != ADVICE_TITLES[
        "left_out"
    ]  # nothing left out: no section


def test_a_gain_left_out_by_the_budget_is_noted_under_the_candidates():
    from dataclasses import replace

    base = make_advice()
    outs = [replace(o, rqmc_gain=None) for o in base.outputs]
    result = replace(base, outputs=outs, skipped={"rqmc gain": "left out to fit the evaluation budget"})
    blocks = advice_report(result).sections[2].blocks
    assert Note("RQMC gain: not measured (left out to fit the evaluation budget).") in blocks
