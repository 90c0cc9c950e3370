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


def test_figure_workers_get_the_results_without_the_simulation_caches(demo_analysis):
    # What the workers read leaves out the problems' stencils and strength maps and the case's kept
    # searches (no figure reads them; the file was 46 MB with them on the levee demo); this process's
    # objects keep theirs. The files drawn from it are the serial ones (test above).
    import pickle

    from slipfield.slope.report.render import _problems, _ship_for_figures
    from slipfield.slope.simulate.executors import _unship

    case, res, _, _ = demo_analysis("levee_soft_clay.toml")
    here = [p for _, _, p in _problems(res)]
    assert here and all(p._stencil is not None and p.__dict__.get("_strength_map") is not None for p in here)
    assert "trial_surfaces" in case.extras
    path = _ship_for_figures((case, res, _built_banks(res)))
    try:
        with open(path, "rb") as fh:
            case2, res2, banks = pickle.load(fh)
    finally:
        _unship(path)
    shipped = [p for _, _, p in _problems(res2)]
    assert len(shipped) == len(here)
    assert all(p._stencil is None and p._terms is None and p.__dict__.get("_strength_map") is None for p in shipped)
    assert all(p._bank is not None for p in shipped)  # the slice banks go along (drawn surfaces)
    assert "trial_surfaces" not in case2.extras and case2.section.ground.tolist() == case.section.ground.tolist()
    # one object referenced from several places is still one object
    sp = res2.spatial["undrained"].spatial
    assert sp.result.problem is sp.problem
    assert here[0]._stencil is not None and "trial_surfaces" in case.extras  # this process's copies untouched
