"""The HTML report in a real browser: headless Chromium renders it without
console errors, decodes every embedded figure and shows the summary table.

Skipped when /usr/bin/chromium is missing (Debian package ``chromium``; the CI
entry point installs it). Each Chromium run takes about 1-2 s.
"""

import matplotlib.image as mpimg
import numpy as np
import pytest

from slipfield.slope.report import (
    plot_failure_map,
    plot_field_realisation,
    plot_fs_distribution,
    plot_pf_convergence,
    plot_pf_vs_theta,
    plot_risk_chart,
    plot_section,
    plot_tornado,
    plot_variance_reduction,
    write_report,
)
from support.chromium import HAVE_CHROMIUM, console_messages as _console, probe as _probe, run_chromium as _chromium

pytestmark = pytest.mark.skipif(
    not HAVE_CHROMIUM,
    reason="headless Chromium not found at /usr/bin/chromium: install the Debian package 'chromium' "
    "(apt-get install -y chromium) to run the browser check of the HTML report",
)


@pytest.fixture(scope="module")
def figures():
    rng = np.random.default_rng(5)
    ground = np.array([[0, 10], [10, 10], [30, 0], [50, 0]], float)
    surf = np.array([[5, 10], [15, 3], [25, 0.8], [32, 0]], float)
    zones = [{"name": "fill", "polygon_xy": [[0, 10], [10, 10], [30, 0], [0, 0]], "material": "sand"},
             {"name": "clay", "polygon_xy": [[0, 0], [50, 0], [50, -6], [0, -6]], "material": "soft clay"}]
    xc, yc = np.arange(0.25, 50, 0.5), np.arange(-5.75, 10, 0.5)
    field = rng.lognormal(np.log(30), 0.3, (xc.size, yc.size))
    fs = rng.lognormal(np.log(1.3), 0.18, 800)
    n = np.array([50, 100, 200, 400, 800])
    pf = np.array([cum.mean() for cum in (fs[:k] < 1 for k in n)])
    half = 1.96 * np.sqrt(np.maximum(pf * (1 - pf), 1e-4) / n)
    t = np.logspace(-2, 2, 40)
    a = 2 * t
    dens = np.zeros((50, 16))
    dens[10:30, 8:14] = 0.3
    return [
        {"figure": plot_section(None, ground, zones, [[0, 6], [50, -1]], [{"xy": surf, "fs": 1.31}]), "caption": "section"},
        {"figure": plot_field_realisation(None, xc, yc, field, surf, 1.02, "su", ground_xy=ground), "caption": "field"},
        {"figure": plot_fs_distribution(fs), "caption": "FS"},
        plot_pf_convergence(n, pf, np.clip(pf - half, 0, 1), np.clip(pf + half, 0, 1)),
        plot_tornado(["c'", "φ'"], [1.1, 1.0], [1.4, 1.6], 1.3),
        plot_pf_vs_theta([2, 8, 32, np.inf], [0.02, 0.04, 0.06, 0.08]),
        plot_variance_reduction(t, {"Markov": 2 * (a + np.exp(-a) - 1) / a**2}),
        plot_failure_map(np.linspace(0, 50, 51), np.linspace(-6, 10, 17), dens, ground, n_failed=30, n_total=800),
        plot_risk_chart([{"label": "levee", "consequence": 8, "pf": 0.04, "annual_exceedance": 0.01}],
                        [{"label": "test line", "source": "test fixture, no publication", "consequence": [1, 100],
                          "annual_probability": [1e-3, 1e-5]}]),
    ]


SUMMARY = [("minimum FS", 1.31, "-", "Bishop"), ("pf", 0.041, "-"), ("β", 1.74, "-"), ("realisations", 800, "-")]


def _report(path, figures, embed):
    sections = [{"heading": "Deterministic", "text": "Section.", "figures": figures[:2]},
                {"heading": "Reliability", "text": "Distribution, convergence, sensitivity.", "figures": figures[2:7],
                 "tables": [{"caption": "inputs", "columns": ["name", "COV"], "rows": [["c'", 0.3], ["φ'", 0.1]]}]},
                {"heading": "Failures and risk", "figures": figures[7:]}]
    return write_report(path, "Browser check", SUMMARY, sections, embed=embed)


def test_png_report_renders_every_figure_and_summary_without_console_errors(tmp_path, figures):
    page = _report(tmp_path / "report.html", figures, "png")
    info, console = _probe(tmp_path, page)
    assert console == []
    assert info["figures"] == len(figures)
    assert info["img"] == len(figures) and info["img-decoded"] == len(figures)
    assert info["summary-rows"] == len(SUMMARY)
    assert info["caution-visible"] == 1

    # Screenshot of the unmodified page, kept in the pytest tmp dir as an artefact.
    shot = tmp_path / "report-screenshot.png"
    run = _chromium(tmp_path, page, f"--screenshot={shot}", "--window-size=1200,2400")
    assert run.returncode == 0, run.stderr[-2000:]
    assert _console(run.stderr) == []
    img = mpimg.imread(shot)
    assert img.shape[0] >= 2000 and img.shape[1] >= 1000
    # Non-blank: a white page has no spread and no dark pixels; text and figures give both.
    grey = img[..., :3].mean(axis=2)
    assert grey.std() > 0.05
    assert (grey < 0.5).mean() > 0.005


def test_svg_report_lays_out_every_inline_svg(tmp_path, figures):
    page = _report(tmp_path / "report-svg.html", figures, "svg")
    info, console = _probe(tmp_path, page)
    assert console == []
    assert info["svg"] == len(figures) and info["svg-laid-out"] == len(figures)
    assert info["summary-rows"] == len(SUMMARY)


def test_checker_catches_console_errors_and_broken_images(tmp_path):
    # Negative control: the same probe and console scan must flag a page with a
    # script error and an image that cannot be decoded, or the checks above prove nothing.
    bad = tmp_path / "bad.html"
    bad.write_text('<!DOCTYPE html><html><body><figure><img alt="x" src="data:image/png;base64,AAAA"></figure>'
                   '<table id="summary-table"><tbody><tr><td>1</td></tr></tbody></table>'
                   "<script>undefinedFunction();</script></body></html>", encoding="utf-8")
    info, console = _probe(tmp_path, bad)
    assert any("Uncaught" in ln for ln in console)
    assert info["img"] == 1 and info["img-decoded"] == 0
