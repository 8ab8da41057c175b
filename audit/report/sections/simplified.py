"""The content of a simplify report, as a :class:`~audit.report.document.Report`.

Sections: the source and the run; the written model (file, format, hash,
kept inputs, the Gauss rule of each integrated input, the value of each
frozen one); per output a before/after table of ν, the variance and the mean,
with the checks (the mean within its allowance, Var after = Var g − τ̄²_u,
the measured change of freezing beside its bound). Text meant for the
terminal avoids combining characters, so that every character is one cell.
"""

from __future__ import annotations

from typing import Any

from ...results import Estimate, OutputShift, SimplifiedResult
from ..describe import describe_run
from ..document import Block, CellValue, Column, Field, Fields, Note, Paragraph, Report, Section, Table
from ..text import fmt, fmt_count, fmt_interval, fmt_percent, fmt_setting
from .audit import SECTION_TITLES

__all__ = ["SIMPLIFIED_TITLES", "output_section", "simplified_report", "written_fields"]

SIMPLIFIED_TITLES = {
    "written": "Simplified model written",
    "output": "{name}: before and after",
}


def _law(entry: dict[str, Any]) -> str:
    params = ", ".join(fmt_setting(v) for k, v in entry.items() if k not in ("feature", "position", "law", "nodes",
                       "quadrature_error", "converged", "value", "chosen", "search_error", "name"))  # fmt: skip
    return f"{entry.get('law', '')}({params})"


def written_fields(result: SimplifiedResult) -> list[Field]:
    """The file, its format and hash, the kept inputs, and what was integrated out or frozen."""
    w = result.written
    rows = [
        Field("file", f"{w.get('path', '')} ({w.get('format', '')})"),
        Field("sha256", str(w.get("sha256", ""))),
        *([Field("input spec", str(w["spec"]))] if w.get("spec") else []),
        Field("inputs", f"{len(w.get('inputs', []))}: " + ", ".join(map(str, w.get("inputs", [])))),
    ]
    for i in result.integrated:
        err = i.get("quadrature_error")
        how = "nodes given" if err is None else f"node check: m and 2m rules differ by {fmt(err, 2)} of the output sd"
        flag = "" if i.get("converged", True) else " (NOT converged)"
        rows.append(Field("integrated", f"{i['feature']} ~ {_law(i)}: {i['nodes']} Gauss nodes, {how}{flag}"))
    for f in result.frozen:
        how = {"given": "given", "median": "the law's median"}.get(f.get("chosen", ""), "")
        if f.get("chosen") == "best":
            share = fmt_percent(f.get("search_error", 0.0))
            how = f"lowest change of 32 quantiles on the search points, {share} of σ²"
        rows.append(Field("frozen", f"{f['feature']} ~ {_law(f)} at {fmt(f['value'])} ({how})"))
    rows.append(Field("cost", f"{fmt_count(w.get('evaluations_per_row', 1))} evaluations of the source per row"))
    return rows


def _pair(e: Estimate | None) -> tuple[str, str]:
    if e is None:
        return "constant", ""
    return fmt(e.estimate), fmt_interval(e.ci_low, e.ci_high)


def shift_table(o: OutputShift) -> Table:
    """ν, variance and mean before and after, with intervals."""
    columns = (
        Column("figure", "name"),
        Column("before"),
        Column("95 % interval, before"),
        Column("after", tone="strong"),
        Column("95 % interval, after"),
    )
    rows: list[tuple[CellValue, ...]] = []
    for label, b, a in (
        ("ν", o.before.mean_dimension, o.after.mean_dimension),
        ("variance", o.before.variance, o.after.variance),
        ("mean", o.before.mean, o.after.mean),
    ):
        rows.append((label, *_pair(b), *_pair(a)))
    return Table(columns, tuple(rows))


def check_lines(o: OutputShift) -> list[Block]:
    """The checks, one sentence each."""
    d = o.mean_change
    verdict = "agrees" if o.mean_agrees else "DIFFERS"
    blocks: list[Block] = [
        Paragraph(
            f"Mean after − before: {fmt(d.estimate)} {fmt_interval(d.ci_low, d.ci_high)}, allowance "
            f"{fmt(o.mean_allowance)} (quadrature error and freezing): {verdict}."
        )
    ]
    vi = o.variance_identity
    if vi is not None:
        word = "agree" if vi.agree else "DIFFER"
        blocks.append(
            Paragraph(
                f"Variance check: Var after {fmt(vi.measured.estimate)} and σ² − total index of the integrated "
                f"inputs {fmt(vi.predicted.estimate)} {fmt_interval(vi.predicted.ci_low, vi.predicted.ci_high)} "
                f"{word} (difference {fmt_interval(vi.difference.ci_low, vi.difference.ci_high)})."
            )
        )
    if o.freeze_change is not None:
        c, b = o.freeze_change, o.freeze_bound
        bound = (
            ""
            if b is None
            else (f"; at a value drawn from the law it would be {fmt_percent(b.estimate)} (twice the total index)")
        )
        blocks.append(
            Paragraph(
                f"Freezing changes the output by a mean square of {fmt_percent(c.estimate)} of σ² "
                f"(interval {fmt_percent(c.ci_low)} to {fmt_percent(c.ci_high)}){bound}."
            )
        )
    return blocks


def output_section(o: OutputShift) -> Section:
    """One output before and after."""
    blocks: list[Block] = [shift_table(o), *check_lines(o)]
    return Section(SIMPLIFIED_TITLES["output"].format(name=o.name), tuple(blocks))


def simplified_report(result: SimplifiedResult) -> Report:
    """The simplify report's content.

    Parameters
    ----------
    result : SimplifiedResult

    Returns
    -------
    Report
        Kind ``"simplified"``: the header, the written model, one section per output.
    """
    sections = [
        Section(SECTION_TITLES["header"], (Fields(tuple(describe_run(result))),)),
        Section(SIMPLIFIED_TITLES["written"], (Fields(tuple(written_fields(result))),)),
    ]
    sections += [output_section(o) for o in result.outputs]
    if not result.outputs:
        sections.append(Section("Audit", (Note("Not audited (check off): only the file was written."),)))
    source = str((result.model or {}).get("source", "model"))
    return Report("simplified", f"Simplified model of {source}", tuple(sections))
