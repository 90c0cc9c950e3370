"""The run report printed to PDF keeps headings with what they introduce and figures whole (issue 13).

Headless Chromium prints the report of the shared levee demo run (invented
scenario, few realisations; ``tests/conftest.py``) with its print stylesheet,
as a reader's "print to PDF" does; poppler's ``pdftotext`` reads each page
back. Checked: every h2/h3 heading is printed on the same page as the first
text of its content (a paragraph, a sub-heading, its figure's caption), and
every figure image is drawn once, on one page (an image cut over two pages is
drawn on both). Skipped when Chromium or pdftotext (Debian's poppler-utils)
is missing.
"""
import subprocess

import pytest

from support.pdf import HAVE_PRINT, headings_left_alone, headings_with_content, pdf_pages, print_to_pdf

pytestmark = pytest.mark.skipif(
    not HAVE_PRINT,
    reason="printing to PDF needs /usr/bin/chromium and pdftotext: apt-get install -y chromium poppler-utils",
)


def test_heading_reader_sees_printed_text_only():
    # The reader of the check itself, on a page whose answer is known by construction.
    page = ("<h2>A</h2><p class='x'>first</p><h2>B</h2><ul class='visually-hidden'><li>hidden</li></ul>"
            "<h3>C</h3><details><summary>sum</summary><table><tr><td>body</td></tr></table></details>"
            "<h3>D</h3><details open><div>shown</div></details>")
    assert headings_with_content(page) == [("A", "first"), ("B", "C"), ("C", "sum"), ("D", "shown")]


def test_printed_report_keeps_headings_with_their_content(tmp_path, demo_run):
    page = demo_run("levee_soft_clay.toml") / "report.html"
    pdf = print_to_pdf(tmp_path, page, tmp_path / "report.pdf")
    pages = pdf_pages(pdf)
    html = page.read_text(encoding="utf-8")
    n_headings = len(headings_with_content(html))
    assert len(pages) > 1 and n_headings > 10
    assert headings_left_alone(html, pages) == []

    listed = subprocess.run(["pdfimages", "-list", str(pdf)], capture_output=True, text=True, timeout=60)
    assert listed.returncode == 0, listed.stderr
    drawn = [ln.split() for ln in listed.stdout.splitlines()[2:] if ln.split()[2:3] == ["image"]]
    assert len(drawn) == html.count("<img ")  # each figure drawn once: none cut over two pages


def test_printed_generic_report_keeps_headings_with_their_content(tmp_path):
    # The generic report (slope.report.write_report) shares the print stylesheet: many figures in few sections.
    from slipfield.slope.report import plot_pf_convergence, plot_tornado, write_report

    figs = [plot_tornado(["a", "b", "c"], [0.9, 1.1, 1.0], [1.5, 1.3, 1.4], 1.2) for _ in range(4)] + \
        [plot_pf_convergence([10, 100, 1000], [0.1, 0.08, 0.09], [0.0, 0.03, 0.07], [0.4, 0.15, 0.11])
         for _ in range(4)]
    sections = [{"heading": f"Part {i}", "text": f"What part {i} shows.", "figures": figs[2 * i:2 * i + 2],
                 "tables": [{"caption": f"values {i}", "columns": ["name", "value"],
                             "rows": [[f"v{k}", k] for k in range(12)]}]} for i in range(4)]
    page = write_report(tmp_path / "report.html", "Print check", [("pf", 0.04, "-")], sections)
    pages = pdf_pages(print_to_pdf(tmp_path, page, tmp_path / "report.pdf"))
    assert len(pages) > 2
    assert headings_left_alone(page.read_text(encoding="utf-8"), pages) == []
