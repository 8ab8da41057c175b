"""Read an HTML report with the standard library's parser (a test helper).

:func:`read_page` parses a page with :class:`html.parser.HTMLParser` and
reports what the tests check: that every element is closed in order, the
charts (``<figure class="chart">``) with their titles and grid shapes, and
every reference to something outside the page (``src``, ``href``,
``xlink:href``, ``action``, ``srcset``, ``poster`` that are not ``#ids`` or
``data:``, CSS ``url(...)`` and ``@import`` of anything but ``#ids``), and
scripts.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from html.parser import HTMLParser

VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}
REFERENCES = {"src", "href", "xlink:href", "action", "srcset", "poster", "data", "formaction"}
_URL = re.compile(r"url\(\s*['\"]?(?!#)([^'\")]+)|@import", re.I)


@dataclass
class Page:
    charts: list[dict] = field(default_factory=list)
    external: list[str] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    scripts: int = 0
    text: str = ""
    ids: list[str] = field(default_factory=list)
    tags: dict[str, int] = field(default_factory=dict)

    def titles(self) -> list[str]:
        return [c["title"] for c in self.charts]


class _Reader(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.page = Page()
        self.stack: list[str] = []
        self.in_title = False
        self.in_style = False
        self.words: list[str] = []

    def _attrs(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.page.tags[tag] = self.page.tags.get(tag, 0) + 1
        for name, value in attrs:
            value = value or ""
            if name == "id":
                self.page.ids.append(value)
            if name in REFERENCES and not (value.startswith("#") or value.startswith("data:")):
                self.page.external.append(f"<{tag} {name}={value[:80]}>")
            if name == "style" and _URL.search(value):
                self.page.external.append(f"<{tag} style={value[:80]}>")
        if tag == "script":
            self.page.scripts += 1
        d = dict(attrs)
        if tag == "figure" and "chart" in (d.get("class") or ""):
            self.page.charts.append({"id": d.get("id"), "shape": d.get("data-shape"), "title": ""})
        if tag == "span" and d.get("class") == "chart-title":
            self.in_title = True

    def handle_starttag(self, tag, attrs):
        self._attrs(tag, attrs)
        if tag == "style":
            self.in_style = True
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self._attrs(tag, attrs)

    def handle_endtag(self, tag):
        if tag in VOID:
            return
        if tag == "span":
            self.in_title = False
        if tag == "style":
            self.in_style = False
        if not self.stack or self.stack[-1] != tag:
            self.page.problems.append(f"</{tag}> closes <{self.stack[-1] if self.stack else 'nothing'}>")
            if tag in self.stack:
                while self.stack and self.stack.pop() != tag:
                    pass
            return
        self.stack.pop()

    def handle_data(self, data):
        if self.in_title and self.page.charts:
            self.page.charts[-1]["title"] += data
        if self.in_style and _URL.search(data):
            self.page.external.append(f"<style> {_URL.search(data).group(0)}")
        if not self.in_style:
            self.words.append(data)


def read_page(text: str) -> Page:
    """Parse ``text`` (an HTML page or fragment) and return what the tests check."""
    reader = _Reader()
    reader.feed(text)
    reader.close()
    if reader.stack:
        reader.page.problems.append(f"never closed: {reader.stack}")
    reader.page.text = " ".join(" ".join(reader.words).split())
    return reader.page
