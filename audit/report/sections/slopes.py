"""The content of a slopes report, as a :class:`~audit.report.document.Report`.

Sections, in order: model and run (the gradient method and its cost); outputs
at a glance (directions, measured ν beside its bounds); for each detailed
output the bounds on its inputs' total indices beside the Jansen estimates and
its active directions (the eigenvalues as a table with bars, which a page may
draw as a chart); the directions of each hidden layer; and, for a screening
run, the screened audit with the inputs left out and what they can carry.
"""

from __future__ import annotations

from ...results.slopes import DirectionSummary, OutputSlopes, Screening, SlopesResult
from ..document import Bar, Block, Cell, CellValue, Column, Field, Fields, Note, Paragraph, Report, Section, Table
from ..text import fmt, fmt_count, fmt_interval, fmt_percent, listing

__all__ = ["SECTION_TITLES", "bounds_table", "directions_blocks", "slopes_report"]

SECTION_TITLES = {
    "header": "Model and run",
    "outputs": "Outputs at a glance: directions and bounds",
    "screen_outputs": "Outputs at a glance: what the inputs left out carry",
    "bounds": "Bounds on the total indices of {name}",
    "directions": "Active directions of {name}",
    "layers": "Directions spanned by each hidden layer",
    "screening": "Screened audit",
}
MAX_OUTPUTS = 3
EIGENVALUES_SHOWN = 8


def _rules(result: SlopesResult) -> tuple[str, ...]:
    """How each input's bound is made, one line per rule with the inputs that follow it."""
    rules: dict[str, list[str]] = {}
    for i in result.inputs:
        rules.setdefault(str(i.get("bound_rule", "")), []).append(str(i["name"]))
    return tuple(f"{rule}: {listing(names)}" for rule, names in rules.items())


def _header(result: SlopesResult) -> Section:
    m, dsg = result.model, result.design
    d = len(result.inputs)
    fields = [
        Field("model", f"{m.get('source', '')} ({m.get('format', '')})"),
        Field("inputs", f"{d}; bounds in each law's standardised coordinate", _rules(result)),
        Field(
            "gradients",
            f"{dsg['method']}, {fmt_count(dsg['gradient_points'])} points × "
            f"{dsg['replicates']} randomizations, {fmt_count(dsg['evaluations_per_point'])} evaluations a point "
            f"({dsg['cost_rule']})",
        ),
        Field(
            "cost",
            f"{fmt_count(dsg['gradient_evaluations'])} evaluations for the gradients, "
            f"{fmt_count(dsg['index_evaluations'])} for the indices: {fmt_percent(dsg['cost_fraction'])} of an audit "
            f"of every input ({fmt_count(dsg['full_evaluations'])})",
        ),
        Field("seed", str(dsg.get("seed"))),
        Field("intervals", str(dsg.get("interval", ""))),
    ]
    fields += [Field("notice", n, tone="warning") for n in result.notices]
    return Section(SECTION_TITLES["header"], (Fields(tuple(fields)),))


def _leading(dirs: DirectionSummary | None) -> str:
    if dirs is None or not dirs.directions:
        return ""
    return ", ".join(f"{w:+.2f} {f}" for f, w in dirs.directions[0].loadings[:3])


def _overview(result: SlopesResult) -> Table:
    d = len(result.inputs)
    columns = (
        Column("output", "name"),
        Column("directions"),
        Column("beyond them"),
        Column("ν (Jansen)", tone="strong"),
        Column("ν bound Σ bounds"),
        Column("ν bound Lipschitz"),
        Column("first direction", "note"),
    )
    rows: list[tuple[CellValue, ...]] = []
    for o in result.outputs:
        if o.inert:
            rows.append((o.name, Cell("inert (constant)", "muted"), "", "", "", "", ""))
            continue
        dirs = o.directions
        r = f"{dirs.count} of {d}" if dirs else ""
        beyond = fmt_percent(dirs.residual_share) if dirs else ""
        nu = fmt(o.mean_dimension.estimate) if o.mean_dimension else "not measured"
        total = fmt(o.bound_sum.estimate) if o.bound_sum else "n/a"
        rows.append((o.name, r, beyond, nu, total, fmt(o.lipschitz_bound), _leading(dirs)))
    return Table(columns, tuple(rows))


def _screen_overview(result: SlopesResult) -> Table:
    """Screening: per output the bound on ν, what the inputs left out carry (measured and bounded)."""
    assert result.screening is not None
    screened = {o.name: o for o in result.screening.outputs}
    columns = (Column("output", "name"), Column("ν bound Σ bounds"), Column("left out: total index", tone="strong"),
               Column("95 % interval"), Column("left out: bound"), Column("95 % interval"))  # fmt: skip
    rows: list[tuple[CellValue, ...]] = []
    for o in result.outputs:
        s = screened.get(o.name)
        if o.inert or s is None or s.rest_total is None or s.rest_bound is None:
            rows.append((o.name, Cell("inert (constant)", "muted") if o.inert else "", "", "", "", ""))
            continue
        t, b = s.rest_total, s.rest_bound
        total = fmt(o.bound_sum.estimate) if o.bound_sum else "n/a"
        rows.append((o.name, total, fmt(t.estimate), fmt_interval(t.ci_low, t.ci_high), fmt(b.estimate),
                     fmt_interval(b.ci_low, b.ci_high)))  # fmt: skip
    return Table(columns, tuple(rows))


def bounds_table(output: OutputSlopes) -> Table:
    """Every input's bound beside its total index, largest bound first."""
    columns = [Column("input", "name"), Column("bound", tone="strong"), Column("95 % interval")]
    measured = any(b.total is not None for b in output.bounds)
    if measured:
        columns += [Column("total index"), Column("95 % interval")]
    columns.append(Column("bound (0–1)", "bar"))
    rows = []
    for b in output.ranked():
        row: list[CellValue] = [b.feature, fmt(b.bound.estimate), fmt_interval(b.bound.ci_low, b.bound.ci_high)]
        if measured:
            t = b.total
            row += ["", ""] if t is None else [fmt(t.estimate), fmt_interval(t.ci_low, t.ci_high)]
        row.append(Bar(b.bound.estimate))
        rows.append(tuple(row))
    return Table(tuple(columns), tuple(rows))


def _violations(output: OutputSlopes) -> list[str]:
    """Inputs whose bound lies below the total index beyond both intervals."""
    return [b.feature for b in output.bounds if b.total is not None and b.bound.ci_high < b.total.ci_low]


def directions_blocks(dirs: DirectionSummary, d: int, name: str, per: str = "σ²") -> list[Block]:
    """The eigenvalue table (with bars) and what it says: r, the gap, the loadings, the ridge bound."""
    columns = (Column("k", "name"), Column(f"λ_k / {per}"), Column("95 % interval"), Column("share of tr C"),
               Column("share", "bar"))  # fmt: skip
    rows = tuple(
        (str(k + 1), fmt(e.estimate), fmt_interval(e.ci_low, e.ci_high), fmt_percent(s), Bar(s))
        for k, (e, s) in enumerate(zip(dirs.eigenvalues[:EIGENVALUES_SHOWN], dirs.shares, strict=False))
    )
    blocks: list[Block] = [Table(columns, rows)]
    r, k = dirs.count, dirs.largest_gap_at
    kept = f"all but {fmt_percent(dirs.residual_share)} of E‖∇f‖²"
    if dirs.few:
        noun, verb = ("direction", "it holds") if r == 1 else ("directions", "they hold")
        text = f"{name} is close to a ridge function of {r} {noun} of its {d} inputs: {verb} "
    else:
        text = f"{name} is not close to a function of few directions: {r} of {d} are needed to hold "
    text += kept + ". The largest eigenvalue gap among them comes after k = " + str(k)
    first = "the first direction holds" if k == 1 else f"the first {k} hold"
    turn = "turns" if k == 1 else "turn"
    text += (
        f" ({first} {fmt_percent(dirs.gap_share)} and {turn} by at most {fmt(dirs.spread_degrees)}° between "
        f"randomizations); {dirs.nonzero} eigenvalue{'s are' if dirs.nonzero != 1 else ' is'} above the rounding floor."
    )
    blocks.append(Paragraph(text))
    if dirs.ridge_error is not None and dirs.few:
        e = dirs.ridge_error
        blocks.append(Paragraph(
            f"With normal inputs, the best function of {'this direction' if r == 1 else f'these {r} directions'} "
            f"misses at most {fmt(e.estimate)} "
            f"{fmt_interval(e.ci_low, e.ci_high)} of the variance (Σ_(k>r) λ_k / σ², a Poincaré bound)."
        ))  # fmt: skip
    fields = tuple(
        Field(f"direction {k + 1}", f"{fmt_percent(x.share)} of tr C", tuple(f"{w:+.3f}  {f}" for f, w in x.loadings))
        for k, x in enumerate(dirs.directions)
    )
    if fields:
        blocks.append(Fields(fields))
    return blocks


def _output_sections(o: OutputSlopes, d: int) -> list[Section]:
    blocks: list[Block] = [bounds_table(o)]
    if o.bound_sum is not None:
        nu = o.mean_dimension
        measured = f"; measured ν = {fmt(nu.estimate)} {fmt_interval(nu.ci_low, nu.ci_high)}" if nu else ""
        blocks.append(Paragraph(
            f"Bounds on ν: Σ bounds = {fmt(o.bound_sum.estimate)} "
            f"{fmt_interval(o.bound_sum.ci_low, o.bound_sum.ci_high)}; Lipschitz L²/σ² = {fmt(o.lipschitz_bound)} "
            f"(L = {fmt(o.lipschitz)}, the largest gradient length seen){measured}. For a function of r directions "
            "with slope at most L along each, ν ≤ r·L²/σ²."
        ))  # fmt: skip
    if any(b.bound.estimate > 1 for b in o.bounds):
        blocks.append(Note("A bound above 1 says no more than that the total index is at most 1."))
    bad = _violations(o)
    if bad:
        blocks.append(Note(
            f"The bound lies below the total index beyond both intervals for {listing(bad)}: the model jumps "
            "somewhere (bounds from slopes hold only for continuous models with square-integrable slopes) or the "
            "points are too few."
        ))  # fmt: skip
    sections = [Section(SECTION_TITLES["bounds"].format(name=o.name), tuple(blocks))]
    if o.directions is not None:
        title = SECTION_TITLES["directions"].format(name=o.name)
        sections.append(Section(title, tuple(directions_blocks(o.directions, d, o.name))))
    return sections


def _layers(result: SlopesResult) -> Section:
    d = len(result.inputs)
    columns = (Column("layer", "name"), Column("op", "text"), Column("units"), Column("directions", tone="strong"),
               Column("beyond them"), Column("ν median (units)"), Column("first direction", "note"))  # fmt: skip
    rows = tuple(
        (
            x.name,
            x.op,
            fmt_count(x.units),
            f"{x.directions.count} of {d}",
            fmt_percent(x.directions.residual_share),
            fmt(x.nu_median) if x.nu_median is not None else "",
            _leading(x.directions),
        )
        for x in result.layers
    )
    note = Note("A layer's directions are those of Σ_u E[∇h_u ∇h_uᵀ] over its units: how many directions of the "
                "inputs the layer's units depend on together.")  # fmt: skip
    return Section(SECTION_TITLES["layers"], (Table(columns, rows), note))


def _screening(s: Screening, d: int) -> Section:
    blocks: list[Block] = [Paragraph(
        f"Kept {len(s.kept)} of {d} inputs, the highest bounds, one by one; the other {len(s.left_out)} were "
        f"measured as one group: {listing(s.left_out)}."
    )]  # fmt: skip
    for o in s.outputs:
        if not o.kept:
            blocks.append(Note(f"{o.name}: inert (constant)."))
            continue
        first = {f.feature: f for f in o.kept_first}
        columns = (Column("input", "name"), Column("total index", tone="strong"), Column("95 % interval"),
                   Column("first order"), Column("size (0–1)", "bar"))  # fmt: skip
        rows: list[tuple[CellValue, ...]] = [
            (
                f.feature,
                fmt(f.value.estimate),
                fmt_interval(f.value.ci_low, f.value.ci_high),
                fmt(first[f.feature].value.estimate),
                Bar(f.value.estimate),
            )
            for f in o.kept
        ]
        if o.rest_total is not None:
            t = o.rest_total
            rows.append((f"the other {len(s.left_out)} (one group)", fmt(t.estimate), fmt_interval(t.ci_low, t.ci_high),
                         "", Bar(t.estimate)))  # fmt: skip
        blocks.append(Paragraph(f"{o.name}:"))
        blocks.append(Table(columns, tuple(rows)))
        if o.rest_bound is not None:
            b = o.rest_bound
            blocks.append(Note(
                f"The inputs left out carry together at most {fmt(b.estimate)} {fmt_interval(b.ci_low, b.ci_high)} "
                f"of the variance of {o.name} (the sum of their bounds)."
            ))  # fmt: skip
    return Section(SECTION_TITLES["screening"], tuple(blocks))


def slopes_report(result: SlopesResult, *, all_outputs: bool = False, max_outputs: int = MAX_OUTPUTS) -> Report:
    """The slopes report's content.

    Parameters
    ----------
    result : SlopesResult
    all_outputs : bool, optional
        Detail every output (default: the first ``max_outputs``).
    max_outputs : int, optional

    Returns
    -------
    Report
        Kind ``"slopes"``.
    """
    if max_outputs < 0:
        raise ValueError(f"max_outputs must be 0 or more, got {max_outputs}")
    d = len(result.inputs)
    if result.screening is not None:
        overview = Section(SECTION_TITLES["screen_outputs"], (_screen_overview(result),))
    else:
        overview = Section(SECTION_TITLES["outputs"], (_overview(result),))
    sections = [_header(result), overview]
    live = [o for o in result.outputs if not o.inert]
    shown = live if all_outputs else live[:max_outputs]
    for o in shown:
        sections += _output_sections(o, d)
    if len(live) > len(shown):
        more = len(live) - len(shown)
        sections.append(Section(None, (Note(f"… {more} more output{'s' if more != 1 else ''} not detailed here; "
                                            "--all-outputs (all_outputs=True) details them."),)))  # fmt: skip
    if result.layers:
        sections.append(_layers(result))
    if result.screening is not None:
        sections.append(_screening(result.screening, d))
    source = str((result.model or {}).get("source", "model"))
    return Report("slopes", f"Slopes of {source}", tuple(sections))
