"""The self-contained HTML report, figure files and CSV tables."""
import base64
import csv
import io
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import numpy as np
import pytest
from matplotlib.figure import Figure

from slipfield.slope.errors import InputError
from slipfield.slope.report import (
    CAUTION,
    format_value,
    plot_pf_convergence,
    plot_tornado,
    render_report,
    save_figure,
    write_csv,
    write_report,
)


class _Collect(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags = []
        self.text = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))

    def handle_data(self, data):
        self.text.append(data)


def _parse(text):
    p = _Collect()
    p.feed(text)
    return p


def _figs():
    f1 = plot_tornado(["a", "b"], [0.9, 1.1], [1.5, 1.3], 1.2)
    f2 = plot_pf_convergence([10, 100, 1000], [0.1, 0.08, 0.09], [0.0, 0.03, 0.07], [0.4, 0.15, 0.11])
    return f1, f2


SUMMARY = [("minimum FS, Bishop", 1.2345678, "-", "drained"), {"quantity": "pf", "value": 0.0123, "unit": "-"},
           ("realisations", 2000, "-")]


def _sections(figs):
    return [
        {"heading": "Sensitivity", "text": "Tornado chart.\n\nSecond <paragraph> & more.",
         "figures": [{"figure": figs[0], "caption": "FS with each input at mean ± σ", "alt": "tornado"}],
         "tables": [{"caption": "inputs", "columns": ["name", "mean"], "rows": [["c'", 5.0], ["φ'", 28.0]]}]},
        {"heading": "Simulation", "figures": [figs[1]]},
    ]


def test_report_is_self_contained_with_every_figure_and_the_summary(tmp_path):
    figs = _figs()
    out = write_report(tmp_path / "out" / "report.html", "Levee <A> & B", SUMMARY, _sections(figs),
                       meta={"case": "levee.toml", "seed": 42})
    text = out.read_text(encoding="utf-8")
    doc = _parse(text)
    imgs = [a for t, a in doc.tags if t == "img"]
    assert len(imgs) == 2
    for a in imgs:
        m = re.fullmatch(r"data:image/png;base64,([A-Za-z0-9+/=]+)", a["src"])
        assert m, "figure must be embedded as a data URI"
        assert base64.b64decode(m.group(1))[:8] == b"\x89PNG\r\n\x1a\n"
        assert a["alt"]
    # No external resources at all: no link/script elements, no src/href leaving the page.
    assert not [t for t, _ in doc.tags if t in ("link", "script", "iframe", "object")]
    for t, a in doc.tags:
        for key in ("src", "href"):
            if key in a:
                assert a[key].startswith(("data:", "#")), (t, a)
    body = "".join(doc.text)
    # Escaped title, paragraph text, the caution, summary values formatted to 4 significant figures.
    assert "Levee <A> & B" in body and "<A>" not in text.replace("&lt;A&gt;", "")
    assert "Second <paragraph> & more." in body
    assert CAUTION in body
    assert "1.235" in body and "0.0123" in body and "2000" in body
    assert "Figure 1. FS with each input at mean ± σ" in body and "Figure 2." in body
    assert "Table 1. Summary of results" in body and "Table 2. inputs" in body
    summary_rows = re.search(r'<table id="summary-table">.*?</table>', text, re.S).group(0).count("<tr>") - 1
    assert summary_rows == len(SUMMARY)
    assert not list(out.parent.glob(".*.part"))


def test_report_svg_embedding(tmp_path):
    figs = _figs()
    text = render_report("t", SUMMARY, _sections(figs), embed="svg")
    assert text.count("<svg") == 2
    assert "<?xml" not in text and "<!DOCTYPE svg" not in text


def test_report_embeds_saved_files(tmp_path):
    figs = _figs()
    paths = save_figure(figs[0], tmp_path, "tornado")
    text = render_report("t", SUMMARY, [{"heading": "files", "figures": [paths["png"], {"figure": paths["svg"]}]}])
    assert text.count("data:image/png;base64,") == 1 and text.count("<svg") == 1
    with pytest.raises(InputError, match="does not exist"):
        render_report("t", SUMMARY, [{"heading": "x", "figures": [tmp_path / "missing.png"]}])


def test_failed_report_leaves_previous_file_intact(tmp_path):
    path = tmp_path / "report.html"
    write_report(path, "first", SUMMARY)
    before = path.read_bytes()
    with pytest.raises(InputError, match=r"sections\[0\]"):
        write_report(path, "second", SUMMARY, [{"text": "no heading"}])
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["report.html"]
    with pytest.raises(InputError, match="caution"):
        write_report(path, "x", SUMMARY, caution="")
    with pytest.raises(InputError, match="summary row 1"):
        write_report(path, "x", [("only two", 1)])


def test_save_figure_writes_png_and_valid_svg(tmp_path):
    fig = _figs()[0]
    paths = save_figure(fig, tmp_path / "figs", "tornado")
    assert paths["png"].read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    root = ET.fromstring(paths["svg"].read_bytes())
    assert root.tag.endswith("svg")
    assert sorted(p.name for p in (tmp_path / "figs").iterdir()) == ["tornado.png", "tornado.svg"]
    with pytest.raises(InputError, match="stem"):
        save_figure(fig, tmp_path, "../escape")
    with pytest.raises(InputError, match="Figure"):
        save_figure("not a figure", tmp_path, "x")


def test_save_figure_failure_leaves_no_partial_file(tmp_path):
    class Broken(Figure):
        def savefig(self, *a, **k):
            raise RuntimeError("disk full (simulated)")

    with pytest.raises(RuntimeError):
        save_figure(Broken(), tmp_path, "x")
    assert list(tmp_path.iterdir()) == []


def test_format_value():
    assert format_value(1.23456789) == "1.235"
    assert format_value(0.000123456) == "0.0001235"
    assert format_value(1.2e-7) == "1.2e-07"
    assert format_value(np.inf) == "∞" and format_value(None) == "—" and format_value(np.nan) == "—"
    assert format_value(np.int64(7)) == "7" and format_value(True) == "yes"


def test_csv_round_trip_full_precision(tmp_path):
    rows = [["bishop", 1 / 3, 10, None, True], ["spencer", np.float64(2.0) / 7, 0, np.inf, False],
            ["janbu", float("nan"), np.int64(3), -np.inf, np.bool_(True)]]
    path = write_csv(tmp_path / "fs.csv", ["method", "FS (-)", "n", "pf (-)", "converged"], rows)
    got = list(csv.reader(io.StringIO(path.read_text())))
    assert got[0] == ["method", "FS (-)", "n", "pf (-)", "converged"]
    assert float(got[1][1]) == 1 / 3 and float(got[2][1]) == 2.0 / 7  # exact float round trip
    assert got[1][3] == "" and got[2][3] == "inf" and got[1][4] == "true"
    assert got[3][1:] == ["nan", "3", "-inf", "true"]
    with pytest.raises(InputError, match="row 1"):
        write_csv(tmp_path / "bad.csv", ["a", "b"], [[1]])
    assert not (tmp_path / "bad.csv").exists()


def test_generic_report_uses_the_run_reports_one_stylesheet(tmp_path):
    # Issue 13: every page from templates with one stylesheet and one print stylesheet; the generic report
    # had its own CSS string. Read the stylesheets from the package's templates folder, not from the code.
    import slipfield.slope.report as report_pkg
    from pathlib import Path

    templates = Path(report_pkg.__file__).resolve().parent / "templates"
    text = render_report("t", SUMMARY, _sections(_figs()))
    styles = re.findall(r"<style( media=\"print\")?>(.*?)</style>", text, re.S)
    assert [(m, s) for m, s in styles] == [("", (templates / "report.css").read_text(encoding="utf-8")),
                                           (' media="print"', (templates / "print.css").read_text(encoding="utf-8"))]
    # case text never becomes markup, in headings, paragraphs, captions and table cells alike
    evil = "<b>x</b>"
    text = render_report(evil, [(evil, 1.0, evil)], [{"heading": evil, "text": evil, "figures": [
        {"figure": _figs()[0], "caption": evil}], "tables": [{"caption": evil, "columns": [evil], "rows": [[evil]]}]}])
    assert "<b>" not in text and text.count("&lt;b&gt;x&lt;/b&gt;") >= 8
