"""Terminal and Markdown reports of ``netdim advise``.

:func:`render_advice` prints an :class:`~audit.results.advice.AdviceResult` on
a rich console (80 columns: numeric cells never wrap, only names fold);
:func:`advice_markdown` gives the same content as Markdown. Both take every
row and sentence from the functions here (:func:`candidate_rows`,
:func:`gain_rows`, :func:`freeze_rows`, :func:`derive_advice_findings`), and
numbers from :mod:`audit.report.findings`, so the two show identical figures.

Sections: model and run; per output the audit line, the pre-integration
candidates (ν before → after, the variance check Var f̃ = σ² − τ̄²_ℓ), the
measured RQMC gain and the inputs that can be frozen; findings in plain words;
the closing caution.

The findings use these rules (common practice, no source): ν after is "lower"
when its interval lies wholly below ν's; pre-integration "pays" when the
extrapolated variance ratio at equal cost in model evaluations exceeds 1.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from rich.cells import cell_len
from rich.console import Console, Group, RenderableType
from rich.rule import Rule
from rich.text import Text

from ..results.advice import AdviceResult, FreezeGroup, OutputAdvice, RqmcGain
from .findings import (
    CAUTION,
    GLUE,
    LIST_LIMIT,
    SECTION_TITLES,
    Finding,
    describe_run,
    fmt,
    fmt_count,
    fmt_interval,
    fmt_setting,
    output_heading,
)
from .layout import Column, FitTable, Paragraph
from .markdown import _esc, _table
from .terminal import _rule_char, _t, _title

__all__ = [
    "ADVICE_TITLES",
    "CandidateRow",
    "FreezeRow",
    "GainTableRow",
    "advice_markdown",
    "advice_renderable",
    "candidate_rows",
    "derive_advice_findings",
    "freeze_rows",
    "gain_lines",
    "gain_rows",
    "group_line",
    "nodes_line",
    "nu_line",
    "render_advice",
]

ADVICE_TITLES = {
    "output": "Advice for {name}",
    "candidates": "Inputs to pre-integrate, best first",
    "gain": "RQMC gain with {feature} integrated out",
    "freeze": "Inputs to freeze (total index below {eps} at the interval's upper end)",
    "findings": SECTION_TITLES["findings"],
}

# ASCII stand-ins for the symbols of this report (before the terminal's own).
# The terminal text avoids combining characters (f̃, τ̄), so that every character is one cell.
_ASCII_SYMBOLS = {"σ²": "var", "Σ": "sum "}


def _a(text: str, ascii_only: bool) -> str:
    if ascii_only:
        for k, v in _ASCII_SYMBOLS.items():
            text = text.replace(k, v)
    return _t(text, ascii_only)


def _pct(x: float) -> str:
    return f"{fmt(100 * x)} %" if math.isfinite(x) else "n/a"


def _listing(items: Sequence[str]) -> str:
    if len(items) <= LIST_LIMIT:
        return ", ".join(items)
    return ", ".join(items[:LIST_LIMIT]) + f" and {len(items) - LIST_LIMIT} more"


# ----------------------------------------------------------------------------- rows


@dataclass(frozen=True)
class CandidateRow:
    """One pre-integration candidate, every cell formatted."""

    name: str
    total: str
    nu_after: str
    interval: str
    variance_after: str
    predicted: str
    check: str
    nodes: str


def candidate_rows(output: OutputAdvice) -> list[CandidateRow]:
    """The candidates of one output, best first."""
    rows = []
    for c in output.preintegrate:
        nu = c.mean_dimension_after
        vi = c.variance_identity
        rows.append(
            CandidateRow(
                name=c.feature,
                total=fmt(c.total_index.estimate),
                nu_after="constant" if nu is None else fmt(nu.estimate),
                interval="" if nu is None else fmt_interval(nu.ci_low, nu.ci_high),
                variance_after=fmt(vi.measured.estimate),
                predicted=fmt(vi.predicted.estimate),
                check="agrees" if vi.agree else "DIFFERS",
                nodes=fmt_count(c.nodes),
            )
        )
    return rows


def nodes_line(output: OutputAdvice) -> str:
    """Gauss nodes and pilot error of the candidates, one line."""
    if not output.preintegrate:
        return ""
    parts = [f"{c.feature} {c.nodes}" for c in output.preintegrate]
    worst = max(c.quadrature_error for c in output.preintegrate)
    return (
        f"Gauss nodes: {_listing(parts)}; on the pilot points the m- and 2m-node rules differ "
        f'by at most {fmt(worst, 2)} of the output sd. "Var after" is measured on the '
        "pre-integrated model; \"σ² − total\" is the audit's variance minus the input's "
        "un-normalised total index: they should agree."
    )


def nu_line(output: OutputAdvice) -> str:
    """ν before → after for the best candidate."""
    best, nu = output.best, output.audit.mean_dimension
    if best is None or nu is None:
        return ""
    after = best.mean_dimension_after
    text_after = (
        "constant"
        if after is None
        else f"{fmt(after.estimate)} {fmt_interval(after.ci_low, after.ci_high)}"
    )
    before = f"{fmt(nu.estimate)} {fmt_interval(nu.ci_low, nu.ci_high)}"
    return f"ν before → after: {before} → {text_after} ({best.feature})"


@dataclass(frozen=True)
class GainTableRow:
    """One point count of the RQMC gain, every cell formatted."""

    points: str
    before: str
    after: str
    ratio: str


def gain_rows(gain: RqmcGain) -> list[GainTableRow]:
    """Rows: n, variance of the model's mean estimate, of the pre-integrated one's, ratio."""
    return [
        GainTableRow(
            fmt_count(r.points), fmt(r.variance_before), fmt(r.variance_after), fmt(r.ratio, 3)
        )
        for r in gain.rows
    ]


def gain_lines(gain: RqmcGain) -> list[str]:
    """Slopes, costs and the equal-cost ratio, one sentence each."""
    return [
        f"Slope of log variance against log n: model {fmt(gain.slope_before, 3)}, pre-integrated "
        f"{fmt(gain.slope_after, 3)} "
        "(-1 is the Monte Carlo rate).",
        f"Cost: model {fmt_count(gain.evaluations_before)} evaluations, pre-integrated "
        f"{fmt_count(gain.evaluations_after)} ({gain.nodes} per point), over "
        f"{gain.replicates} randomizations.",
        "Variance ratio at equal cost in model evaluations (read off the fitted lines, the "
        f"model's extrapolated): "
        f"{fmt(gain.equal_cost_ratio, 3)}.",
    ]


@dataclass(frozen=True)
class FreezeRow:
    """One negligible input, every cell formatted."""

    name: str
    total: str
    interval: str
    grouped: str


def freeze_rows(output: OutputAdvice) -> list[FreezeRow]:
    """Inputs below the freeze threshold, smallest total index first."""
    return [
        FreezeRow(
            f.feature,
            fmt(f.total_index.estimate),
            fmt_interval(f.total_index.ci_low, f.total_index.ci_high),
            "yes" if f.grouped else "no (over budget)",
        )
        for f in output.freeze
    ]


def group_line(group: FreezeGroup) -> str:
    """The frozen group's bound and measured error, one sentence."""
    b, m = group.bound_normalised, group.measured_normalised
    verdict = "within the bound" if group.holds else "ABOVE the bound"
    together = " together" if len(group.features) > 1 else ""
    return (
        f"Freezing {_listing(group.features)}{together} at a random draw: bound (twice the sum "
        f"of the total indices) {fmt(group.bound.estimate)} ({_pct(b.estimate)} of σ², up to "
        f"{_pct(b.ci_high)}; budget {fmt_setting(100 * group.budget)} %); measured mean squared "
        f"change {fmt(group.measured.estimate)} "
        f"({_pct(m.estimate)} of σ², interval {_pct(m.ci_low)} to {_pct(m.ci_high)}), {verdict}."
    )


# ----------------------------------------------------------------------------- findings


def _times(ratio: float) -> str:
    if not math.isfinite(ratio) or ratio >= 1:
        return f"is {fmt(ratio, 3)} times smaller"
    return f"is {fmt(1 / ratio, 3)} times larger"


def _lower(before, after) -> bool:  # type: ignore[no-untyped-def]
    return after is None or (before is not None and after.ci_high < before.ci_low)


def derive_advice_findings(result: AdviceResult) -> list[Finding]:
    """Plain-language findings of an advise run.

    Returns
    -------
    list of Finding
        Kinds, in order: ``"preintegrate"`` and ``"gain"`` (per output),
        ``"no_gain"``, ``"costly"``, ``"identity"``, ``"quadrature"``, ``"freeze"``,
        ``"freeze_bound"``, ``"freeze_everywhere"``, ``"inert"``.
    """
    out: list[Finding] = []
    flat: list[str] = []
    costly: list[tuple[str, RqmcGain]] = []
    for o in result.outputs:
        nu, best = o.audit.mean_dimension, o.best
        if best is None or nu is None:
            continue
        after = best.mean_dimension_after
        if _lower(nu, after):
            what = (
                "makes it constant"
                if after is None
                else f"lowers its mean dimension from {fmt(nu.estimate)} to {fmt(after.estimate)}"
            )
            text = f"{o.name}: integrating {best.feature} out with {best.nodes} Gauss nodes {what}."
            out.append(Finding("preintegrate", text, (o.name, best.feature)))
        else:
            flat.append(o.name)
        g = o.rqmc_gain
        if g is None or not g.rows:
            continue
        if math.isfinite(g.equal_cost_ratio) and g.equal_cost_ratio < 1:
            costly.append((o.name, g))
            continue
        out.append(
            Finding(
                "gain",
                f"{o.name}: with {g.feature} integrated out the RQMC variance of the estimated "
                f"mean {_times(g.ratio)} at n = {fmt_count(g.rows[-1].points)} (slope "
                f"{fmt(g.slope_before, 3)} → {fmt(g.slope_after, 3)}); at equal cost in model "
                f"evaluations about {fmt(g.equal_cost_ratio, 3)} times smaller (extrapolated).",
                (o.name, g.feature),
            )
        )
    if flat:
        out.append(
            Finding(
                "no_gain",
                f"No input lowers the mean dimension measurably when integrated out for "
                f"{_listing(flat)}: their ν-after intervals overlap ν's.",
                tuple(flat),
            )
        )
    if costly:
        items = [
            f"{name} ({g.feature} out: variance ratio {fmt(g.ratio, 3)} at equal n, "
            f"{fmt(g.equal_cost_ratio, 3)} at equal cost)"
            for name, g in costly
        ]
        out.append(
            Finding(
                "costly",
                "Pre-integration does not pay for estimating the mean at equal cost in model "
                f"evaluations for {_listing(items)}: the variance falls by less than the node "
                "count multiplies the cost of a point. Integrate such inputs out for the lower "
                "mean dimension, not for cheaper means.",
                tuple(name for name, _ in costly),
            )
        )
    bad = [
        (o.name, c.feature)
        for o in result.outputs
        for c in o.preintegrate
        if not c.variance_identity.agree
    ]
    if bad:
        out.append(
            Finding(
                "identity",
                "The variance check (variance after = σ² minus the input's total index) fails for "
                + _listing([f"{f} ({n})" for n, f in bad])
                + ": the Gauss rule may be too coarse or the run too short; raise the nodes or "
                "the points.",
                tuple(dict.fromkeys(f for _, f in bad)),
            )
        )
    rough = sorted({c.feature for o in result.outputs for c in o.preintegrate if not c.converged})
    if rough:
        out.append(
            Finding(
                "quadrature",
                f"The Gauss rule did not settle for {_listing(rough)} (the model is probably not "
                "smooth in them); their ν after holds for the rule used, not for the exact "
                "integral.",
                tuple(rough),
            )
        )
    groups: dict[str, list[str]] = {}
    for o in result.outputs:
        g = o.freeze_group
        if g is None:
            continue
        groups[o.name] = g.features
        out.append(
            Finding(
                "freeze",
                f"{o.name}: {_listing(g.features)} can be frozen; at a random value the mean "
                f"squared change is at most {_pct(g.bound_normalised.ci_high)} of the variance "
                f"(measured {_pct(g.measured_normalised.estimate)}).",
                (o.name, *g.features),
            )
        )
        if not g.holds:
            out.append(
                Finding(
                    "freeze_bound",
                    f"{o.name}: the measured change of freezing exceeds the bound's upper end; "
                    "rerun with more points before relying on it.",
                    (o.name,),
                )
            )
    live = [o for o in result.outputs if not o.audit.inert and o.audit.total_index]
    if groups and len(live) > 1 and len(groups) == len(live):
        common = [f for f in next(iter(groups.values())) if all(f in g for g in groups.values())]
        if common:
            out.append(
                Finding(
                    "freeze_everywhere",
                    f"Frozen for every output: {_listing(common)}. They can be fixed at nominal "
                    "values in the model's deployment inputs.",
                    tuple(common),
                )
            )
    inert = [o.name for o in result.outputs if o.audit.inert]
    if inert:
        out.append(
            Finding(
                "inert",
                f"Constant under these input laws, nothing to advise: {_listing(inert)}.",
                tuple(inert),
            )
        )
    return out


# ----------------------------------------------------------------------------- terminal


def _columns(columns: list[Column], a: bool) -> list[Column]:
    return [Column(_a(c.header, a), c.justify, c.style, c.kind) for c in columns]


def _candidates_table(output: OutputAdvice, a: bool) -> FitTable:
    columns = [
        Column("input", "left", kind="name"),
        Column("total\nindex"),
        Column("ν\nafter"),
        Column("95 % interval"),
        Column("Var\nafter"),
        Column("σ² −\ntotal"),
        Column("check", "left"),
    ]
    rows: list[list[str | Text]] = [
        [
            _a(r.name, a),
            r.total,
            Text(_a(r.nu_after, a), style="bold"),
            r.interval,
            r.variance_after,
            r.predicted,
            Text(r.check, style="" if r.check == "agrees" else "bold red"),
        ]
        for r in candidate_rows(output)
    ]
    return FitTable(_columns(columns, a), rows, ascii_only=a)


def _gain_table(gain: RqmcGain, a: bool) -> FitTable:
    columns = [
        Column("n"),
        Column("variance,\nmodel"),
        Column("variance,\npre-integrated"),
        Column("ratio"),
    ]
    rows: list[list[str | Text]] = [
        [r.points, r.before, r.after, Text(r.ratio, style="bold")] for r in gain_rows(gain)
    ]
    return FitTable(_columns(columns, a), rows, ascii_only=a)


def _freeze_table(output: OutputAdvice, a: bool) -> FitTable:
    columns = [
        Column("input", "left", kind="name"),
        Column("total index"),
        Column("95 % interval"),
        Column("in group", "left"),
    ]
    rows: list[list[str | Text]] = [
        [_a(r.name, a), r.total, r.interval, r.grouped] for r in freeze_rows(output)
    ]
    return FitTable(_columns(columns, a), rows, ascii_only=a)


def _para(text: str, a: bool, style: str = "") -> Paragraph:
    return Paragraph(_a(text, a), style=style)


def _output_block(result: AdviceResult, output: OutputAdvice, a: bool) -> list[RenderableType]:
    parts: list[RenderableType] = [
        _title(_a(ADVICE_TITLES["output"].format(name=output.name), a), a),
        _para(output_heading(output.audit), a),
    ]
    if output.audit.inert or output.audit.mean_dimension is None:
        return parts
    parts += [Text(), _para(ADVICE_TITLES["candidates"], a, "bold")]
    if output.preintegrate:
        parts += [
            _candidates_table(output, a),
            _para(nu_line(output), a),
            _para(nodes_line(output), a, "dim"),
        ]
    else:
        parts.append(
            _para(
                "No candidates (a single input, or none with a total index worth integrating).",
                a,
                "dim",
            )
        )
    gain = output.rqmc_gain
    if gain is not None:
        parts += [
            Text(),
            _para(ADVICE_TITLES["gain"].format(feature=gain.feature), a, "bold"),
            _gain_table(gain, a),
        ]
        parts += [_para(line, a) for line in gain_lines(gain)]
    eps = fmt_setting(result.settings.get("freeze_threshold", math.nan))
    parts += [Text(), _para(ADVICE_TITLES["freeze"].format(eps=eps), a, "bold")]
    if output.freeze:
        parts.append(_freeze_table(output, a))
        if output.freeze_group is not None:
            parts.append(_para(group_line(output.freeze_group), a))
        else:
            parts.append(
                _para("None fits the error budget on its own; nothing is grouped.", a, "dim")
            )
    else:
        parts.append(_para("None: every input matters at this threshold.", a, "dim"))
    return parts


def advice_renderable(result: AdviceResult, *, ascii_only: bool = False) -> Group:
    """The whole advice report as one rich renderable.

    Parameters
    ----------
    result : AdviceResult
    ascii_only : bool, optional
        Replace non-ASCII symbols by ASCII stand-ins.

    Returns
    -------
    rich.console.Group
    """
    a = ascii_only
    parts: list[RenderableType] = [_title(SECTION_TITLES["header"], a)]
    rows = describe_run(result)  # type: ignore[arg-type]
    width = max(cell_len(label) for label, _ in rows) + 1
    for label, text in rows:
        style = "yellow" if label == "notice" else ""
        parts.append(Paragraph(_a(text, a), label.ljust(width), prefix_style="bold", style=style))
    for output in result.outputs:
        parts.append(Text())
        parts += _output_block(result, output, a)
    parts += [Text(), _title(ADVICE_TITLES["findings"], a)]
    found = derive_advice_findings(result)
    bullet = "* " if a else "• "
    for f in found:
        parts.append(Paragraph(_a(f.text, a), bullet, prefix_style="bold"))
    if not found:
        parts.append(Paragraph("Nothing to advise under the rules used here."))
    parts += [
        Text(),
        Rule(style="dim", characters=_rule_char(a)),
        Paragraph(_t(CAUTION, a), style="italic"),
    ]
    return Group(*parts)


def render_advice(result: AdviceResult, console: Console) -> None:
    """Print the advice report on ``console`` (see :func:`audit.report.make_console`).

    ASCII stand-ins are used when the console's encoding is not UTF.
    """
    ascii_only = not console.encoding.lower().startswith("utf")
    console.print(advice_renderable(result, ascii_only=ascii_only))


# ----------------------------------------------------------------------------- markdown


def advice_markdown(result: AdviceResult) -> str:
    """The advice report as Markdown (GitHub-flavoured pipe tables), ending with the caution."""
    source = str((result.model or {}).get("source", "model"))
    lines = [f"# Advice for {_esc(source)}", "", f"## {SECTION_TITLES['header']}", ""]
    for label, text in describe_run(result):  # type: ignore[arg-type]
        first, *rest = text.replace(GLUE, " ").split("\n")
        lines.append(f"- **{label}**: {_esc(first)}")
        lines += [f"  - {_esc(item)}" for item in rest]
    lines.append("")
    eps = fmt_setting(result.settings.get("freeze_threshold", math.nan))
    for o in result.outputs:
        lines += [
            f"## {_esc(ADVICE_TITLES['output'].format(name=o.name))}",
            "",
            _esc(output_heading(o.audit)),
            "",
        ]
        if o.audit.inert or o.audit.mean_dimension is None:
            continue
        lines += [f"### {ADVICE_TITLES['candidates']}", ""]
        if o.preintegrate:
            header = [
                "input",
                "total index",
                "ν after",
                "95 % interval",
                "Var after",
                "σ² − total",
                "check",
                "nodes",
            ]
            cells = [
                [
                    r.name,
                    r.total,
                    r.nu_after,
                    r.interval,
                    r.variance_after,
                    r.predicted,
                    r.check,
                    r.nodes,
                ]
                for r in candidate_rows(o)
            ]
            lines += [*_table(header, ["l", "r", "r", "r", "r", "r", "l", "r"], cells), ""]
            lines += [_esc(nu_line(o)), "", _esc(nodes_line(o)), ""]
        else:
            lines += ["*No candidates.*", ""]
        g = o.rqmc_gain
        if g is not None:
            lines += [f"### {_esc(ADVICE_TITLES['gain'].format(feature=g.feature))}", ""]
            cells = [[r.points, r.before, r.after, r.ratio] for r in gain_rows(g)]
            header = ["n", "variance, model", "variance, pre-integrated", "ratio"]
            lines += [*_table(header, ["r", "r", "r", "r"], cells), ""]
            lines += [f"- {_esc(x)}" for x in gain_lines(g)] + [""]
        lines += [f"### {_esc(ADVICE_TITLES['freeze'].format(eps=eps))}", ""]
        if o.freeze:
            cells = [[r.name, r.total, r.interval, r.grouped] for r in freeze_rows(o)]
            lines += [
                *_table(
                    ["input", "total index", "95 % interval", "in group"],
                    ["l", "r", "r", "l"],
                    cells,
                ),
                "",
            ]
            if o.freeze_group is not None:
                lines += [_esc(group_line(o.freeze_group)), ""]
        else:
            lines += ["*None: every input matters at this threshold.*", ""]
    lines += [f"## {ADVICE_TITLES['findings']}", ""]
    found = derive_advice_findings(result)
    lines += (
        [f"- {_esc(f.text)}" for f in found]
        if found
        else ["Nothing to advise under the rules used here."]
    )
    lines += ["", "---", "", f"> {CAUTION}", ""]
    return "\n".join(lines)
