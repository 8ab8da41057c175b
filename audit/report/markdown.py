"""Markdown export of an audit, for review threads and model cards.

The sections, numbers and rounding are those of the terminal report
(:mod:`audit.report.terminal`); both take their content from
:mod:`audit.report.findings`. Tables are GitHub-flavoured Markdown pipe tables.
"""

from __future__ import annotations

from collections.abc import Sequence

from ..results import AuditResult, OutputResult
from .findings import (
    CAUTION,
    DEFAULT_THRESHOLD,
    GLUE,
    SECTION_TITLES,
    derive_findings,
    describe_run,
    fmt_setting,
    input_rows,
    layer_rows,
    output_heading,
    output_rows,
)

__all__ = ["audit_markdown"]

_ESCAPES = str.maketrans({"\\": "\\\\", "|": "\\|", "*": "\\*", "`": "\\`", "<": "&lt;"})


def _esc(text: str) -> str:
    return text.translate(_ESCAPES).replace("\n", " ").replace(GLUE, " ")


def _code(command: str) -> str:
    """A command as inline code (escaped text when it holds a backtick)."""
    return f"`{command}`" if "`" not in command else _esc(command)


def _table(header: Sequence[str], align: Sequence[str], rows: Sequence[Sequence[str]]) -> list[str]:
    rule = {"l": ":---", "r": "---:"}
    lines = ["| " + " | ".join(header) + " |", "|" + "|".join(rule[a] for a in align) + "|"]
    lines += ["| " + " | ".join(_esc(c) for c in row) + " |" for row in rows]
    return lines


def _inputs_section(output: OutputResult, threshold: float) -> list[str]:
    lines = [f"## {_esc(SECTION_TITLES['inputs'].format(name=output.name))}", ""]
    lines += [_esc(output_heading(output)), ""]
    if output.inert or output.mean_dimension is None:
        return lines
    if not output.total_index:
        return [*lines, "*This estimator measures ν only; no per-input indices.*", ""]
    rows, folded = input_rows(output, threshold)
    has_first = bool(output.first_order)
    header = ["input", "total index", "95 % interval", "size (0–1)"]
    align = ["l", "r", "r", "l"]
    if has_first:
        header.append("first-order")
        align.append("r")
    cells = [
        [r.name, r.total, r.interval, r.bar, *([r.first_order] if has_first else [])] for r in rows
    ]
    if cells:
        lines += [*_table(header, align, cells), ""]
    if folded:
        lines += [f"*… {folded} more below {fmt_setting(threshold)}*", ""]
    return lines


def audit_markdown(
    result: AuditResult,
    *,
    all_outputs: bool = True,
    threshold: float = DEFAULT_THRESHOLD,
    max_outputs: int = 3,
) -> str:
    """The audit report as Markdown.

    Parameters
    ----------
    result : AuditResult
        The audit to export.
    all_outputs : bool, optional
        Rank the inputs of every output (default true: a file has room).
    threshold : float, optional
        Inputs whose total index is below this are folded into one line.
    max_outputs : int, optional
        Outputs whose inputs are ranked when ``all_outputs`` is false.

    Returns
    -------
    str
        Markdown text ending in a newline, closing with the caution.
    """
    if max_outputs < 0:
        raise ValueError(f"max_outputs must be 0 or more, got {max_outputs}")
    source = str((result.model or {}).get("source", "model"))
    lines = [f"# Audit of {_esc(source)}", "", f"## {SECTION_TITLES['header']}", ""]
    for label, text in describe_run(result):
        first, *rest = text.split("\n")
        lines.append(f"- **{label}**: {_esc(first)}")
        lines += [f"  - {_esc(item)}" for item in rest]
    lines += ["", f"## {SECTION_TITLES['outputs']}", ""]
    if result.outputs:
        rows = [
            [r.name, r.variance, r.nu, r.nu_interval, r.additive_share, r.leading]
            for r in output_rows(result)
        ]
        header = ["output", "variance", "ν", "95 % interval", "additive share", "leading inputs"]
        lines += [*_table(header, ["l", "r", "r", "r", "r", "l"], rows), ""]
    else:
        lines += ["*No outputs recorded.*", ""]

    shown = result.outputs if all_outputs else result.outputs[:max_outputs]
    for output in shown:
        lines += _inputs_section(output, threshold)
    hidden = len(result.outputs) - len(shown)
    if hidden:
        noun = "output" if hidden == 1 else "outputs"
        lines += [f"*… {hidden} more {noun} not ranked here.*", ""]

    if result.layers:
        rows = [
            [r.name, r.op, r.units, r.inert, r.quantiles, r.weighted] for r in layer_rows(result)
        ]
        header = ["layer", "op", "units", "inert", "ν min / median / p90 / max", "ν weighted"]
        lines += [f"## {SECTION_TITLES['layers']}", ""]
        lines += [*_table(header, ["l", "l", "r", "r", "r", "r"], rows), ""]

    lines += [f"## {SECTION_TITLES['findings']}", ""]
    found = derive_findings(result, threshold=threshold)
    if found:
        for f in found:
            lines.append(f"- {_esc(f.text)}")
            lines += [f"  - {_code(cmd)}" for cmd in f.commands]
    else:
        lines.append("Nothing stands out under the rules of thumb used here.")
    lines += ["", "---", "", f"> {CAUTION}", ""]
    return "\n".join(lines)
