"""Terminal rendering of an audit with rich.

:func:`renderable` turns an :class:`~audit.results.AuditResult` into one rich
``Group`` (usable as ``__rich__`` of the result, so notebooks and
``rich.print`` show it); :func:`render_audit` prints it on a console made by
:func:`make_console`. The layout fits 80 columns: numeric cells never wrap,
only names do.

Sections, in order: model and run, outputs at a glance, ranked inputs per
output, hidden layers, findings, and a closing caution. Every number and
sentence comes from :mod:`audit.report.findings`, shared with the Markdown
export.
"""

from __future__ import annotations

import os
import unicodedata
from dataclasses import dataclass
from typing import IO

from rich import box
from rich.cells import cell_len
from rich.console import (
    Console,
    ConsoleOptions,
    Group,
    JustifyMethod,
    RenderableType,
    RenderResult,
)
from rich.rule import Rule
from rich.table import Table
from rich.text import Text

from ..results import AuditResult, OutputResult
from .findings import (
    CAUTION,
    DEFAULT_THRESHOLD,
    SECTION_TITLES,
    derive_findings,
    describe_run,
    fmt_setting,
    input_rows,
    layer_rows,
    output_heading,
    output_rows,
)

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
            yield title


def _rule_char(ascii_only: bool) -> str:
    return "-" if ascii_only else "─"


def _title(text: str, ascii_only: bool) -> _Title:
    return _Title(text, ascii_only)


def _t(text: str, ascii_only: bool) -> str:
    """``text`` itself, or an ASCII stand-in (``ν`` -> ``nu``, ``²`` -> ``2``, ``é`` -> ``e``)."""
    if not ascii_only or text.isascii():
        return text
    decomposed = unicodedata.normalize("NFKD", text.translate(_ASCII))
    kept = "".join(c for c in decomposed if not unicodedata.combining(c))
    return kept.encode("ascii", "replace").decode("ascii")


@dataclass(frozen=True)
class _Column:
    header: str
    role: str = "fixed"  # "fixed": never wraps; "name": sized to fit, folds; "flex": the rest
    justify: JustifyMethod = "right"
    style: str = ""


def _cell_width(cell: str | Text) -> int:
    plain = cell.plain if isinstance(cell, Text) else cell
    return max((cell_len(line) for line in plain.split("\n")), default=0)


class _FittedTable:
    """A table laid out at render time so that numeric cells never wrap.

    ``fixed`` columns get their natural width; the ``name`` column gets what is
    left (folding long names), after ``flex`` columns keep a minimum of 12
    cells; ``flex`` columns then take the rest and wrap at spaces.
    """

    _FLEX_MIN = 12
    _NAME_MIN = 6

    def __init__(
        self, columns: list[_Column], rows: list[list[str | Text]], ascii_only: bool
    ) -> None:
        self.columns, self.rows, self.ascii_only = columns, rows, ascii_only

    def _flex_low(self, i: int, natural: int) -> int:
        return min(natural, max(self._FLEX_MIN, _cell_width(self.columns[i].header)))

    def _natural(self, i: int) -> int:
        return max(_cell_width(c) for c in [self.columns[i].header, *(r[i] for r in self.rows)])

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        natural = [self._natural(i) for i in range(len(self.columns))]
        roles = [c.role for c in self.columns]
        # one cell of padding either side of each inner column edge, plus the divider
        pads = 3 * (len(self.columns) - 1)
        fixed = sum(w for w, r in zip(natural, roles, strict=True) if r == "fixed")
        lows = [self._flex_low(i, natural[i]) for i in range(len(self.columns))]
        flex_min = sum(low for low, r in zip(lows, roles, strict=True) if r == "flex")
        room = options.max_width - fixed - pads
        widths = list(natural)
        for i, role in enumerate(roles):
            if role == "name":
                widths[i] = max(self._NAME_MIN, min(natural[i], room - flex_min))
                room -= widths[i]
        for i, role in enumerate(roles):
            if role == "flex":
                widths[i] = max(lows[i], min(natural[i], room))
                room -= widths[i]
        table = Table(
            box=box.ASCII2 if self.ascii_only else box.SIMPLE_HEAD,
            show_edge=False,
            pad_edge=False,
            padding=(0, 1),
            header_style="bold",
        )
        depth = max(c.header.count("\n") for c in self.columns)
        for col, width in zip(self.columns, widths, strict=True):
            header = "\n" * (depth - col.header.count("\n")) + col.header  # align at the bottom
            table.add_column(
                _t(header, self.ascii_only),
                justify=col.justify,
                width=width,
                no_wrap=col.role == "fixed",
                overflow="fold",
                style=col.style,
            )
        for row in self.rows:
            table.add_row(*(c if isinstance(c, Text) else _t(c, self.ascii_only) for c in row))
        yield table


def _header(result: AuditResult, ascii_only: bool) -> Table:
    grid = Table.grid(padding=(0, 1))
    grid.add_column(style="bold", no_wrap=True)
    grid.add_column(overflow="fold")
    for label, text in describe_run(result):
        style = "yellow" if label == "notice" else ""
        grid.add_row(label, Text(_t(text, ascii_only), style=style))
    return grid


def _outputs_table(result: AuditResult, ascii_only: bool) -> _FittedTable:
    columns = [
        _Column("output", "name", "left"),
        _Column("variance"),
        _Column("ν and 95 % interval"),
        _Column("additive\nshare"),
        _Column("leading inputs", "flex", "left"),
    ]
    rows: list[list[str | Text]] = []
    for r in output_rows(result):
        nu = Text(r.nu, style="dim") if r.nu.startswith("inert") else Text.assemble((r.nu, "bold"), " ", r.nu_interval)
        rows.append([r.name, r.variance, nu, r.additive_share, r.leading])
    return _FittedTable(columns, rows, ascii_only)


def _inputs_block(output: OutputResult, threshold: float, ascii_only: bool) -> list[RenderableType]:
    parts: list[RenderableType] = [
        _title(SECTION_TITLES["inputs"].format(name=output.name), ascii_only),
        Text(_t(output_heading(output), ascii_only)),
    ]
    if output.inert or output.mean_dimension is None:
        return parts
    if not output.total_index:
        parts.append(Text(_t("this estimator measures ν only; no per-input indices", ascii_only)))
        return parts
    rows, folded = input_rows(output, threshold)
    has_first = bool(output.first_order)
    columns = [
        _Column("input", "name", "left"),
        _Column("total index"),
        _Column("95 % interval"),
        _Column("size (0–1)", justify="left", style="cyan"),
    ]
    if has_first:
        columns.append(_Column("first-order"))
    cells: list[list[str | Text]] = [
        [
            r.name,
            r.total,
            r.interval,
            _t(r.bar, ascii_only).ljust(10),
            *([r.first_order] * has_first),
        ]
        for r in rows
    ]
    if cells:
        parts.append(_FittedTable(columns, cells, ascii_only))
    if folded:
        parts.append(
            Text(_t(f"… {folded} more below {fmt_setting(threshold)}", ascii_only), style="dim")
        )
    return parts


def _layers_table(result: AuditResult, ascii_only: bool) -> _FittedTable:
    columns = [
        _Column("layer", "name", "left"),
        _Column("op", justify="left"),
        _Column("units"),
        _Column("inert"),
        _Column("ν min / median / p90 / max"),
        _Column("ν\nweighted"),
    ]
    rows: list[list[str | Text]] = [
        [r.name, r.op, r.units, r.inert, r.quantiles, Text(r.weighted, style="bold")]
        for r in layer_rows(result)
    ]
    return _FittedTable(columns, rows, ascii_only)


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
        parts.append(Text("no outputs recorded", style="dim"))

    shown = result.outputs if all_outputs else result.outputs[:max_outputs]
    for output in shown:
        parts.append(Text())
        parts += _inputs_block(output, threshold, a)
    hidden = len(result.outputs) - len(shown)
    if hidden:
        noun = "output" if hidden == 1 else "outputs"
        parts.append(Text())
        parts.append(
            Text(
                _t(f"… {hidden} more {noun} not ranked here; ask for all outputs to see them.", a),
                style="dim",
            )
        )

    if result.layers:
        parts += [Text(), _title(SECTION_TITLES["layers"], a), _layers_table(result, a)]

    parts += [Text(), _title(SECTION_TITLES["findings"], a)]
    found = derive_findings(result, threshold=threshold)
    if not found:
        parts.append(Text("Nothing stands out under the rules of thumb used here."))
    if found:
        bullets = Table.grid(padding=(0, 1))
        bullets.add_column(no_wrap=True, style="bold")
        bullets.add_column(overflow="fold")
        for f in found:
            bullets.add_row("*" if a else "•", _t(f.text, a))
        parts.append(bullets)

    parts += [
        Text(),
        Rule(style="dim", characters=_rule_char(a)),
        Text(_t(CAUTION, a), style="italic"),
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
