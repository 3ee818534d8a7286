"""A page's headings, figures and ids in document order, to check a report's structure."""

from __future__ import annotations

from html.parser import HTMLParser


class Outline(HTMLParser):
    """Headings and figures in document order, and every element's id, to check the page's structure."""

    def __init__(self) -> None:
        super().__init__()
        self.order: list[str] = []
        self.ids: list[str] = []
        self._in_heading: str | None = None

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if "id" in attrs:
            self.ids.append(attrs["id"])
        if tag in ("h1", "h2", "h3"):
            self._in_heading = tag
            self.order.append(f"{tag}:")
        elif tag in ("figure", "figcaption", "table"):
            self.order.append(tag)

    def handle_endtag(self, tag):
        if tag == self._in_heading:
            self._in_heading = None

    def handle_data(self, data):
        if self._in_heading and self.order:
            self.order[-1] += data.strip()


def outline(html: str) -> Outline:
    parser = Outline()
    parser.feed(html)
    return parser
