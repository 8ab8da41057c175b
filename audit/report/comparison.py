"""Render a comparison of two model versions: what changed, with paired intervals, and the gates.

Sections: the two models and the run; per output, ν old → new and the change;
per output, the inputs whose total index moved; hidden layers present in both;
the gates; the caution. The Markdown export has the same sections as tables.
"""

from __future__ import annotations

from collections.abc import Sequence

from rich.console import Console, Group, RenderableType
from rich.rule import Rule
from rich.table import Table
from rich.text import Text

from ..results import ComparisonResult, Estimate
from .findings import CAUTION, fmt

__all__ = ["comparison_markdown", "comparison_sections", "render_comparison"]

TITLES = {
    "run": "Models and run",
    "outputs": "Mean dimension, old → new",
    "inputs": "Inputs whose total index moved",
    "layers": "Hidden layers in both models",
    "gates": "Gates",
}


MAX_MOVED = 10


def _change(e: Estimate | None) -> tuple[str, str]:
    """``(+0.001234 *, ± 0.000456)``: the change, marked when its interval excludes 0, and the half-width."""
    if e is None:
        return "inert", ""
    sign = "+" if e.estimate >= 0 else ""
    mark = " *" if e.ci_low > 0 or e.ci_high < 0 else ""
    return f"{sign}{fmt(e.estimate, 3)}{mark}", f"± {fmt((e.ci_high - e.ci_low) / 2, 2)}"


def _nu(o) -> str:
    return "inert" if o.mean_dimension is None else fmt(o.mean_dimension.estimate)


def comparison_sections(result: ComparisonResult) -> list[tuple[str, list[str], list[list[str]]]]:
    """The report's content: (title, header, rows) per section; shared by both renderers."""
    d = result.design
    run = [
        ["old", f"{result.old_model.get('source', '')} ({result.old_model.get('format', '')})"],
        ["new", f"{result.new_model.get('source', '')} ({result.new_model.get('format', '')})"],
        [
            "design",
            f"N = {d.get('points')} points, R = {d.get('replicates')} randomizations, "
            f"{'same points for both (paired)' if d.get('paired', True) else 'independent points'}, "
            f"seed {d.get('seed')}",
        ],
        ["run", f"{d.get('evaluations'):,} model evaluations in {d.get('seconds', 0):.3g} s"],
    ]
    outs = []
    for o in result.outputs:
        ch, ci = _change(o.mean_dimension_change)
        overlap = "" if o.top_k == 0 else f"{round(o.top_k_overlap * o.top_k)}/{o.top_k}"
        outs.append([o.name, _nu(o.old), _nu(o.new), ch, ci, fmt(o.kendall_tau, 3), overlap])
    moved = []
    for o in result.outputs:
        by = {c.feature: c for c in o.total_index_change}
        old = {f.feature: f.value.estimate for f in o.old.total_index}
        new = {f.feature: f.value.estimate for f in o.new.total_index}
        if o.moved:
            moved.append([f"{o.name}:", "", "", "", ""])
        for name in o.moved[:MAX_MOVED]:
            ch, ci = _change(by[name].value)
            moved.append(["  " + name, fmt(old[name], 3), fmt(new[name], 3), ch, ci])
        if len(o.moved) > MAX_MOVED:
            moved.append([f"  … {len(o.moved) - MAX_MOVED} more moved", "", "", "", ""])
    layers = []
    for x in result.layers:
        ch, ci = _change(x.nu_weighted_change)
        layers.append([x.name, str(x.units), fmt(x.old.get("nu_weighted")), fmt(x.new.get("nu_weighted")), ch, ci])
    gates = [[g.name, fmt(g.limit), fmt(g.value), "pass" if g.passed else "FAIL"] for g in result.gates]
    return [
        (TITLES["run"], ["", ""], run),
        (TITLES["outputs"], ["output", "ν old", "ν new", "change", "95 %", "Kendall τ", "top-k"], outs),
        (TITLES["inputs"], ["output / input", "old", "new", "change", "95 %"], moved),
        (TITLES["layers"], ["layer", "units", "ν old", "ν new", "change", "95 %"], layers),
        (TITLES["gates"], ["gate", "limit", "value", "result"], gates),
    ]


def _empty_note(title: str) -> str:
    if title == TITLES["inputs"]:
        return "No input's total index changed significantly (every interval contains 0)."
    if title == TITLES["layers"]:
        return "No hidden layer has the same name and unit count in both models."
    if title == TITLES["gates"]:
        return "No gates were set (see --max-dimension-rise, --min-rank-agreement, --max-index-shift)."
    return ""


def renderable(result: ComparisonResult) -> Group:
    """The comparison report as one rich renderable."""
    parts: list[RenderableType] = []
    for title, header, rows in comparison_sections(result):
        parts.append(Rule(Text(title, style="bold"), align="left", style="dim"))
        if not rows:
            parts.append(Text(_empty_note(title)))
            parts.append(Text(""))
            continue
        table = Table(box=None, show_header=bool(any(header)), pad_edge=False, expand=False)
        for i, h in enumerate(header):
            left = i == 0 or title == TITLES["run"]
            table.add_column(h, justify="left" if left else "right", overflow="fold")
        for row in rows:
            table.add_row(*row)
        parts.append(table)
        if title == TITLES["gates"]:
            parts.extend(Text(f"{g.name}: {g.detail}") for g in result.gates)
        parts.append(Text(""))
    if any(o.moved for o in result.outputs) or any(o.mean_dimension_change for o in result.outputs):
        how = "paired over randomizations" if result.design.get("paired", True) else "independent points"
        parts.append(Text(f"* the 95 % interval of the change excludes 0 ({how}); ± is its half-width."))
    parts.append(Rule(style="dim"))
    parts.append(Text(CAUTION))
    return Group(*parts)


def render_comparison(result: ComparisonResult, console: Console) -> None:
    """Print the comparison report."""
    console.print(renderable(result))


def _md_row(cells: Sequence[str]) -> str:
    return "| " + " | ".join(c.replace("|", "\\|") for c in cells) + " |"


def comparison_markdown(result: ComparisonResult) -> str:
    """The comparison report as Markdown tables."""
    lines = ["# netdim comparison", ""]
    for title, header, rows in comparison_sections(result):
        lines += [f"## {title}", ""]
        if not rows:
            lines += [_empty_note(title), ""]
            continue
        hdr = [h or "·" for h in header]
        lines += [_md_row(hdr), _md_row(["---"] * len(hdr)), *(_md_row(r) for r in rows), ""]
    lines += ["> " + CAUTION, ""]
    return "\n".join(lines)
