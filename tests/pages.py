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


BROWSER_SECONDS = 120
# Measures, in a real browser at a window of the given width, every chart text's size on screen:
# its font size times the scale its SVG is drawn at (every <details> opened first, so all are drawn).
_MEASURE = """<script>
window.addEventListener('load', () => {
  for (const d of document.querySelectorAll('details')) d.open = true;
  let low = 1e9, where = '';
  for (const t of document.querySelectorAll('svg text')) {
    const m = t.getScreenCTM();
    const size = parseFloat(getComputedStyle(t).fontSize) * Math.hypot(m.a, m.b);
    if (size < low) { low = size; where = t.textContent; }
  }
  document.body.setAttribute('data-smallest', low.toFixed(3) + '|' + where);
});
</script>"""


def smallest_chart_text(html: str, folder, *, window_width: int = 1280) -> tuple[float, str]:
    """Return the smallest on-screen size, in px, of any chart text of a page in Chromium, and that text.

    Skips the test when no Chromium is installed (``make system-deps`` installs it).
    """
    import re
    import shutil
    import subprocess

    import pytest

    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    if browser is None:
        pytest.skip("no chromium on PATH; `make system-deps` installs it")
    page = folder / "measured.html"
    page.write_text(html.replace("</body>", _MEASURE + "</body>"), encoding="utf-8")
    done = subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                           f"--user-data-dir={folder / 'profile'}", f"--window-size={window_width},1000", "--dump-dom",
                           page.as_uri()], capture_output=True, text=True, timeout=BROWSER_SECONDS)
    found = re.search(r'data-smallest="([0-9.]+)\|([^"]*)"', done.stdout)
    assert found, done.stderr[-2000:]
    return float(found.group(1)), found.group(2)


def headings_at_page_foot(html: str, folder) -> list[str]:
    """Print a page to PDF with Chromium and return every heading (h2 to h4) that is the last line of a printed page.

    The PDF's text is read with pypdf; skips the test without Chromium.
    """
    import html as markup
    import re
    import shutil
    import subprocess

    import pytest
    from pypdf import PdfReader

    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    if browser is None:
        pytest.skip("no chromium on PATH; `make system-deps` installs it")
    page, pdf = folder / "printed.html", folder / "printed.pdf"
    page.write_text(html, encoding="utf-8")
    done = subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                           f"--user-data-dir={folder / 'profile-pdf'}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                           page.as_uri()], capture_output=True, text=True, timeout=BROWSER_SECONDS)
    assert pdf.is_file(), done.stderr[-2000:]
    headings = {markup.unescape(re.sub(r"<[^>]+>", "", text)).strip()
                for text in re.findall(r"<h[234][^>]*>(.*?)</h[234]>", html, flags=re.S)}
    alone = []
    for printed in PdfReader(pdf).pages:
        lines = [line.strip() for line in printed.extract_text().splitlines() if line.strip()]
        if lines and lines[-1] in headings:
            alone.append(lines[-1])
    return alone
