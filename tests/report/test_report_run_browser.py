"""The report written by ``run_case`` in a real browser.

Headless Chromium opens ``report.html`` of a demo run (invented scenario, few
realisations): no console messages, every figure decoded and laid out (one
``<img>`` per PNG in ``figures/``, natural width > 0), the summary table and
the caution shown, and the figures the report must carry (field
realisations with their critical surfaces, failure map, failure geometry).

A screenshot of the page is kept as an artefact: ``report_screenshot.png`` in
the folder named by the environment variable ``SLIPFIELD_ARTEFACTS``, else
``tests/artefacts/`` (ignored by git through its own ``.gitignore``); the path
is printed. Skipped when /usr/bin/chromium is missing.
"""
import json
import os
import re
from pathlib import Path

import matplotlib.image as mpimg
import pytest

from support.chromium import HAVE_CHROMIUM, console_messages as _console, probe as _probe, run_chromium as _chromium

pytestmark = pytest.mark.skipif(
    not HAVE_CHROMIUM,
    reason="headless Chromium not found at /usr/bin/chromium: install the Debian package 'chromium' "
    "(apt-get install -y chromium) to run the browser check of the run report",
)

ROOT = Path(__file__).resolve().parents[2]
ARTEFACTS = Path(os.environ.get("SLIPFIELD_ARTEFACTS") or ROOT / "tests" / "artefacts")


@pytest.fixture(scope="module")
def run_output(demo_run):
    return demo_run("levee_soft_clay.toml")


def test_run_report_renders_every_figure_and_the_summary(tmp_path, run_output):
    page = run_output / "report.html"
    html = page.read_text(encoding="utf-8")
    n_png = len(list((run_output / "figures").glob("*.png")))
    summary = re.search(r'<table id="summary-table".*?<tbody>(.*?)</tbody>', html, re.S)
    assert summary, "no summary table in report.html"
    n_rows = summary.group(1).count("<tr")

    info, console = _probe(tmp_path, page)
    assert console == []
    assert info["figures"] == n_png and info["img"] == n_png
    assert info["img-decoded"] == n_png  # complete, naturalWidth > 0 and laid out
    assert info["summary-rows"] == n_rows > 5
    assert info["caution-visible"] == 1

    res = json.loads((run_output / "results.json").read_text(encoding="utf-8"))
    for hyp, sim in res["spatial_simulation"].items():
        if sim is None:
            continue
        assert f"Failure map: where the critical surfaces of failed realisations lie, {hyp}" in html
        assert f"Random field" in html and f", {hyp}</figcaption>" in html
        if sim["spatial"]["failure_geometry"]["n_failed"]:
            assert f"Failure geometry: sliding-mass area and greatest depth of the failed critical surfaces, {hyp}" in html

    ARTEFACTS.mkdir(parents=True, exist_ok=True)
    shot = ARTEFACTS / "report_screenshot.png"
    run = _chromium(tmp_path, page, f"--screenshot={shot}", "--window-size=1200,3000")
    assert run.returncode == 0, run.stderr[-2000:]
    assert _console(run.stderr) == []
    print(f"report screenshot: {shot}")
    img = mpimg.imread(shot)
    assert img.shape[0] >= 2500 and img.shape[1] >= 1000
    # Non-blank: a white page has no spread and no dark pixels; text and figures give both.
    grey = img[..., :3].mean(axis=2)
    assert grey.std() > 0.05 and (grey < 0.5).mean() > 0.005
