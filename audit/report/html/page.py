"""The HTML renderer: any :class:`~audit.report.document.Report`, with its charts, as one self-contained page.

Sections become ``<section>`` elements with ``<h2>`` titles, labelled rows a
definition list, tables real tables (numbers right-aligned, names never
wrapped; a table of more than :data:`FOLD_ROWS` rows folds into a
``<details>`` element), findings a list with each suggested command in a
``<pre>`` block on one line, notes a smaller italic voice. Each chart
(:class:`~audit.report.charts.base.Chart`) goes into the section whose title
it names: after the heading it names, or else before the section's first
table (after its opening lines); charts naming no section of the report get a
section of their own.

Every string is made safe (:func:`audit.report.text.visible`) and escaped;
nothing in a name is read as HTML. The page references nothing outside
itself: the style sheet is inline (:mod:`.style`), the charts are inline SVG.
"""

from __future__ import annotations

import html
from collections.abc import Sequence

from ..charts.base import Chart
from ..document import (
    Bar,
    Block,
    Bullets,
    Cell,
    CellValue,
    Column,
    Fields,
    Heading,
    Note,
    Paragraph,
    Report,
    Section,
    Table,
)
from ..text import CAUTION, finite, fmt, visible
from .style import CSS

__all__ = ["FOLD_ROWS", "PICTURES_TITLE", "fragment", "page"]

#: Tables with more rows fold into a <details> element (open it to read them).
FOLD_ROWS = 25
#: Title of the section holding charts whose own section the report does not show.
PICTURES_TITLE = "More pictures"


def esc(text: str) -> str:
    """``text`` safe inside HTML text or an attribute value."""
    return html.escape(visible(str(text)), quote=True)


def _tone(tone: str | None) -> str:
    return f' class="tone-{tone}"' if tone and tone != "plain" else ""


# ----------------------------------------------------------------------------- blocks


def _cell(cell: CellValue, column: Column, first: bool) -> str:
    classes = []
    if column.role == "number":
        classes.append("num")
    if column.role == "name":
        classes.append("name")
    if isinstance(cell, Bar):
        width = cell.fraction
        share = f"{100 * width:.1f}%" if finite(width) else "0%"
        label = fmt(cell.value) if finite(cell.value) else "n/a"
        return f'<td class="bar"><span class="bar" style="width: {share}" role="img" aria-label="{label}"></span></td>'
    text, tone = (cell.text, cell.tone or column.tone) if isinstance(cell, Cell) else (cell, column.tone)
    if tone and tone != "plain":
        classes.append(f"tone-{tone}")
    attrs = f' class="{" ".join(classes)}"' if classes else ""
    tag = "th" if first and column.role == "name" else "td"
    scope = ' scope="row"' if tag == "th" else ""
    return f"<{tag}{scope}{attrs}>{esc(text)}</{tag}>"


def _table(table: Table) -> str:
    numbers = ' class="num"'
    head = "".join(
        f'<th scope="col"{numbers if c.role == "number" else ""}>{esc(c.header)}</th>' for c in table.columns
    )
    body = "\n".join(
        "<tr>" + "".join(_cell(v, c, k == 0) for k, (v, c) in enumerate(zip(row, table.columns, strict=True))) + "</tr>"
        for row in table.rows
    )
    out = f'<div class="table-wrap"><table>\n<thead><tr>{head}</tr></thead>\n<tbody>\n{body}\n</tbody></table></div>'
    if len(table.rows) > FOLD_ROWS:
        return f"<details><summary>Table of {len(table.rows)} rows (open to read)</summary>\n{out}\n</details>"
    return out


def _fields(block: Fields) -> str:
    rows = []
    for f in block.rows:
        lines = "".join(f"<li>{esc(line)}</li>" for line in f.lines)
        extra = f"<ul>{lines}</ul>" if lines else ""
        rows.append(f"<dt>{esc(f.label)}</dt><dd{_tone(f.tone)}>{esc(f.text)}{extra}</dd>")
    return '<dl class="fields">\n' + "\n".join(rows) + "\n</dl>"


def _bullets(block: Bullets) -> str:
    items = []
    for item in block.items:
        commands = "".join(f'<pre class="command"><code>{esc(c)}</code></pre>' for c in item.commands)
        items.append(f"<li><p>{esc(item.text)}</p>{commands}</li>")
    return '<ul class="findings">\n' + "\n".join(items) + "\n</ul>"


def block_html(block: Block) -> str:
    """One block of a report as HTML."""
    if isinstance(block, Fields):
        return _fields(block)
    if isinstance(block, Table):
        return _table(block)
    if isinstance(block, Paragraph):
        return f"<p{_tone(block.tone)}>{esc(block.text)}</p>"
    if isinstance(block, Note):
        return f'<p class="note">{esc(block.text)}</p>'
    if isinstance(block, Heading):
        return f"<h3>{esc(block.text)}</h3>"
    if isinstance(block, Bullets):
        return _bullets(block)
    raise TypeError(f"not a report block: {block!r}")


def chart_html(chart: Chart) -> str:
    """A chart as a ``<figure>``: its title, the SVG, and how to read it."""
    svg = chart.svg.replace("<svg ", f'<svg aria-label="{esc(chart.title)}" ', 1)
    shape = f' data-shape="{"x".join(str(v) for v in chart.shape)}"' if chart.shape else ""
    return (
        f'<figure class="chart" id="{esc(chart.key)}"{shape}>\n'
        f'<figcaption><span class="chart-title">{esc(chart.title)}</span></figcaption>\n'
        f'{svg}\n<p class="chart-note">{esc(chart.caption)}</p>\n</figure>'
    )


# ----------------------------------------------------------------------------- the page


def _placed(blocks: Sequence[Block], charts: Sequence[Chart]) -> list[str]:
    """The section's blocks with its charts: after the heading a chart names, else before the first table.

    Charts naming a heading the section does not hold, and charts naming none
    in a section made of headings, go at its end.
    """
    first = next((i for i, b in enumerate(blocks) if isinstance(b, Table)), len(blocks))
    headings = {b.text: i + 1 for i, b in enumerate(blocks) if isinstance(b, Heading)}
    slots: dict[int, list[str]] = {}
    end = len(blocks)
    for c in charts:
        # in a section of headings the tables belong to them: a chart naming none goes last
        at = headings.get(c.heading, end) if c.heading else (end if headings else first)
        slots.setdefault(at, []).append(chart_html(c))
    parts: list[str] = []
    for i, b in enumerate(blocks):
        parts += slots.get(i, [])
        parts.append(block_html(b))
    return parts + slots.get(len(blocks), [])


def fragment(report: Report, charts: Sequence[Chart] = (), prefix: str = "nd", *, style: bool = True) -> str:
    """``report`` and its ``charts`` as one ``<div class="netdim">`` (style sheet included), for a notebook.

    Parameters
    ----------
    report : Report
        Any report.
    charts : sequence of Chart
        Placed in the sections whose titles they name.
    prefix : str, optional
        Prefix of the sections' element ids.
    style : bool, optional
        Include the style sheet (a page puts it in its head instead).

    Returns
    -------
    str
        The title, the caution, a list of contents, the sections and, last,
        the caution again.
    """
    titles = {s.title for s in report.sections if s.title}
    by_section: dict[str, list[Chart]] = {}
    for c in charts:
        by_section.setdefault(c.section if c.section in titles else PICTURES_TITLE, []).append(c)
    sections = list(report.sections)
    if PICTURES_TITLE in by_section:
        sections.insert(max(0, len(sections) - 1), Section(PICTURES_TITLE))
    contents, body = [], []
    for k, section in enumerate(sections):
        ident = f"{prefix}-s{k}"
        parts = _placed(section.blocks, by_section.get(section.title or "", []))
        if section.title:
            count = len(by_section.get(section.title, []))
            pictures = f" ({count} chart{'s' if count != 1 else ''})" if count else ""
            contents.append(f'<li><a href="#{ident}">{esc(section.title)}</a>{pictures}</li>')
            parts.insert(0, f"<h2>{esc(section.title)}</h2>")
        body.append(f'<section id="{ident}">\n' + "\n".join(parts) + "\n</section>")
    nav = '<nav class="contents"><ol>\n' + "\n".join(contents) + "\n</ol></nav>"
    sheet = f"<style>\n{CSS}\n</style>\n" if style else ""
    return (
        f'<div class="netdim" lang="en">\n{sheet}<header><h1>{esc(report.title)}</h1>\n'
        f'<p class="caution">{esc(CAUTION)}</p>\n{nav}\n</header>\n' + "\n".join(body)
        + f'\n<footer><p class="caution">{esc(CAUTION)}</p></footer>\n</div>'
    )


def page(report: Report, charts: Sequence[Chart] = (), prefix: str = "nd", generator: str = "netdim") -> str:
    """``report`` and its ``charts`` as a whole HTML5 document, self-contained.

    Parameters
    ----------
    report : Report
        Any report.
    charts : sequence of Chart
        Placed as :func:`fragment` does.
    prefix : str, optional
        Prefix of the sections' element ids.
    generator : str, optional
        The ``<meta name="generator">`` content (netdim and its version).

    Returns
    -------
    str
        ``<!DOCTYPE html>`` and one page ending in a newline; it loads nothing
        from anywhere (no scripts, fonts, images or style sheets outside it).
    """
    body = fragment(report, charts, prefix, style=False)
    return (
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f'<meta name="generator" content="{esc(generator)}">\n<title>{esc(report.title)}</title>\n'
        f"<style>\n{CSS}\n</style>\n</head>\n<body>\n{body}\n</body>\n</html>\n"
    )
