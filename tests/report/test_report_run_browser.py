"""The report written by ``slipfield run`` in a real browser, for each demo case.

Headless Chromium opens ``report.html`` of each demo run (invented scenarios,
few realisations; one shared run per demo, ``tests/conftest.py``) and a probe
script reports what the page shows: no console messages; every figure
decoded and laid out (one ``<img>`` per PNG in ``figures/``); the caution
shown; the comparison table with a row per analysis run (every method of
slices asked for, every single-variable method, the spatial estimates) and a
column per hypothesis; the inputs table listing every ``[[random]]`` entry;
the section figure's legend naming every water line of the case.

A screenshot of each page is kept as an artefact in the folder named by the
environment variable ``SLIPFIELD_ARTEFACTS``, else ``tests/artefacts/``
(ignored by git). Skipped when /usr/bin/chromium is missing.
"""
import json
import os
import re
from pathlib import Path

import matplotlib.image as mpimg
import pytest

from support.chromium import HAVE_CHROMIUM, console_messages as _console, run_chromium as _chromium

pytestmark = pytest.mark.skipif(
    not HAVE_CHROMIUM,
    reason="headless Chromium not found at /usr/bin/chromium: install the Debian package 'chromium' "
    "(apt-get install -y chromium) to run the browser check of the run report",
)

ROOT = Path(__file__).resolve().parents[2]
ARTEFACTS = Path(os.environ.get("SLIPFIELD_ARTEFACTS") or ROOT / "tests" / "artefacts")
# Read-only probe appended to a copy of the page: after the load event it writes what the browser
# decoded and laid out as JSON into a <pre id="probe">, read back from the dumped DOM.
PROBE = """<script>
window.addEventListener("load", function () {
  var imgs = Array.prototype.slice.call(document.images);
  var text = function (e) { return e.textContent.trim(); };
  var randomTable = Array.prototype.slice.call(document.querySelectorAll("#inputs table")).filter(
    function (t) { return t.caption && t.caption.textContent.indexOf("Random properties") >= 0; })[0];
  var c = document.querySelector(".caution");
  var out = {
    img: imgs.length,
    decoded: imgs.filter(function (i) {
      return i.complete && i.naturalWidth > 0 && i.getBoundingClientRect().width > 0; }).length,
    hypotheses: Array.prototype.map.call(document.querySelectorAll("#comparison-table th[data-hypothesis]"),
      function (e) { return e.getAttribute("data-hypothesis"); }),
    rows: Array.prototype.map.call(document.querySelectorAll("#comparison-table tbody tr"),
      function (e) { return e.getAttribute("data-row"); }),
    cellsPerRow: Array.prototype.map.call(document.querySelectorAll("#comparison-table tbody tr"),
      function (e) { return e.querySelectorAll("td").length; }),
    randoms: randomTable ? Array.prototype.map.call(randomTable.querySelectorAll("tbody tr td:first-child"), text) : [],
    legend: Array.prototype.map.call(document.querySelectorAll("#section .figure-legend li"), text),
    caution: c && c.getBoundingClientRect().height > 0 ? 1 : 0
  };
  var d = document.createElement("pre");
  d.id = "probe";
  d.textContent = JSON.stringify(out);
  document.body.appendChild(d);
});
</script>"""




def _probe(tmp_path, page):
    probed = tmp_path / f"probe-{page.name}"
    probed.write_text(page.read_text(encoding="utf-8").replace("</body>", PROBE + "</body>"), encoding="utf-8")
    run = _chromium(tmp_path, probed, "--dump-dom")
    assert run.returncode == 0, run.stderr[-2000:]
    m = re.search(r'<pre id="probe">(.*?)</pre>', run.stdout, re.S)
    assert m, "probe did not run: the page did not finish loading\n" + run.stderr[-2000:]
    return json.loads(m.group(1).replace("&quot;", '"').replace("&amp;", "&").replace("&lt;", "<")
                      .replace("&gt;", ">")), _console(run.stderr)


@pytest.mark.parametrize("name", ["levee_soft_clay.toml", "cut_residual_soil.toml", "dam_layered_foundation.toml"])
def test_run_report_in_the_browser(tmp_path, demo_analysis, name):
    case, res, out, doc = demo_analysis(name)
    page = out / "report.html"
    n_png = len(list((out / "figures").glob("*.png")))
    info, console = _probe(tmp_path, page)
    assert console == []
    assert info["img"] == n_png and info["decoded"] == n_png  # complete, naturalWidth > 0 and laid out
    assert info["caution"] == 1

    # comparison: a column per hypothesis, a row per analysis run, every row one cell per hypothesis × quantity
    hyps = case.analysis["hypotheses"]
    assert info["hypotheses"] == hyps
    rows = info["rows"]
    for m in dict.fromkeys([case.analysis["method"], *case.analysis["methods"]]):
        assert f"{m}, deterministic FS" in rows
    for label in ("spatial simulation, critical surface re-searched", "spatial simulation, fixed deterministic "
                  "surface", "θ → ∞ simulation (single variables), re-searched"):
        assert label in rows
    sv_methods = set(case.data["reliability"]["methods"])
    if "monte-carlo" in sv_methods:
        assert "Monte Carlo, single random variables" in rows
    if "point-estimate" in sv_methods:
        assert {"point estimates, pf of a normal FS", "point estimates, pf of a lognormal FS"} <= set(rows)
    if "form" in sv_methods:
        assert any(r.startswith("FORM") for r in rows)
    assert len(rows) == len(set(rows))
    assert set(info["cellsPerRow"]) == {5 * len(hyps)}

    # inputs: every [[random]] entry, in order
    assert info["randoms"] == [f"{r['material']}.{r['property']}" for r in case.randoms]

    # section legend: every water line of the case
    water = case.data.get("water", {})
    expected = (["phreatic surface"] if "phreatic" in water else []) + \
        [f"piezometric line, zone {p['zone']}" for p in water.get("piezometric", [])]
    for line in expected:
        assert line in info["legend"], (line, info["legend"])

    ARTEFACTS.mkdir(parents=True, exist_ok=True)
    shot = ARTEFACTS / f"report_{Path(name).stem}.png"
    run = _chromium(tmp_path, page, f"--screenshot={shot}", "--window-size=1200,3000")
    assert run.returncode == 0, run.stderr[-2000:]
    assert _console(run.stderr) == []
    print(f"report screenshot: {shot}")
    img = mpimg.imread(shot)
    # Non-blank: a white page has no spread and no dark pixels; text and figures give both.
    grey = img[..., :3].mean(axis=2)
    assert grey.std() > 0.05 and (grey < 0.5).mean() > 0.005
