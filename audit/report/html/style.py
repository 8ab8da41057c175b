"""The style sheet of the HTML report: one block of CSS, every rule under ``.netdim``.

Scoped to the report's own element so that a notebook showing a result keeps
its own look; no web fonts, no images, nothing fetched. Tones and marks are
told apart by weight and style as well as colour, so a grey-scale print
keeps them apart.
"""

from __future__ import annotations

__all__ = ["CSS"]

CSS = """
.netdim { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif;
  color: #1b1b1b; background: #fff; line-height: 1.45; max-width: 64rem; margin: 0 auto;
  padding: 1rem 1.25rem 3rem; }
.netdim h1 { font-size: 1.5rem; margin: .3rem 0 .5rem; }
.netdim h2 { font-size: 1.2rem; margin: 2.2rem 0 .6rem; padding-bottom: .2rem; border-bottom: 1px solid #b5b5b5; }
.netdim h3 { font-size: 1rem; margin: 1.3rem 0 .4rem; }
.netdim p { margin: .4rem 0; }
.netdim .caution { border-left: 4px solid #1b1b1b; background: #f1f1f1; padding: .5rem .8rem;
  font-style: italic; }
.netdim nav.contents { font-size: .9rem; }
.netdim nav.contents ol { margin: .2rem 0; padding-left: 1.4rem; columns: 2; }
.netdim nav.contents a { color: #1b1b1b; }
.netdim dl.fields { display: grid; grid-template-columns: max-content 1fr; gap: .15rem 1.1rem; margin: .4rem 0; }
.netdim dl.fields dt { font-weight: 600; }
.netdim dl.fields dd { margin: 0; }
.netdim dl.fields ul { margin: .1rem 0; padding-left: 1.1rem; }
.netdim .table-wrap { overflow-x: auto; margin: .4rem 0; }
.netdim table { border-collapse: collapse; font-size: .9rem; font-variant-numeric: tabular-nums; }
.netdim th, .netdim td { padding: .18rem .5rem; border-bottom: 1px solid #dcdcdc; text-align: left;
  vertical-align: top; }
.netdim thead th { border-bottom: 2px solid #1b1b1b; vertical-align: bottom; }
.netdim .num { text-align: right; white-space: nowrap; }
.netdim .name { white-space: nowrap; font-weight: 500; }
.netdim td.bar { min-width: 7rem; }
.netdim span.bar { display: inline-block; height: .7rem; background: #1b1b1b; vertical-align: middle; }
.netdim details > summary { cursor: pointer; color: #333; margin: .3rem 0; }
.netdim .tone-strong { font-weight: 700; }
.netdim .tone-muted, .netdim .note { color: #555; }
.netdim .note { font-size: .9rem; font-style: italic; }
.netdim .tone-alert { color: #9b0000; font-weight: 700; text-decoration: underline; }
.netdim .tone-warning { color: #6b4400; font-style: italic; }
.netdim ul.findings { padding-left: 1.2rem; }
.netdim ul.findings li { margin: .45rem 0; }
.netdim pre.command { background: #f3f3f3; border: 1px solid #dedede; padding: .35rem .6rem; margin: .3rem 0;
  overflow-x: auto; font-size: .85rem; }
.netdim figure.chart { margin: 1rem 0 1.6rem; }
.netdim figure.chart figcaption { margin-bottom: .3rem; }
.netdim .chart-title { font-weight: 700; font-size: .98rem; }
.netdim .chart-note { font-size: .88rem; color: #333; max-width: 52rem; }
.netdim svg.chart-image { width: 100%; height: auto; display: block; }
.netdim svg.chart-image * { stroke-linejoin: round; stroke-linecap: butt; }
.netdim footer { margin-top: 2.5rem; font-size: .85rem; color: #444; }
@media print {
  .netdim nav.contents { display: none; }
  .netdim figure.chart, .netdim table { break-inside: avoid; }
}
""".strip()
