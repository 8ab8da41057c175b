"""The words of a report: the legend of the terms it uses, and "mean dimension ν" named at first mention.

:func:`explain` finishes any :class:`~audit.report.document.Report` for
every renderer:

- in each section, the first mention of ν says what it is, "mean dimension
  ν" (the section title counts; a table's first mention is its column header);
- a closing section, :data:`LEGEND_TITLE`, defines every term of
  :data:`TERMS` that the report's text uses, and only those.

The definitions are netdim's own words (the trade terms themselves, Sobol'
index, mean dimension, RQMC, pre-integration, are the field's).
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import replace

from .document import Block, Bullet, Bullets, Column, Field, Fields, Heading, Note, Paragraph, Report, Section, Table
from .text import GLUE

__all__ = ["LEGEND_TITLE", "NAMED", "TERMS", "explain", "legend_section", "name_first", "report_text"]

LEGEND_TITLE = "Terms used in this report"
#: What the first ν of a section becomes.
NAMED = "mean dimension ν"

_NU = re.compile(r"(?<![\w])ν(?![\w])")
_NAMED = re.compile(r"mean dimension ν", re.IGNORECASE)

#: (term, pattern that shows the report uses it, definition), in the legend's order.
TERMS: tuple[tuple[str, str, str], ...] = (
    (NAMED, r"ν", "the sum of an output's total indices: 1 when the output adds up effects of single inputs "
     "(no interactions), up to d, the number of inputs, the more of its variance comes from inputs acting "
     "together."),
    ("total index", r"total ind", "the share of an output's variance that involves the input, alone or with "
     "others (a Sobol' index, from 0 to 1)."),
    ("first order", r"first.order", "the share of the variance due to the input alone; at most its total index."),
    ("additive share", r"additive share", "the sum of the first-order indices: the share of the variance "
     "explained by inputs acting one at a time."),
    ("mean, variance", r"variance|σ²", "of the output under the input laws (σ² is the variance), in the "
     "output's unit and its square."),
    ("95 % interval", r"95 %", "a Student-t confidence interval over the R independent randomizations of the "
     "points; ± is its half-width."),
    ("N, R", r"N = |R = ", "N points per randomization, R independent randomizations of them."),
    ("RQMC", r"RQMC", "randomized quasi-Monte Carlo: scrambled Sobol' points, randomized independently R "
     "times; the spread between randomizations gives the intervals."),
    ("inert", r"\binert\b", "constant under the input laws (no variance): nothing to rank."),
    ("unreliable", r"[Uu]nreliable", "the interval of ν (or of an index) lies wholly outside its possible range, "
     "or is wider than it: the estimate says nothing yet."),
    ("leading inputs", r"leading inputs", "the inputs with the largest total indices, largest first."),
    ("op", r"\bop\b", "the operation whose output the layer is (tanh, relu...)."),
    ("p90", r"p90", "the 90th percentile: nine in ten of the layer's units have a lower ν."),
    ("ν weighted", r"ν weighted|variance-weighted", "the mean of the units' ν weighted by their variances: "
     "the layer's ν as a whole."),
    ("change", r"old → new|ν old", "new minus old, with the half-width of its paired 95 % interval; * marks a "
     "change whose interval excludes 0 (beyond noise)."),
    ("rank agreement", r"rank agreement|Kendall τ", "Kendall τ of the total indices of the inputs that matter "
     "in either model, a pair counted as swapped only when both models separate it in opposite orders: 1 the "
     "same order, 0 unrelated, −1 reversed."),
    ("top-k", r"top-k", "how many of the k inputs with the largest total indices the two models share "
     "(k set by --top-k)."),
    ("gate", r"\bgates?\b", "a limit a comparison must pass; netdim compare exits with code 3 when one fails."),
    ("pre-integrate", r"pre-integrat", "integrate one input out exactly with a Gauss rule, leaving a smoother "
     "function of the others; its ν after is that function's."),
    ("Var after, σ² − total", r"σ² − total", "the variance of the pre-integrated model, measured, and as the "
     "audit predicts it: σ² minus the input's un-normalised total index."),
    ("RQMC gain", r"RQMC gain", "how much the variance of the estimate of the mean falls with pre-integration, "
     "measured over randomizations at each number of points n."),
    ("slope", r"[Ss]lope", "of log variance against log n: −1 is the Monte Carlo rate; steeper is better."),
    ("freeze", r"[Ff]reez", "fix an input at one value; the mean squared change this causes is at most twice "
     "the sum of the frozen inputs' un-normalised total indices."),
)


def _block_texts(block: Block) -> Iterator[str]:
    if isinstance(block, Fields):
        for f in block.rows:
            yield from (f.label, f.text, *f.lines)
    elif isinstance(block, Table):
        for c in block.columns:
            yield from (c.header, c.group)
        for row in block.rows:
            yield from (cell if isinstance(cell, str) else getattr(cell, "text", "") for cell in row)
    elif isinstance(block, Bullets):
        yield from (item.text for item in block.items)
    else:
        yield block.text


def report_text(report: Report) -> str:
    """Every word of ``report`` (titles, labels, headers, cells, sentences), one string per line."""
    parts = [report.title]
    for section in report.sections:
        parts.append(section.title or "")
        for block in section.blocks:
            parts += list(_block_texts(block))
    return "\n".join(parts).replace(GLUE, " ")


def name_first(text: str) -> tuple[str, bool]:
    """``text`` with its first ν named "mean dimension ν" (unless it already is), and whether ν is mentioned."""
    found = _NU.search(text)
    if found is None and not _NAMED.search(text):
        return text, False
    named = _NAMED.search(text)
    if named is not None and (found is None or named.start() <= found.start()):
        return text, True
    assert found is not None
    return text[: found.start()] + NAMED + text[found.end() :], True


def _name_block(block: Block) -> tuple[Block, bool]:
    """``block`` with its first mention of ν named, and whether it mentions ν."""
    if isinstance(block, Paragraph | Note | Heading):
        text, hit = name_first(block.text)
        return (replace(block, text=text) if hit else block), hit
    if isinstance(block, Fields):
        rows = list(block.rows)
        for i, f in enumerate(rows):
            for attr in ("label", "text"):
                text, hit = name_first(getattr(f, attr))
                if hit:
                    rows[i] = replace(f, **{attr: text})
                    return Fields(tuple(rows)), True
        return block, False
    if isinstance(block, Table):
        columns = list(block.columns)
        for i, c in enumerate(columns):
            header, in_header = name_first(c.header)
            group, in_group = name_first(c.group)
            if in_header or in_group:
                columns[i] = Column(header, c.role, c.tone, group)
                # the other columns of the group show the same group header
                columns = [replace(x, group=group) if x.group and x.group == c.group else x for x in columns]
                return Table(tuple(columns), block.rows), True
        return block, False
    if isinstance(block, Bullets):
        items = list(block.items)
        for i, item in enumerate(items):
            text, hit = name_first(item.text)
            if hit:
                items[i] = Bullet(text, item.commands)
                return Bullets(tuple(items)), True
        return block, False
    return block, False


def _name_section(section: Section) -> Section:
    if section.title:
        title, hit = name_first(section.title)
        if hit:
            return replace(section, title=title)
    blocks = list(section.blocks)
    for i, block in enumerate(blocks):
        named, hit = _name_block(block)
        if hit:
            blocks[i] = named
            return replace(section, blocks=tuple(blocks))
    return section


def legend_section(report: Report) -> Section | None:
    """The legend of the terms ``report`` uses (``None`` when it uses none of :data:`TERMS`)."""
    text = report_text(report)
    rows = tuple(Field(term, meaning) for term, pattern, meaning in TERMS if re.search(pattern, text))
    return Section(LEGEND_TITLE, (Fields(rows),)) if rows else None


def explain(report: Report) -> Report:
    """``report`` with ν named at its first mention in every section, closed by the legend of its terms.

    Parameters
    ----------
    report : Report
        Any report, as the sections build it.

    Returns
    -------
    Report
        The same content; the first ν of each section reads "mean dimension ν",
        and a last section (:data:`LEGEND_TITLE`) defines the terms used.
    """
    sections = [_name_section(s) for s in report.sections]
    named = replace(report, sections=tuple(sections))
    legend = legend_section(named)
    return replace(named, sections=(*sections, legend)) if legend else named
