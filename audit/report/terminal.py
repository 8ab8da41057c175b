"""Terminal rendering of an audit with rich.

:func:`renderable` turns an :class:`~audit.results.AuditResult` into one rich
``Group`` (usable as ``__rich__`` of the result, so notebooks and
``rich.print`` show it); :func:`render_audit` prints it on a console made by
:func:`make_console`. Tables are :class:`~audit.report.layout.FitTable`s laid
out for the console's width: numbers are never split, long names move to a
line of their own, lists of leading inputs move under their row, and wider
consoles keep everything on one line per row.

Sections, in order: model and run, outputs at a glance, ranked inputs per
output, hidden layers, findings, and a closing caution. Every number and
sentence comes from :mod:`audit.report.findings`, shared with the Markdown
export.
"""

from __future__ import annotations

import os
import unicodedata
from typing import IO

from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, Group, RenderableType, RenderResult
from rich.rule import Rule
from rich.text import Text

from ..results import AuditResult, OutputResult
from .findings import (
    BAR_WIDTH,
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
from .layout import Column, FitTable, Paragraph

__all__ = ["make_console", "render_audit", "renderable"]

# Stand-ins for consoles that cannot encode Unicode (a cp1252 pipe, say).
_ASCII = str.maketrans(
    {
        "ν": "nu",
        "…": "...",
        "—": "-",
        "→": "->",
        "±": "+/-",
        "√": "sqrt ",
        "×": "x",
        "–": "-",
        "°": "deg ",
        "█": "#",
        "▉": "#",
        "▊": "#",
        "▋": "#",
        "▌": "+",
        "▍": "+",
        "▎": "+",
        "▏": "+",
    }
)


def make_console(file: IO[str] | None = None, *, width: int | None = None) -> Console:
    """A console for reports: colour on a terminal, plain text everywhere else.

    Parameters
    ----------
    file : file-like, optional
        Where to write (default standard output).
    width : int, optional
        Fixed width in columns (default: the terminal's, or 80 when not a terminal).

    Returns
    -------
    rich.console.Console
        Writes no escape codes at all when ``file`` is not a terminal or when
        the ``NO_COLOR`` environment variable is set to a non-empty value.
    """
    no_color = bool(os.environ.get("NO_COLOR"))
    console = Console(file=file, width=width, highlight=False, emoji=False, markup=False)
    if no_color or not console.is_terminal:
        console = Console(
            file=file,
            width=width,
            highlight=False,
            emoji=False,
            markup=False,
            color_system=None,
            no_color=True,
        )
    return console


class _Title:
    """A section title followed by a rule; wraps instead of truncating when too long."""

    def __init__(self, text: str, ascii_only: bool) -> None:
        self.text, self.ascii_only = _t(text, ascii_only), ascii_only

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        title = Text(self.text, style="bold")
        if cell_len(self.text) + 4 <= options.max_width:
            yield Rule(title, align="left", style="dim", characters=_rule_char(self.ascii_only))
        else:
            yield Paragraph(self.text, style="bold")


def _rule_char(ascii_only: bool) -> str:
    return "-" if ascii_only else "─"


def _title(text: str, ascii_only: bool) -> _Title:
    return _Title(text, ascii_only)


def _t(text: str, ascii_only: bool) -> str:
    """``text`` itself, or an ASCII stand-in (``ν`` -> ``nu``, ``²`` -> ``2``, ``é`` -> ``e``).

    Non-breaking spaces survive, so that the line wrapper still honours them.
    """
    if not ascii_only or text.isascii():
        return text
    if GLUE in text:  # keep the non-breaking spaces for the line wrapper
        return GLUE.join(_t(part, True) for part in text.split(GLUE))
    decomposed = unicodedata.normalize("NFKD", text.translate(_ASCII))
    kept = "".join(c for c in decomposed if not unicodedata.combining(c))
    return kept.encode("ascii", "replace").decode("ascii")


def _header(result: AuditResult, ascii_only: bool) -> Group:
    rows = describe_run(result)
    width = max(cell_len(label) for label, _ in rows) + 1
    return Group(
        *(
            Paragraph(
                _t(text, ascii_only),
                label.ljust(width),
                prefix_style="bold",
                style="yellow" if label == "notice" else "",
            )
            for label, text in rows
        )
    )


def _outputs_table(result: AuditResult, ascii_only: bool) -> FitTable:
    columns = [
        Column("output", "left", kind="name"),
        Column("variance"),
        Column("ν and 95 % interval"),
        Column("additive\nshare"),
        Column("leading inputs", "left", kind="note"),
    ]
    rows: list[list[str | Text]] = []
    for r in output_rows(result):
        inert = r.nu.startswith("inert")
        nu = Text(r.nu, style="dim") if inert else Text.assemble((r.nu, "bold"), " ", r.nu_interval)
        name, leading = _t(r.name, ascii_only), _t(r.leading, ascii_only)
        rows.append([name, r.variance, nu, r.additive_share, leading])
    return FitTable(_ascii_columns(columns, ascii_only), rows, ascii_only=ascii_only)


def _ascii_columns(columns: list[Column], ascii_only: bool) -> list[Column]:
    if not ascii_only:
        return columns
    return [Column(_t(c.header, True), c.justify, c.style, c.kind) for c in columns]


def _inputs_block(output: OutputResult, threshold: float, ascii_only: bool) -> list[RenderableType]:
    parts: list[RenderableType] = [
        _title(SECTION_TITLES["inputs"].format(name=output.name), ascii_only),
        Paragraph(_t(output_heading(output), ascii_only)),
    ]
    if output.inert or output.mean_dimension is None:
        return parts
    if not output.total_index:
        only = "this estimator measures ν only; no per-input indices"
        parts.append(Paragraph(_t(only, ascii_only)))
        return parts
    rows, folded = input_rows(output, threshold)
    has_first = bool(output.first_order)
    columns = [
        Column("input", "left", kind="name"),
        Column("total\nindex"),
        Column("95 % interval"),
        Column("size (0–1)", "left", style="cyan", kind="extra"),
    ]
    if has_first:
        columns.append(Column("first\norder"))
    cells: list[list[str | Text]] = [
        [
            _t(r.name, ascii_only),
            r.total,
            r.interval,
            _t(r.bar, ascii_only).ljust(BAR_WIDTH),
            *([r.first_order] * has_first),
        ]
        for r in rows
    ]
    if cells:
        parts.append(FitTable(_ascii_columns(columns, ascii_only), cells, ascii_only=ascii_only))
    if folded:
        parts.append(
            Paragraph(
                _t(f"… {folded} more below {fmt_setting(threshold)}", ascii_only), style="dim"
            )
        )
    return parts


def _layers_table(result: AuditResult, ascii_only: bool) -> FitTable:
    a = ascii_only
    columns = [
        Column("layer", "left", kind="name"),
        Column("op", "left"),
        Column("units"),
        Column("inert"),
        Column("ν min / median / p90 / max"),
        Column("ν\nweighted"),
    ]
    rows: list[list[str | Text]] = [
        [_t(r.name, a), r.op, r.units, r.inert, r.quantiles, Text(r.weighted, style="bold")]
        for r in layer_rows(result)
    ]
    return FitTable(_ascii_columns(columns, ascii_only), rows, ascii_only=ascii_only)


def _findings(result: AuditResult, threshold: float, ascii_only: bool) -> list[RenderableType]:
    found = derive_findings(result, threshold=threshold)
    if not found:
        return [Paragraph("Nothing stands out under the rules of thumb used here.")]
    bullet = "* " if ascii_only else "• "
    parts: list[RenderableType] = []
    for f in found:
        parts.append(Paragraph(_t(f.text, ascii_only), bullet, prefix_style="bold"))
        parts += [
            Paragraph(_t(cmd, ascii_only), style="bold cyan", indent=4) for cmd in f.commands
        ]
    return parts


def renderable(
    result: AuditResult,
    *,
    all_outputs: bool = False,
    threshold: float = DEFAULT_THRESHOLD,
    max_outputs: int = 3,
    ascii_only: bool = False,
) -> Group:
    """The whole audit report as one rich renderable.

    Parameters
    ----------
    result : AuditResult
        The audit to show.
    all_outputs : bool, optional
        Rank the inputs of every output (default: the first ``max_outputs``).
    threshold : float, optional
        Inputs whose total index is below this are folded into one line and,
        when below it at the upper end of their interval, reported as freezable.
    max_outputs : int, optional
        Outputs whose inputs are ranked when ``all_outputs`` is false.
    ascii_only : bool, optional
        Replace non-ASCII symbols (ν, bar blocks, arrows) by ASCII stand-ins.

    Returns
    -------
    rich.console.Group
        Printable with any rich console; suitable as a ``__rich__`` hook.
    """
    if max_outputs < 0:
        raise ValueError(f"max_outputs must be 0 or more, got {max_outputs}")
    a = ascii_only
    parts: list[RenderableType] = [_title(SECTION_TITLES["header"], a), _header(result, a)]

    parts += [Text(), _title(SECTION_TITLES["outputs"], a)]
    if result.outputs:
        parts.append(_outputs_table(result, a))
    else:
        parts.append(Paragraph("no outputs recorded", style="dim"))

    shown = result.outputs if all_outputs else result.outputs[:max_outputs]
    for output in shown:
        parts.append(Text())
        parts += _inputs_block(output, threshold, a)
    hidden = len(result.outputs) - len(shown)
    if hidden:
        noun = "output" if hidden == 1 else "outputs"
        parts.append(Text())
        parts.append(
            Paragraph(
                _t(f"… {hidden} more {noun} not ranked here; --all-outputs (all_outputs=True) "
                   "ranks them.", a),
                style="dim",
            )
        )

    if result.layers:
        parts += [Text(), _title(SECTION_TITLES["layers"], a), _layers_table(result, a)]

    parts += [Text(), _title(SECTION_TITLES["findings"], a), *_findings(result, threshold, a)]

    parts += [
        Text(),
        Rule(style="dim", characters=_rule_char(a)),
        Paragraph(_t(CAUTION, a), style="italic"),
    ]
    return Group(*parts)


def render_audit(
    result: AuditResult,
    console: Console,
    *,
    all_outputs: bool = False,
    threshold: float = DEFAULT_THRESHOLD,
    max_outputs: int = 3,
) -> None:
    """Print the audit report on ``console``.

    Parameters
    ----------
    result : AuditResult
        The audit to show.
    console : rich.console.Console
        Where to print; see :func:`make_console`. ASCII stand-ins are used when
        the console's encoding is not UTF.
    all_outputs, threshold, max_outputs
        As in :func:`renderable`.
    """
    ascii_only = not console.encoding.lower().startswith("utf")
    console.print(
        renderable(
            result,
            all_outputs=all_outputs,
            threshold=threshold,
            max_outputs=max_outputs,
            ascii_only=ascii_only,
        )
    )
