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
from ..findings.comparison import MARK, change_note, counts, excludes_zero, tolerance
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


def fmt_change(e: Estimate | None, tol: float | None = None) -> tuple[str, str]:
    """``("-0.00115 *", "± 0.0070")``: the signed change, marked when it counts, and the half-width.

    With ``tol`` a change counts when its interval lies wholly beyond ``±tol``; without, when it excludes 0.
    """
    if e is None:
        return "inert", ""
    sign = "+" if e.estimate >= 0 else ""
    marked = excludes_zero(e) if tol is None else counts(e, tol)
    mark = f" {MARK}" if marked else ""
    return f"{sign}{fmt(e.estimate, 3)}{mark}", f"± {fmt((e.ci_high - e.ci_low) / 2, 2)}"


def _nu(o: OutputResult) -> str:
    return "inert" if o.mean_dimension is None else fmt(o.mean_dimension.estimate)


def _gated(result: ComparisonResult) -> bool:
    return bool(result.design.get("gates"))


def outputs_table(result: ComparisonResult) -> Table:
    """Per output: ν of each model, the change and its half-width, rank agreement and the leading set kept."""
    columns = (
        Column("output", "name"),
        Column("ν old"),
        Column("ν new"),
        Column("change", tone="strong"),
        Column("95 %"),
        Column("rank agreement"),
        Column("top-k kept"),
    )
    tol = tolerance(result, "mean_dimension") if _gated(result) else None
    rows = []
    for o in result.outputs:
        change, half = fmt_change(o.mean_dimension_change, tol)
        kept = "" if o.top_k == 0 else f"{round(o.top_k_overlap * o.top_k)}/{o.top_k}"
        agreement = o.rank_agreement.estimate if o.rank_agreement is not None else o.kendall_tau
        rows.append((o.name, _nu(o.old), _nu(o.new), change, half, fmt(agreement, 3), kept))
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
            change, half = fmt_change(by[name].value, tolerance(result, "total_index") if _gated(result) else None)
            cells = [marks.index(side[name], 3) if name in side else "n/a" for side in (old, new)]
            rows.append((name, *cells, change, half))
        blocks += [Heading(o.name), Table(columns, tuple(rows))]
        if len(o.moved) > MAX_MOVED:
            blocks.append(Note(f"… {len(o.moved) - MAX_MOVED} more moved"))
    if not blocks:
        if _gated(result):
            tol = tolerance(result, "total_index")
            note = f"No input's total index changed beyond ±{tol:.3g} (no interval lies wholly beyond it)."
            blocks.append(Note(note))
        else:
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
    tol = tolerance(result, "layer_mean_dimension") if _gated(result) else None
    for x in result.layers:
        change, half = fmt_change(x.nu_weighted_change, tol)
        old, new = fmt(x.old.get("nu_weighted")), fmt(x.new.get("nu_weighted"))
        rows.append((x.name, fmt_count(x.units), old, new, change, half))
    return [Table(columns, tuple(rows))]


def gates_blocks(result: ComparisonResult) -> list[Block]:
    """The gates: limit, value and verdict, then what each one judged."""
    settings = result.design.get("gates") or {}
    if not result.gates:
        return [Note("No gates are on: the comparison reports the changes and never fails.")]
    columns = (Column("gate", "name"), Column("limit"), Column("value"), Column("result", "text"))
    rows = tuple(
        (g.name, fmt(g.limit), fmt(g.value), Cell("pass") if g.passed else Cell("FAIL", "alert")) for g in result.gates
    )
    blocks: list[Block] = [Table(columns, rows)]
    details = tuple(Field(g.name, g.detail) for g in result.gates if g.detail)
    if details:
        blocks.append(Fields(details))
    if settings:
        numbers = {k: v for k, v in settings.items() if isinstance(v, int | float) and not isinstance(v, bool)}
        used = ", ".join(f"{k} {v:g}" for k, v in numbers.items())
        blocks.append(
            Note(
                f"Tolerances used: {used}. A gate fails only when a change's interval lies wholly beyond its "
                "tolerance (or an agreement's wholly below its limit); the defaults are netdim's, a gate file "
                "or flags change them."
            )
        )
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
