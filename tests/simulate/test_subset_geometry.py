"""Subset simulation with the per-realisation search: failures measured on the surfaces that governed them.

A sample whose FS the free search lowered is governed by the search's own
polyline, not by the bank circle it started from (issue 15). Monte Carlo
measures such failures on the polyline; subset simulation must too, which
means carrying the polyline along its Markov chains and through its level
checkpoints.

Checks against closed forms: the area between the ground and a polyline
whose ends lie on the ground is the area of the simple polygon they bound,
by the shoelace (surveyor's) formula A = ½ |Σ (x_i y_{i+1} − x_{i+1} y_i)|
(Braden 1986, "The surveyor's area formula", College Mathematics Journal
17(4): 326–337; recalled); the greatest depth of a polyline under a polyline
ground is reached at a vertex of one of them. And against the simulator
itself: a failure's polyline is the one the search finds again when the
sample's standard-normal input, rebuilt from its chain, is evaluated anew.
"""
import json

import numpy as np
import pytest

from slipfield.slope.errors import InputError
from slipfield.slope.simulate import RefineSettings
from slipfield.slope.simulate.driver import SEARCHED_VERTICES, _run_block
from slipfield.slope.simulate.failure_geometry import sliding_mass_geometry
from slipfield.slope.simulate.rare import GivenNoise, NoiseLayout, SubsetSettings, subset_simulate

from support.geometry import interrupted_after_saves, shoelace_and_depth
from support.problems import gf_problem

SEED = 5
# p0 = 0.5 with 20 samples per level: 10 chains of 2 states, so the run is short and has several levels
SETTINGS = SubsetSettings(0.5, 20)
FAMILY = "dynamic-programming (per realisation)"


def _search():
    # dynamic programming (Baker 1980) on grids of 8 columns: every path has fewer bends than the
    # problem's 20 slices, so each bend is a slice side and Simpson's rule on the slices is exact
    return RefineSettings(below=1.2, search="dynamic-programming", columns=8, passes=1)


def _problem():
    # Griffiths & Fenton (2004) slope, weaker than published (C = 0.22): level 0 has a few failures, the
    # chains reach FS < 1 after three levels, and the search lowers most of the samples near failure
    return gf_problem(5.0, 0.5, mean_c=0.22)[0]


@pytest.fixture(scope="module")
def run():
    return subset_simulate(_problem(), SETTINGS, SEED, refine=_search(), batch=16)




def test_failures_on_searched_paths_report_the_paths_geometry(run):
    p, r = run.problem, run
    assert len(r.levels) > 1                                    # failures come from the chains, not level 0
    found = r.failure_surfaces()
    gov = r.governing()
    assert found and gov.n == r.failures["fs"].size
    assert np.all(gov.searched[list(found)]) and set(gov.family[list(found)]) == {FAMILY}
    moved = 0
    for i, xy in found.items():
        area, depth = shoelace_and_depth(p.section, xy)
        assert gov.area[i] == pytest.approx(area, rel=1e-9)
        assert gov.depth[i] == pytest.approx(depth, rel=1e-9)
        np.testing.assert_array_equal(gov.xy(i), xy)
        a_bank, _ = sliding_mass_geometry(p.bank, [r.failures["crit"][i]])
        moved += abs(a_bank[0] - area) > 1e-3 * area          # not the bank circle the search started from
    assert moved == len(found)
    # bank failures keep their bank surface's geometry
    bank = np.flatnonzero(~gov.searched)
    a, _ = sliding_mass_geometry(p.bank, r.failures["crit"][bank])
    np.testing.assert_array_equal(gov.area[bank], a)


def test_a_failures_path_is_the_one_the_search_finds_for_that_sample_again(run):
    # the chain's state rebuilt from its seed and acceptances, evaluated afresh: same FS, same polyline
    r = run
    found = r.failure_surfaces()
    layout = NoiseLayout(r.problem)
    for i in sorted(found)[:3]:
        u = r.failure_noise(i)
        ev = _run_block(r.problem, GivenNoise(layout, u[None], [0]), 0, 1, r.refine)
        assert ev["fs"][0] == pytest.approx(r.failures["fs"][i], rel=1e-12)
        v = ev[SEARCHED_VERTICES]
        np.testing.assert_allclose(np.c_[v["x"], v["y"]], found[i], rtol=1e-12)


def test_summary_figure_and_csv_describe_the_governing_surfaces(run, tmp_path, monkeypatch):
    import csv

    from slipfield.slope import report as rp
    from slipfield.slope.commands.subset_cmd import subset_summary, write_subset_outputs
    from slipfield.slope.simulate.failure_geometry import read_surface_columns
    from slipfield.slope.surfaces import Polyline

    r = run
    gov = r.governing()
    found = r.failure_surfaces()
    d = subset_summary(r)["failure_samples"]
    assert d["n_failed_on_searched_surface"] == len(found) > 0
    assert d["governing_family"][FAMILY] == len(found)
    assert d["sliding_mass_area"]["mean"] == pytest.approx(float(gov.area.mean()), rel=1e-12)
    drawn = {}
    plot = rp.plot_failure_map
    monkeypatch.setattr(rp, "plot_failure_map", lambda *a, **kw: drawn.update(kw) or plot(*a, **kw))
    write_subset_outputs(r, tmp_path, "test")
    # the figure: failures on searched paths drawn on their own paths, apart from the bank failures
    groups = {kind: (label, surfaces) for kind, label, surfaces in drawn["groups"]}
    assert groups["search"][0].endswith(f": {len(found)}")
    for xy, i in zip(groups["search"][1], sorted(found)):
        np.testing.assert_array_equal(xy, found[i])
    with open(tmp_path / "subset_failures.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == gov.n
    for i, row in enumerate(rows):
        back = read_surface_columns(row)
        if gov.searched[i]:
            assert isinstance(back, Polyline)
            np.testing.assert_array_equal(back.points, gov.xy(i))   # full precision
        assert float(row["sliding-mass area (m2 per m)"]) == gov.area[i]
    k = r.typical_failure()
    meta = json.loads((tmp_path / "subset_typical_failure.json").read_text())
    with np.load(tmp_path / "subset_typical_failure.npz") as z:
        np.testing.assert_array_equal(z["surface_xy"], gov.xy(k))
    assert meta["on_searched_surface"] == bool(gov.searched[k])


def test_library_failure_map_places_a_searched_failure_on_its_own_path(run):
    # one failure on a searched path lies between that path's own ends (every slice-base midpoint is
    # strictly inside them)
    r = run
    found = r.failure_surfaces()
    i = sorted(found)[0]
    xa, xb = sorted((found[i][0, 0], found[i][-1, 0]))
    sec = r.problem.section
    m = type(r).failure_map(_only(r, i), [sec.x_min - 1.0, xa, xb, sec.x_max + 1.0], [sec.base_y - 1.0, 1e3])
    np.testing.assert_allclose(m[:, 0], [0, 1, 0])


def test_same_failures_and_paths_with_two_jobs_and_another_batch(run):
    other = subset_simulate(_problem(), SETTINGS, SEED, refine=_search(), batch=3, n_jobs=2)
    assert other.levels == run.levels and other.pf == run.pf
    for key, v in run.failures.items():
        np.testing.assert_array_equal(other.failures[key], v)
    assert run.failures["searched_geometry"].size > 0


def test_resume_from_a_checkpoint_gives_the_same_failures_and_paths(run, tmp_path, monkeypatch):
    with interrupted_after_saves(monkeypatch, 2):
        subset_simulate(_problem(), SETTINGS, SEED, refine=_search(), batch=16, store=tmp_path / "s")
    held = json.loads((tmp_path / "s" / "levels.json").read_text())
    with np.load(tmp_path / "s" / held["seeds_file"]) as z:
        assert z["surface_geometry"].size > 0          # the checkpoint's seeds carry searched paths
    again = subset_simulate(_problem(), SETTINGS, SEED, refine=_search(), batch=16, store=tmp_path / "s",
                            resume=True)
    assert again.levels == run.levels and again.pf == run.pf
    for key, v in run.failures.items():
        np.testing.assert_array_equal(again.failures[key], v)


def test_a_checkpoint_of_the_old_format_is_refused_naming_both_versions(tmp_path):
    from slipfield.slope.simulate.rare_store import CHECKPOINT_VERSION, LevelStore, subset_store_identity
    from slipfield.slope.simulate.store import BlockStore

    p = _problem()
    # a store as version 1 wrote it: the header's identity without a checkpoint version, seeds without paths
    ident = subset_store_identity(p, SEED, SETTINGS, _search())
    BlockStore(tmp_path / "s", ident, task="subset-levels").open(resume=False)
    np.savez(tmp_path / "s" / "seeds_000.npz", u=np.zeros((10, 3)), fs=np.ones(10), crit=np.zeros(10, int),
             threshold=1.1)
    (tmp_path / "s" / "levels.json").write_text(json.dumps({"levels": [], "lambda": 0.6, "counts": {},
                                                             "seeds_file": "seeds_000.npz"}))
    before = sorted(f.name for f in (tmp_path / "s").iterdir())
    with pytest.raises(InputError, match=rf"version 1\b.*version {CHECKPOINT_VERSION}\b.*new store directory"):
        subset_simulate(p, SETTINGS, SEED, refine=_search(), store=tmp_path / "s", resume=True)
    assert sorted(f.name for f in (tmp_path / "s").iterdir()) == before
    # and a levels.json of version 1 under a header of this version is refused by the reader as well
    with pytest.raises(InputError, match=rf"version 1\b.*version {CHECKPOINT_VERSION}\b"):
        LevelStore(tmp_path / "s", ident).load()


def _only(r, i):
    """The failures of ``r`` reduced to failure ``i`` (as SubsetResult.failure_map reads them)."""
    from types import SimpleNamespace

    from slipfield.slope.simulate.rare_surfaces import rows_of_surfaces, surfaces_of_rows

    f = r.failures
    vert, geo = rows_of_surfaces({0: surfaces_of_rows(f["searched_vertices"], f["searched_geometry"])[i]})
    return SimpleNamespace(problem=r.problem, failures={"crit": f["crit"][[i]], "fs": f["fs"][[i]],
                                                        "searched_vertices": vert, "searched_geometry": geo})
