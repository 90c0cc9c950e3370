"""Print a page to PDF with headless Chromium and read it back per page with ``pdftotext`` (poppler-utils).

The check this serves: in the printed report no heading is the last thing on
its page. For every ``<h2>``/``<h3>`` the first text that follows it in the
page (its section's content: a paragraph, a table caption, a figure's
caption, a sub-heading) must be printed on the same page as the heading.
Figures are kept whole by the print stylesheet (``break-inside: avoid``), so a
figure's caption on the heading's page means the image is there too: Chromium
never splits an image across pages unless it is taller than a page, and then
its caption would land on a later page than its heading.
"""
import re
import shutil
import subprocess
import unicodedata
from html.parser import HTMLParser

from .chromium import CHROMIUM, HAVE_CHROMIUM

HAVE_PDFTOTEXT = shutil.which("pdftotext") is not None and shutil.which("pdfimages") is not None
HAVE_PRINT = HAVE_CHROMIUM and HAVE_PDFTOTEXT


def print_to_pdf(tmp_path, page, pdf):
    """``page`` (an HTML file) printed to ``pdf`` by headless Chromium, no header or footer."""
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--no-pdf-header-footer",
           f"--user-data-dir={tmp_path / ('profile-pdf-' + page.stem)}", f"--print-to-pdf={pdf}",
           page.resolve().as_uri()]
    run = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    assert run.returncode == 0 and pdf.exists(), run.stderr[-2000:]
    return pdf


def _norm(text):
    # NFKC folds the ligatures a PDF font may use ("ﬁ" → "fi"); whitespace and line breaks do not count.
    return re.sub(r"\s+", "", unicodedata.normalize("NFKC", text))


def pdf_pages(pdf):
    """The text of each page of ``pdf``, whitespace removed (pdftotext, content-stream order)."""
    out = subprocess.run(["pdftotext", "-raw", str(pdf), "-"], capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    pages = out.stdout.split("\f")
    if pages and not pages[-1].strip():
        pages = pages[:-1]
    return [_norm(p) for p in pages]


class _Headings(HTMLParser):
    """Each h2/h3 of the page with the first printed text after it (hidden elements and scripts skipped)."""

    SKIP = {"script", "style", "title"}
    VOID = {"img", "br", "hr", "meta", "link", "input", "source", "wbr"}

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack = []       # open elements: (tag, hidden, closed <details>)
        self.items = []       # [heading text, first following text or None]
        self.heading = None   # text of the heading being read

    def _hidden(self):
        if any(h for _, h, _ in self.stack):
            return True
        # The body of a closed <details> is not printed, its <summary> line is.
        closed = [i for i, (_, _, c) in enumerate(self.stack) if c]
        return bool(closed) and not any(t == "summary" for t, _, _ in self.stack[closed[-1]:])

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        hidden = tag in self.SKIP or "visually-hidden" in (a.get("class") or "").split() or "hidden" in a
        if tag not in self.VOID:
            self.stack.append((tag, hidden, tag == "details" and "open" not in a))
        if tag in ("h2", "h3") and not self._hidden():
            self.heading = ""

    def handle_endtag(self, tag):
        if any(t == tag for t, _, _ in self.stack):
            while self.stack.pop()[0] != tag:
                pass
        if tag in ("h2", "h3") and self.heading is not None:
            self.items.append([self.heading, None])
            self.heading = None

    def handle_data(self, data):
        if self._hidden() or not data.strip():
            return
        for item in self.items:  # a sub-heading is the start of its parent heading's content
            if item[1] is None:
                item[1] = data
        if self.heading is not None:
            self.heading += data


def headings_with_content(html_text):
    """``[(heading, first text after it)]`` of every h2/h3, in page order."""
    p = _Headings()
    p.feed(html_text)
    return [(h, c) for h, c in p.items]


def headings_left_alone(html_text, pages):
    """Headings printed on a different page from the start of their content.

    Parameters
    ----------
    html_text : str
        The printed page's HTML.
    pages : list of str
        :func:`pdf_pages` of its PDF.

    Returns
    -------
    list of str
        One line per fault: the heading, its page and where its content starts
        (or that a heading or its content is not found in the PDF).
    """
    starts, text = [], ""
    for p in pages:
        starts.append(len(text))
        text += p

    def page_of(pos):
        return max(i for i, s in enumerate(starts) if s <= pos) + 1

    faults, cursor = [], 0
    for heading, content in headings_with_content(html_text):
        h = _norm(heading)
        first = text.find(h, cursor)
        if first < 0:
            faults.append(f"heading {heading.strip()!r} not found in the PDF")
            continue
        if content is None:
            faults.append(f"heading {heading.strip()!r} (page {page_of(first)}) has no content after it")
            cursor = first + len(h)
            continue
        c = _norm(content)[:40]
        ct = text.find(c, first + len(h))
        if ct < 0:
            faults.append(f"content {content.strip()[:40]!r} after heading {heading.strip()!r} not found in the PDF")
            cursor = first + len(h)
            continue
        # The heading's last occurrence before its content: a table of contents may print it earlier.
        at = text.rfind(h, first, ct)
        cursor = at + len(h)
        if page_of(ct) != page_of(at):
            faults.append(f"heading {heading.strip()!r} on page {page_of(at)}, its content "
                          f"{content.strip()[:40]!r} on page {page_of(ct)}")
    return faults
