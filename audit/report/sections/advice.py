"""The content of an advise report, as a :class:`~audit.report.document.Report`.

Sections: model and run; what the run left out (a part not asked for, a cut to
fit the evaluation budget), when anything was; per output the audit line, the pre-integration
candidates (ν before → after, the variance check Var f̃ = σ² − τ̄²_ℓ), the
measured RQMC gain and the inputs that can be frozen; findings in plain
words (:mod:`audit.report.findings.advice`). Text meant for the terminal
avoids combining characters (f̃, τ̄), so that every character is one cell.
"""

from __future__ import annotations

import math

from ...results import AdviceResult, FreezeGroup, OutputAdvice, RqmcGain
from ..describe import describe_output, describe_run, output_units
from ..document import Block, Cell, CellValue, Column, Fields, Heading, Note, Paragraph, Report, Section, Table
from ..findings import derive_advice_findings
from ..ranges import Marks
from ..text import fmt, fmt_count, fmt_interval, fmt_percent, fmt_setting, listing
from .audit import SECTION_TITLES, findings_block

__all__ = [
    "ADVICE_TITLES",
    "advice_report",
    "candidates_table",
    "freeze_table",
    "gain_lines",
    "gain_table",
    "group_line",
    "left_out_lines",
    "nodes_line",
    "nu_line",
    "output_section",
]

ADVICE_TITLES = {
    "output": "Advice for {name}",
    "candidates": "Inputs to pre-integrate, best first",
    "gain": "RQMC gain with {feature} integrated out",
    "freeze": "Inputs to freeze (total index below {eps} at the interval's upper end)",
    "findings": SECTION_TITLES["findings"],
    "left_out": "Left out of this run",
}

#: The parts an advise run can leave out (keys of ``AdviceResult.skipped``) as a report names them.
PART_NAMES = {"pre-integration": "Pre-integration", "rqmc gain": "RQMC gain", "freezing": "Freezing"}


def left_out_lines(result: AdviceResult) -> list[str]:
    """What the run did not do, and what it cut to fit its evaluation budget, one sentence each."""
    lines = [f"{PART_NAMES.get(part, part)}: not done ({why})." for part, why in result.skipped.items()]
    plan = result.plan or {}
    if plan.get("max_evaluations") is not None:
        cuts = plan.get("cuts") or []
        what = "; ".join(cuts) if cuts else "nothing was cut"
        lines.append(f"Evaluation budget {fmt_count(plan['max_evaluations'])}: {what}.")
    return lines


def candidates_table(output: OutputAdvice, marks: Marks | None = None) -> Table:
    """The pre-integration candidates of one output, best first (estimates outside their range marked)."""
    marks = marks or Marks()
    d_after = max(1, len(output.audit.total_index) - 1)
    columns = (
        Column("input", "name"),
        Column("total index"),
        Column("ν after", tone="strong"),
        Column("95 % interval"),
        Column("Var after"),
        Column("σ² − total"),
        Column("check", "text"),
    )
    rows: list[tuple[CellValue, ...]] = []
    for c in output.preintegrate:
        nu, vi = c.mean_dimension_after, c.variance_identity
        check = Cell("agrees") if vi.agree else Cell("DIFFERS", "alert")
        rows.append(
            (
                c.feature,
                marks.index(c.total_index),
                "constant" if nu is None else marks.nu(nu, d_after),
                "" if nu is None else fmt_interval(nu.ci_low, nu.ci_high),
                fmt(vi.measured.estimate),
                fmt(vi.predicted.estimate),
                check,
            )
        )
    return Table(columns, tuple(rows))


def nodes_line(output: OutputAdvice) -> str:
    """Gauss nodes and pilot error of the candidates, and how to read the variance columns."""
    if not output.preintegrate:
        return ""
    parts = [f"{c.feature} {c.nodes}" for c in output.preintegrate]
    worst = max(c.quadrature_error for c in output.preintegrate)
    return (
        f"Gauss nodes: {listing(parts)}; on the pilot points the m- and 2m-node rules differ "
        f'by at most {fmt(worst, 2)} of the output sd. "Var after" is measured on the '
        "pre-integrated model; \"σ² − total\" is the audit's variance minus the input's "
        "un-normalised total index: they should agree."
    )


def nu_line(output: OutputAdvice) -> str:
    """ν before → after for the best candidate (empty without one)."""
    best, nu = output.best, output.audit.mean_dimension
    if best is None or nu is None:
        return ""
    after = best.mean_dimension_after
    text_after = "constant" if after is None else f"{fmt(after.estimate)} {fmt_interval(after.ci_low, after.ci_high)}"
    before = f"{fmt(nu.estimate)} {fmt_interval(nu.ci_low, nu.ci_high)}"
    return f"ν before → after: {before} → {text_after} ({best.feature})"


def gain_table(gain: RqmcGain) -> Table:
    """Per point count n: variance of the model's mean estimate, of the pre-integrated one's, their ratio."""
    columns = (
        Column("n"),
        Column("variance, model"),
        Column("variance, pre-integrated"),
        Column("ratio", tone="strong"),
    )
    rows = tuple(
        (fmt_count(r.points), fmt(r.variance_before), fmt(r.variance_after), fmt(r.ratio, 3)) for r in gain.rows
    )
    return Table(columns, rows)


def gain_lines(gain: RqmcGain) -> list[str]:
    """Slopes, costs and the equal-cost ratio, one sentence each."""
    return [
        f"Slope of log variance against log n: model {fmt(gain.slope_before, 3)}, pre-integrated "
        f"{fmt(gain.slope_after, 3)} (-1 is the Monte Carlo rate).",
        f"Cost: model {fmt_count(gain.evaluations_before)} evaluations, pre-integrated "
        f"{fmt_count(gain.evaluations_after)} ({gain.nodes} per point), over "
        f"{gain.replicates} randomizations.",
        "Variance ratio at equal cost in model evaluations (read off the fitted lines, the "
        f"model's extrapolated): {fmt(gain.equal_cost_ratio, 3)}.",
    ]


def freeze_table(output: OutputAdvice, marks: Marks | None = None) -> Table:
    """Inputs below the freeze threshold, smallest total index first, and whether they are grouped."""
    marks = marks or Marks()
    columns = (Column("input", "name"), Column("total index"), Column("95 % interval"), Column("in group", "text"))
    rows = tuple(
        (
            f.feature,
            marks.index(f.total_index),
            fmt_interval(f.total_index.ci_low, f.total_index.ci_high),
            "yes" if f.grouped else "no (over budget)",
        )
        for f in output.freeze
    )
    return Table(columns, rows)


def group_line(group: FreezeGroup) -> str:
    """The frozen group's bound and measured error, one sentence."""
    b, m = group.bound_normalised, group.measured_normalised
    verdict = "within the bound" if group.holds else "ABOVE the bound"
    together = " together" if len(group.features) > 1 else ""
    return (
        f"Freezing {listing(group.features)}{together} at a random draw: bound (twice the sum "
        f"of the total indices) {fmt(group.bound.estimate)} ({fmt_percent(b.estimate)} of σ², up to "
        f"{fmt_percent(b.ci_high)}; budget {fmt_setting(100 * group.budget)} %); measured mean squared "
        f"change {fmt(group.measured.estimate)} "
        f"({fmt_percent(m.estimate)} of σ², interval {fmt_percent(m.ci_low)} to {fmt_percent(m.ci_high)}), "
        f"{verdict}."
    )


def output_section(
    output: OutputAdvice, freeze_threshold: float, unit: str = "", skipped: dict[str, str] | None = None
) -> Section:
    """Everything advised for one output (``unit``: the output's unit, for its mean and variance); parts in
    ``skipped`` (part → reason) get one note, not a section."""
    skipped = skipped or {}
    blocks: list[Block] = [Paragraph(describe_output(output.audit, unit))]
    title = ADVICE_TITLES["output"].format(name=output.name)
    if output.audit.inert or output.audit.mean_dimension is None:
        return Section(title, tuple(blocks))
    marks = Marks()
    if "pre-integration" in skipped:
        blocks.append(Note(f"Pre-integration: not done ({skipped['pre-integration']})."))
    else:
        blocks += _candidates_blocks(output, skipped, marks)
    if "freezing" in skipped:
        blocks.append(Note(f"Freezing: not done ({skipped['freezing']})."))
    else:
        blocks += _freeze_blocks(output, freeze_threshold, marks)
    note = marks.note()
    return Section(title, (*blocks, note) if note else tuple(blocks))


def _candidates_blocks(output: OutputAdvice, skipped: dict[str, str], marks: Marks) -> list[Block]:
    blocks: list[Block] = [Heading(ADVICE_TITLES["candidates"])]
    if output.preintegrate:
        blocks += [candidates_table(output, marks), Paragraph(nu_line(output)), Note(nodes_line(output))]
    else:
        blocks.append(Note("No candidates (a single input, or none with a total index worth integrating)."))
    gain = output.rqmc_gain
    if gain is not None:
        blocks += [Heading(ADVICE_TITLES["gain"].format(feature=gain.feature)), gain_table(gain)]
        blocks += [Paragraph(line) for line in gain_lines(gain)]
    elif output.preintegrate and "rqmc gain" in skipped:
        blocks.append(Note(f"RQMC gain: not measured ({skipped['rqmc gain']})."))
    return blocks


def _freeze_blocks(output: OutputAdvice, freeze_threshold: float, marks: Marks) -> list[Block]:
    blocks: list[Block] = [Heading(ADVICE_TITLES["freeze"].format(eps=fmt_setting(freeze_threshold)))]
    if not output.freeze:
        blocks.append(Note("None: every input matters at this threshold."))
    else:
        blocks.append(freeze_table(output, marks))
        if output.freeze_group is not None:
            blocks.append(Paragraph(group_line(output.freeze_group)))
        else:
            blocks.append(Note("None fits the error budget on its own; nothing is grouped."))
    return blocks


def advice_report(result: AdviceResult) -> Report:
    """The advise report's content.

    Parameters
    ----------
    result : AdviceResult
        The advise run.

    Returns
    -------
    Report
        Kind ``"advice"``, titled after the model's source: the header, one
        section per output (:func:`output_section`) and the findings.
    """
    sections = [Section(SECTION_TITLES["header"], (Fields(tuple(describe_run(result))),))]
    left_out = left_out_lines(result)
    if left_out:
        sections.append(Section(ADVICE_TITLES["left_out"], tuple(Paragraph(line) for line in left_out)))
    eps = result.settings.get("freeze_threshold", math.nan)
    units = output_units(result)
    sections += [output_section(o, eps, units.get(o.name, ""), result.skipped) for o in result.outputs]
    found = derive_advice_findings(result)
    empty = "Nothing to advise under the rules used here."
    sections.append(Section(ADVICE_TITLES["findings"], (findings_block(found, empty),)))
    source = str((result.model or {}).get("source", "model"))
    return Report("advice", f"Advice for {source}", tuple(sections))
