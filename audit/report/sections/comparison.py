"""The content of a comparison report, as a :class:`~audit.report.document.Report`.

Sections: the two models and the run; per output, ν old → new and the change
with its paired interval, rank agreement; per output, the inputs whose total
index moved; hidden layers present in both; the gates. Changes whose interval
excludes 0 are marked (:mod:`audit.report.findings.comparison`).
"""

from __future__ import annotations

from ...results import ComparisonResult, Estimate, OutputResult
from ..describe import describe_comparison_run
from ..document import Block, Cell, CellValue, Column, Field, Fields, Heading, Note, Report, Section, Table
from ..findings.comparison import MARK, change_note, excludes_zero
from ..ranges import Marks
from ..text import fmt, fmt_count

__all__ = [
    "COMPARISON_TITLES",
    "MAX_MOVED",
    "comparison_report",
    "fmt_change",
    "gates_blocks",
    "layers_blocks",
    "moved_blocks",
    "outputs_table",
]

COMPARISON_TITLES = {
    "run": "Models and run",
    "outputs": "Mean dimension ν, old → new",
    "inputs": "Inputs whose total index moved",
    "layers": "Hidden layers in both models",
    "gates": "Gates",
}
MAX_MOVED = 10


def fmt_change(e: Estimate | None) -> tuple[str, str]:
    """``("-0.00115 *", "± 0.0070")``: the signed change, marked when its interval excludes 0, and the half-width."""
    if e is None:
        return "inert", ""
    sign = "+" if e.estimate >= 0 else ""
    mark = f" {MARK}" if excludes_zero(e) else ""
    return f"{sign}{fmt(e.estimate, 3)}{mark}", f"± {fmt((e.ci_high - e.ci_low) / 2, 2)}"


def _nu(o: OutputResult) -> str:
    return "inert" if o.mean_dimension is None else fmt(o.mean_dimension.estimate)


def outputs_table(result: ComparisonResult) -> Table:
    """Per output: ν of each model, the change and its half-width, Kendall τ and top-k overlap."""
    columns = (
        Column("output", "name"),
        Column("ν old"),
        Column("ν new"),
        Column("change", tone="strong"),
        Column("95 %"),
        Column("Kendall τ"),
        Column("top-k"),
    )
    rows = []
    for o in result.outputs:
        change, half = fmt_change(o.mean_dimension_change)
        overlap = "" if o.top_k == 0 else f"{round(o.top_k_overlap * o.top_k)}/{o.top_k}"
        rows.append((o.name, _nu(o.old), _nu(o.new), change, half, fmt(o.kendall_tau, 3), overlap))
    return Table(columns, tuple(rows))


def moved_blocks(result: ComparisonResult) -> list[Block]:
    """Per output with moved inputs: its name, then the inputs (at most :data:`MAX_MOVED`), largest change first."""
    blocks: list[Block] = []
    marks = Marks()
    columns = (Column("input", "name"), Column("old"), Column("new"), Column("change", tone="strong"), Column("95 %"))
    for o in result.outputs:
        if not o.moved:
            continue
        by = {c.feature: c for c in o.total_index_change}
        old = {f.feature: f.value for f in o.old.total_index}
        new = {f.feature: f.value for f in o.new.total_index}
        rows: list[tuple[CellValue, ...]] = []
        for name in o.moved[:MAX_MOVED]:
            change, half = fmt_change(by[name].value)
            cells = [marks.index(side[name], 3) if name in side else "n/a" for side in (old, new)]
            rows.append((name, *cells, change, half))
        blocks += [Heading(o.name), Table(columns, tuple(rows))]
        if len(o.moved) > MAX_MOVED:
            blocks.append(Note(f"… {len(o.moved) - MAX_MOVED} more moved"))
    if not blocks:
        blocks.append(Note("No input's total index changed significantly (every interval contains 0)."))
    note = marks.note()
    return [*blocks, note] if note else blocks


def layers_blocks(result: ComparisonResult) -> list[Block]:
    """Hidden layers with the same name and unit count in both models: variance-weighted ν and its change."""
    if not result.layers:
        return [Note("No hidden layer has the same name and unit count in both models.")]
    columns = (
        Column("layer", "name"),
        Column("units"),
        Column("ν old"),
        Column("ν new"),
        Column("change", tone="strong"),
        Column("95 %"),
    )
    rows = []
    for x in result.layers:
        change, half = fmt_change(x.nu_weighted_change)
        old, new = fmt(x.old.get("nu_weighted")), fmt(x.new.get("nu_weighted"))
        rows.append((x.name, fmt_count(x.units), old, new, change, half))
    return [Table(columns, tuple(rows))]


def gates_blocks(result: ComparisonResult) -> list[Block]:
    """The gates: limit, value and verdict, then what each one judged."""
    if not result.gates:
        return [Note("No gates were set (see --max-dimension-rise, --min-rank-agreement, --max-index-shift).")]
    columns = (Column("gate", "name"), Column("limit"), Column("value"), Column("result", "text"))
    rows = tuple(
        (g.name, fmt(g.limit), fmt(g.value), Cell("pass") if g.passed else Cell("FAIL", "alert")) for g in result.gates
    )
    blocks: list[Block] = [Table(columns, rows)]
    details = tuple(Field(g.name, g.detail) for g in result.gates if g.detail)
    if details:
        blocks.append(Fields(details))
    return blocks


def comparison_report(result: ComparisonResult) -> Report:
    """The comparison report's content.

    Parameters
    ----------
    result : ComparisonResult
        The comparison of two model versions.

    Returns
    -------
    Report
        Kind ``"comparison"``, titled after the two models: the models and the
        run, ν old → new, the inputs that moved, the hidden layers in both, the
        gates, and a note on the marks when a change is shown.
    """
    sections = [
        Section(COMPARISON_TITLES["run"], (Fields(tuple(describe_comparison_run(result))),)),
        Section(COMPARISON_TITLES["outputs"], (outputs_table(result),)),
        Section(COMPARISON_TITLES["inputs"], tuple(moved_blocks(result))),
        Section(COMPARISON_TITLES["layers"], tuple(layers_blocks(result))),
        Section(COMPARISON_TITLES["gates"], tuple(gates_blocks(result))),
    ]
    note = change_note(result)
    if note is not None:
        sections.append(Section(None, (Note(note),)))
    old = str((result.old_model or {}).get("source", "old model"))
    new = str((result.new_model or {}).get("source", "new model"))
    return Report("comparison", f"Comparison of {old} and {new}", tuple(sections))
