"""The content of an audit report, as a :class:`~audit.report.document.Report`.

Sections, in order: model and run; outputs at a glance (mean and variance in
the output's unit, ν, additive share); the inputs of each ranked output (the
first ``max_outputs``, or all); hidden layers; the units of layers measured in
detail (``unit_detail``); what the numbers suggest. Estimates outside their
possible range are marked (:mod:`audit.report.ranges`). Every number comes from :mod:`audit.report.text`, every
sentence from :mod:`audit.report.describe` and :mod:`audit.report.findings`.
"""

from __future__ import annotations

from collections.abc import Sequence

from ...results import AuditResult, LayerResult, OutputResult
from ..describe import describe_groups, describe_output, describe_run, layer_inert, layer_units, output_units
from ..document import (
    Bar,
    Block,
    Bullet,
    Bullets,
    Cell,
    CellValue,
    Column,
    Fields,
    Note,
    Paragraph,
    Report,
    Section,
    Table,
)
from ..findings import DEFAULT_THRESHOLD, Finding, derive_findings
from ..ranges import Marks
from ..text import finite, fmt, fmt_count, fmt_interval, fmt_setting

__all__ = [
    "LEADING_INPUTS",
    "MAX_OUTPUTS",
    "MAX_UNITS",
    "SECTION_TITLES",
    "UNIT_TITLE",
    "audit_report",
    "findings_block",
    "grouped_sections",
    "inputs_section",
    "layers_table",
    "outputs_table",
    "units_section",
]

SECTION_TITLES = {
    "header": "Model and run",
    "outputs": "Outputs at a glance",
    "inputs": "Inputs of {name}, ranked by total index",
    "groups": "Groups of inputs of {name}, ranked by total index",
    "grouped": "By group of inputs (on the same points)",
    "layers": "Hidden layers, input to output",
    "findings": "What the numbers suggest",
}
#: Title of the section of a layer measured unit by unit (``unit_detail``).
UNIT_TITLE = "Units of {name}, with their leading inputs"
MAX_OUTPUTS = 3
LEADING_INPUTS = 3
#: Units listed per layer measured in detail (largest variance first); the JSON report has every one.
MAX_UNITS = 12
_NU = "mean dimension ν and 95 % interval"


def outputs_table(result: AuditResult) -> Table:
    """One row per output: unit, mean, variance, ν and its interval, additive share, leading inputs (or groups).

    Inert outputs show ``"inert (constant)"`` in place of ν; the additive
    share is blank when the estimator gave no first-order indices; the unit
    column is there when the spec gave the outputs' units.
    """
    units = output_units(result)
    marks = Marks()
    d = result.dimension
    columns = [
        Column("output", "name"),
        *([Column("unit", "text")] if units else []),
        Column("mean"),
        Column("variance"),
        Column("mean dimension ν", tone="strong", group=_NU),
        Column("95 % interval", group=_NU),
        Column("additive share"),
        Column("leading groups" if result.grouped else "leading inputs", "note"),
    ]
    rows: list[tuple[CellValue, ...]] = []
    for o in result.outputs:
        head: list[CellValue] = [o.name, *([units.get(o.name, "")] if units else [])]
        head += [fmt(o.mean.estimate), fmt(o.variance.estimate)]
        if o.relation:
            rows.append((*head, Cell(o.relation, "muted"), "", "", ""))
            continue
        if o.inert or o.mean_dimension is None:
            rows.append((*head, Cell("inert (constant)", "muted"), "", "", ""))
            continue
        nu = o.mean_dimension
        additive = fmt(o.additive_share) if o.first_order else ""
        leading = ", ".join(f.feature for f in o.ranked()[:LEADING_INPUTS])
        rows.append((*head, marks.nu(nu, d), fmt_interval(nu.ci_low, nu.ci_high), additive, leading))
    return Table(tuple(columns), tuple(rows))


def inputs_section(
    output: OutputResult, threshold: float = DEFAULT_THRESHOLD, grouped: bool = False, unit: str = ""
) -> Section:
    """The inputs (or groups) of one output, largest total index first; those below ``threshold`` are counted.

    Indices outside [0, 1], and first-order indices above the total, are marked
    (:class:`~audit.report.ranges.Marks`) with a note saying what the marks mean.
    """
    title = SECTION_TITLES["groups" if grouped else "inputs"].format(name=output.name)
    blocks: list[Block] = [Paragraph(describe_output(output, unit))]
    if output.inert or output.mean_dimension is None:
        return Section(title, tuple(blocks))
    if output.relation:
        note = f"{output.name} {output.relation} exactly: its indices and ν are that output's, detailed above."
        return Section(title, (*blocks, Note(note)))
    if output.unreliable:
        blocks.append(Note(f"Unreliable: {output.unreliable}. The numbers below are shown as estimated."))
    if not output.total_index:
        return Section(title, (*blocks, Note("This estimator measures ν only; no per-input indices.")))
    first = {f.feature: f for f in output.first_order}
    noun = "group" if grouped else "input"
    columns = [Column(noun, "name"), Column("total index"), Column("95 % interval"), Column("size (0–1)", "bar")]
    if output.first_order:
        columns.append(Column("closed first order" if grouped else "first order"))
    rows: list[tuple[CellValue, ...]] = []
    folded = 0
    marks = Marks()
    for f in output.ranked():
        if not (f.value.estimate >= threshold):
            folded += 1
            continue
        row: list[CellValue] = [f.feature, marks.index(f.value), fmt_interval(f.value.ci_low, f.value.ci_high)]
        row.append(Bar(f.value.estimate))
        if output.first_order:
            fo = first.get(f.feature)
            row.append("" if fo is None else marks.first_order(fo.value, f.value))
        rows.append(tuple(row))
    if rows:
        blocks.append(Table(tuple(columns), tuple(rows)))
    if folded:
        blocks.append(Note(f"… {folded} more below {fmt_setting(threshold)}"))
    blocks += pairs_blocks(output, threshold)
    note = marks.note()
    if note is not None:
        blocks.append(note)
    return Section(title, tuple(blocks))


#: Pairs listed per output, strongest first.
MAX_PAIRS = 6


def pairs_blocks(output: OutputResult, threshold: float = DEFAULT_THRESHOLD) -> list[Block]:
    """Which inputs interact: the strongest pairs' superset importance, and the spread of the dimension."""
    if not output.pairs:
        return []
    shown = [p for p in output.pairs if p.value.estimate >= threshold][:MAX_PAIRS]
    blocks: list[Block] = []
    if shown:
        columns = (Column("pair", "name"), Column("superset importance"), Column("95 % interval"), Column("", "bar"))
        rows = tuple(
            (f"{p.first} × {p.second}", fmt(p.value.estimate), fmt_interval(p.value.ci_low, p.value.ci_high),
             Bar(p.value.estimate))
            for p in shown
        )  # fmt: skip
        blocks.append(Paragraph("Strongest pairs (share of the variance in terms holding both inputs):"))
        blocks.append(Table(columns, rows))
    else:
        blocks.append(Note(f"No pair of the leading inputs holds {fmt_setting(threshold)} of the variance."))
    spread = output.dimension_spread
    if spread is not None:
        paired = {name for p in output.pairs for name in (p.first, p.second)}
        d = len(output.total_index)
        if d and len(paired) < d:  # the pairs of K leading inputs give the moments of |u ∩ K| only
            text = (f"Spread of the dimension among the {len(paired)} paired inputs K (variance of |u ∩ K| over "
                    f"the variance's terms): {fmt(spread.estimate)} {fmt_interval(spread.ci_low, spread.ci_high)}; "
                    f"not the spread of |u| over all {d} inputs (--pairs {d}, pairs={d}, measures that).")
        else:
            text = (f"Spread of the dimension (variance of |u| over the variance's terms): {fmt(spread.estimate)} "
                    f"{fmt_interval(spread.ci_low, spread.ci_high)}; 0 means every term has the same order.")
        blocks.append(Paragraph(text))
    return blocks


def layers_table(result: AuditResult, marks: Marks | None = None) -> Table:
    """One row per hidden layer, input side first: units, inert units, ν quantiles, variance-weighted ν.

    ν outside [1, d] is marked by ``marks`` (its note explains the mark).
    """
    marks = Marks() if marks is None else marks
    d = result.dimension
    columns = (
        Column("layer", "name"),
        Column("op", "text"),
        Column("units"),
        Column("inert"),
        Column("ν min / median / p90 / max"),
        Column("ν weighted", tone="strong"),
    )
    rows = []
    intervals = int((result.design or {}).get("replicates", 2) or 2) >= 2  # one randomization: no intervals
    for layer in result.layers:
        s = layer.summary
        counted = [u.mean_dimension for u in layer.units if not (u.inert or u.unreliable)]
        counted = [e for e in counted if e is not None]
        keys = ("nu_min", "nu_median", "nu_p90", "nu_max")
        quantiles = " / ".join(marks.summary_nu(s.get(k), d, counted, intervals) for k in keys)
        units, inert = fmt_count(layer_units(layer)), fmt_count(layer_inert(layer))
        weighted = marks.summary_nu(s.get("nu_weighted"), d, counted, intervals)
        rows.append((layer.name, layer.op, units, inert, quantiles, weighted))
    return Table(columns, tuple(rows))


def grouped_sections(result: AuditResult, *, all_outputs: bool, threshold: float, max_outputs: int) -> list[Section]:
    """The grouped view of a run that asked for both: groups, outputs by group, and the shown outputs' groups."""
    g = result.by_group
    if g is None:
        return []
    head: list[Block] = [Fields(tuple(describe_groups(g)))]
    head.append(outputs_table(g) if g.outputs else Note("No outputs recorded."))
    if g.layers:
        head.append(layers_table(g))
    sections = [Section(SECTION_TITLES["grouped"], tuple(head))]
    ranked = [o for o in g.outputs if not o.relation]
    shown = ranked if all_outputs else ranked[:max_outputs]
    return sections + [inputs_section(o, threshold, True) for o in shown]


def units_section(layer: LayerResult, d: int, limit: int = MAX_UNITS) -> Section | None:
    """The units of a layer measured in detail: variance, ν and the leading inputs, largest variance first.

    ``None`` when no unit of ``layer`` carries per-input indices.
    """
    detailed = [u for u in layer.units if u.total_index]
    if not detailed:
        return None
    detailed.sort(key=lambda u: -u.variance.estimate if finite(u.variance.estimate) else 0.0)
    marks = Marks()
    shown = detailed[:limit]
    remarks = any(u.unreliable for u in shown)
    columns = (
        Column("unit", "name"),
        Column("variance"),
        Column("mean dimension ν", tone="strong", group=_NU),
        Column("95 % interval", group=_NU),
        Column("leading inputs", "note"),
        *((Column("unreliable", "note", tone="warning"),) if remarks else ()),
    )
    rows: list[tuple[CellValue, ...]] = []
    for u in shown:
        remark = (u.unreliable,) if remarks else ()
        variance = fmt(u.variance.estimate)
        if u.inert or u.mean_dimension is None:
            rows.append((u.unit, variance, Cell("inert (constant)", "muted"), "", "", *remark))
            continue
        ranked = sorted(u.total_index, key=lambda f: -f.value.estimate)[:LEADING_INPUTS]
        leading = ", ".join(f"{f.feature} {fmt(f.value.estimate, 3)}" for f in ranked)
        nu = u.mean_dimension
        rows.append((u.unit, variance, marks.nu(nu, d), fmt_interval(nu.ci_low, nu.ci_high), leading, *remark))
    blocks: list[Block] = [Table(columns, tuple(rows))]
    if len(detailed) > limit:
        blocks.append(Note(f"… {len(detailed) - limit} more units; every unit's indices are in the JSON report."))
    note = marks.note()
    if note is not None:
        blocks.append(note)
    return Section(UNIT_TITLE.format(name=layer.name), tuple(blocks))


def findings_block(found: Sequence[Finding], empty: str) -> Block:
    """Findings as bullets with their commands, or the sentence ``empty`` when there are none."""
    if not found:
        return Paragraph(empty)
    return Bullets(tuple(Bullet(f.text, f.commands) for f in found))


def audit_report(
    result: AuditResult,
    *,
    all_outputs: bool = False,
    threshold: float = DEFAULT_THRESHOLD,
    max_outputs: int = MAX_OUTPUTS,
) -> Report:
    """The audit report's content.

    Parameters
    ----------
    result : AuditResult
        The audit.
    all_outputs : bool, optional
        Rank the inputs of every output (default: the first ``max_outputs``).
    threshold : float, optional
        Inputs whose total index is below this are counted in one line and,
        when below it at the upper end of their interval, reported as freezable.
    max_outputs : int, optional
        Outputs whose inputs are ranked when ``all_outputs`` is false.

    Returns
    -------
    Report
        Kind ``"audit"``, titled after the model's source.

    Raises
    ------
    ValueError
        When ``max_outputs`` is negative.
    """
    if max_outputs < 0:
        raise ValueError(f"max_outputs must be 0 or more, got {max_outputs}")
    sections = [Section(SECTION_TITLES["header"], (Fields(tuple(describe_run(result))),))]
    overview: Block = outputs_table(result) if result.outputs else Note("No outputs recorded.")
    sections.append(Section(SECTION_TITLES["outputs"], (overview,)))
    ranked = [o for o in result.outputs if not o.relation]
    shown = ranked if all_outputs else ranked[:max_outputs]
    units = output_units(result)
    sections += [inputs_section(o, threshold, result.grouped, units.get(o.name, "")) for o in shown]
    hidden = len(ranked) - len(shown)
    if hidden:
        noun = "output" if hidden == 1 else "outputs"
        note = f"… {hidden} more {noun} not ranked here; --all-outputs (all_outputs=True) ranks them."
        sections.append(Section(None, (Note(note),)))
    if result.layers:
        lead = "Mean dimension ν of the units of each hidden layer, input side first (inert units left out)."
        marks = Marks()
        blocks: list[Block] = [Paragraph(lead), layers_table(result, marks)]
        if (note := marks.note()) is not None:
            blocks.append(note)
        left_out = sum(int(layer.summary.get("unreliable_units", 0) or 0) for layer in result.layers)
        if left_out:
            blocks.append(
                Note(
                    f"{left_out} unit{'s' if left_out != 1 else ''} left out of the summaries above: the interval "
                    "of ν says nothing within [1, d] (numerical noise of a near-constant unit, or too few points; "
                    "each unit's reason is in the JSON report)."
                )
            )
        sections.append(Section(SECTION_TITLES["layers"], tuple(blocks)))
        detail = [units_section(layer, len(result.inputs)) for layer in result.layers]
        sections += [x for x in detail if x is not None]
    sections += grouped_sections(result, all_outputs=all_outputs, threshold=threshold, max_outputs=max_outputs)
    found = derive_findings(result, threshold=threshold)
    empty = "Nothing stands out under the rules of thumb used here."
    sections.append(Section(SECTION_TITLES["findings"], (findings_block(found, empty),)))
    source = str((result.model or {}).get("source", "model"))
    return Report("audit", f"Audit of {source}", tuple(sections))
