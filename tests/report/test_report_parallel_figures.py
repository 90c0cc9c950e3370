"""Figures drawn by a pool of worker processes are the files drawn in one process (issue 13, 17).

The shared levee demo run (invented scenario, few realisations;
``tests/conftest.py``) wrote its figures in one process, PNG and SVG. The same
typed results are drawn again by two workers: the same file names, every PNG
decodes, and every file is the same byte for byte (the SVGs carry no date and
a fixed id salt). Timing is measured in ``scripts/bench_figures.py``, not here.
"""
import hashlib

import matplotlib.image as mpimg

from slipfield.slope.report.figures.catalogue import CATALOGUE
from slipfield.slope.report.render import _built_banks, render_figures


def _digests(folder):
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(folder.iterdir())}


def test_parallel_figures_are_the_serial_files(tmp_path, demo_analysis):
    case, res, out, _ = demo_analysis("levee_soft_clay.toml")
    serial = out / "figures"
    # the slice banks built in this process go with the results (the workers do not build them again)
    assert {(h, run) for h, run, _ in _built_banks(res)} >= {(h, "spatial") for h in res.spatial if res.spatial[h]}
    drawn = render_figures(case, res, tmp_path / "figures", ("png", "svg"), n_jobs=2)
    parallel = _digests(tmp_path / "figures")
    assert parallel == _digests(serial)
    pngs = sorted((tmp_path / "figures").glob("*.png"))
    assert len(pngs) == sum(d.saved for d in drawn) > 10
    for p in pngs:
        img = mpimg.imread(p)
        assert img.ndim == 3 and img.shape[0] > 50 and img.shape[1] > 50
    # the report's items come back in catalogue order (whichever worker finished first)
    entry_of = {e.group: k for k, e in enumerate(CATALOGUE)}
    assert [entry_of[d.group] for d in drawn] == sorted(entry_of[d.group] for d in drawn)
