"""Reading the HTML reports in tests: their text, tables, sections and status badges."""

from __future__ import annotations

from html.parser import HTMLParser


class Page(HTMLParser):
    """The text of a page, its tables as rows of cell text, every tag, and the text of each section."""

    def __init__(self, html: str):
        super().__init__(convert_charrefs=True)
        self.text: list[str] = []
        self.tables: list[list[list[str]]] = []
        self.tags: set[str] = set()
        self.sections: dict[str, list[str]] = {}
        self.status_words: list[tuple[str, str]] = []  # (class, text) of every status badge
        self._cell: list[str] | None = None
        self._section: str | None = None
        self._badge: str | None = None
        self.feed(html)
        self.close()

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        self.tags.add(tag)
        if tag == "section":
            self._section = attrs.get("id")
            self.sections[self._section] = []
        elif tag == "table":
            self.tables.append([])
        elif tag == "tr" and self.tables:
            self.tables[-1].append([])
        elif tag in ("td", "th"):
            self._cell = []
        elif tag == "span" and "status" in (attrs.get("class") or "").split():
            self._badge = attrs["class"]

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self.tables[-1][-1].append(" ".join("".join(self._cell).split()))
            self._cell = None
        elif tag == "section":
            self._section = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._cell.append(data)
        if self._section is not None:
            self.sections[self._section].append(data)
        if self._badge is not None:
            self.status_words.append((self._badge, data))
            self._badge = None

    def table(self, *head: str) -> list[list[str]]:
        """Rows (without the header) of the first table whose header starts with ``head``."""
        for table in self.tables:
            if table and tuple(table[0][:len(head)]) == head:
                return table[1:]
        raise AssertionError(f"no table with header {head}")

    def section(self, name: str) -> str:
        """The text of one section, white space folded."""
        return " ".join("".join(self.sections[name]).split())
