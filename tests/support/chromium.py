"""Headless Chromium for the report checks: one way to drive it, shared by the report tests.

Chromium is Debian's package ``chromium`` (the CI entry point installs it); the
flags keep it off the network, which this machine does not have.
"""
import os
import re
import subprocess

CHROMIUM = "/usr/bin/chromium"
HAVE_CHROMIUM = os.path.exists(CHROMIUM)

# Read-only probe injected into a copy of the page: it records, after the load
# event, how many figures, images and inline SVGs the browser actually decoded
# and laid out, and how many rows the summary table shows.
PROBE = """<script>
window.addEventListener("load", function () {
  var imgs = Array.prototype.slice.call(document.images);
  var svgs = Array.prototype.slice.call(document.querySelectorAll("figure svg"));
  var d = document.createElement("div");
  d.id = "probe";
  d.setAttribute("data-figures", document.querySelectorAll("figure").length);
  d.setAttribute("data-img", imgs.length);
  d.setAttribute("data-img-decoded", imgs.filter(function (i) {
    return i.complete && i.naturalWidth > 0 && i.getBoundingClientRect().width > 0; }).length);
  d.setAttribute("data-svg", svgs.length);
  d.setAttribute("data-svg-laid-out", svgs.filter(function (s) {
    var r = s.getBoundingClientRect(); return r.width > 0 && r.height > 0; }).length);
  d.setAttribute("data-summary-rows", document.querySelectorAll("#summary-table tbody tr").length);
  var c = document.querySelector(".caution");
  d.setAttribute("data-caution-visible", c && c.getBoundingClientRect().height > 0 ? 1 : 0);
  document.body.appendChild(d);
});
</script>"""

FLAGS = [
    "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
    "--disable-background-networking", "--disable-component-update", "--disable-sync",
    "--enable-logging=stderr", "--v=0", "--hide-scrollbars",
    # Lets the load event and image decoding finish before the DOM is dumped.
    "--virtual-time-budget=5000",
]


def run_chromium(tmp_path, page, *extra):
    profile = tmp_path / f"profile-{page.stem}-{len(extra)}"
    cmd = [CHROMIUM, *FLAGS, f"--user-data-dir={profile}", *extra, page.resolve().as_uri()]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=60)


def console_messages(stderr):
    """Console messages the page produced (our report has no script, so any is a fault)."""
    return [ln for ln in stderr.splitlines() if re.search(r":CONSOLE[(:\]]", ln) or "Uncaught" in ln]


def probe(tmp_path, page):
    probed = tmp_path / f"probe-{page.name}"
    probed.write_text(page.read_text(encoding="utf-8").replace("</body>", PROBE + "</body>"), encoding="utf-8")
    run = run_chromium(tmp_path, probed, "--dump-dom")
    assert run.returncode == 0, run.stderr[-2000:]
    m = re.search(r'<div id="probe"([^>]*)>', run.stdout)
    assert m, "probe did not run: the page did not finish loading\n" + run.stderr[-2000:]
    attrs = dict(re.findall(r'data-([a-z-]+)="([^"]*)"', m.group(1)))
    return {k: int(v) for k, v in attrs.items()}, console_messages(run.stderr)
