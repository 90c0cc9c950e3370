"""Geometry of the surfaces that govern failures found by the per-realisation search (issue 15).

A realisation whose FS the free search lowered is governed by the search's
own polyline, not by the bank circle the search started from: its
sliding-mass area and greatest depth, the per-realisation CSV files and the
failure map must all describe that polyline.

Checks against closed forms: the area between the ground and a polyline is
the area of the simple polygon they bound, by the shoelace (surveyor's)
formula A = ½ |Σ (x_i y_{i+1} − x_{i+1} y_i)| (Braden 1986, "The surveyor's
area formula", College Mathematics Journal 17(4): 326–337; recalled); the
greatest depth of a polyline under a polyline ground is reached at a vertex
of one of them (the depth is linear between consecutive vertices).
"""
import csv

import numpy as np
import pytest

from slipfield.slope.simulate import RefineSettings, simulate
from slipfield.slope.simulate.failure_geometry import (SURFACE_HEADER, failure_map, governing_surfaces,
                                                       read_surface_columns, sliding_mass_geometry)
from slipfield.slope.surfaces import Circle, Polyline

from support.geometry import shoelace_and_depth
from support.problems import gf_problem

SEED, N = 5, 16


@pytest.fixture(scope="module")
def searched():
    # Griffiths & Fenton (2004) slope, weaker than published (C = 0.2) so that several realisations fail;
    # every realisation below bank FS 1.2 is searched by dynamic programming (Baker 1980) on grids of 8
    # columns, so that every path has fewer bends than the problem's 20 slices: each bend is then a slice
    # side, and Simpson's rule on the slices gives the polygon's area exactly
    p, _ = gf_problem(5.0, 0.5, mean_c=0.2)
    r = simulate(p, N, SEED, refine=RefineSettings(below=1.2, search="dynamic-programming", columns=8, passes=1))
    return p, r


def _failed_by_search(r):
    paths = r.searched_surfaces()
    ks = [k for k in sorted(paths) if r.fs[k] < 1.0]
    assert ks, "the test needs failures governed by a searched polyline"
    return ks, paths




def test_area_and_depth_of_a_free_search_failure_are_those_of_the_searched_polyline(searched):
    p, r = searched
    ks, paths = _failed_by_search(r)
    gov = governing_surfaces(r)
    assert np.all(gov.searched[ks]) and set(gov.family[ks]) == {"dynamic-programming (per realisation)"}
    moved = 0
    for k in ks:
        area, depth = shoelace_and_depth(p.section, paths[k])
        assert gov.area[k] == pytest.approx(area, rel=1e-9)
        assert gov.depth[k] == pytest.approx(depth, rel=1e-9)
        np.testing.assert_allclose([gov.x_upslope[k], gov.x_downslope[k]],
                                   sorted((paths[k][0, 0], paths[k][-1, 0]), reverse=True), rtol=1e-12)
        # not the bank circle the search started from
        a_bank, d_bank = sliding_mass_geometry(p.bank, [r.critical_index[k]])
        moved += abs(a_bank[0] - area) > 1e-3 * area
    assert moved == len(ks)


def test_bank_failures_keep_the_geometry_of_their_bank_surface(searched):
    p, r = searched
    gov = governing_surfaces(r)
    bank = np.flatnonzero(~gov.searched & (r.critical_index >= 0))
    assert bank.size
    a, d = sliding_mass_geometry(p.bank, r.critical_index[bank])
    np.testing.assert_array_equal(gov.area[bank], a)
    np.testing.assert_array_equal(gov.depth[bank], d)
    assert all(isinstance(gov.surface(int(k)), Circle) for k in bank)


def test_realisations_csv_gives_back_every_governing_surface(searched, tmp_path):
    from slipfield.slope.commands.export import export_realisations

    p, r = searched
    export_realisations(p, r, SEED, tmp_path / "ex", "npz")
    with open(tmp_path / "ex" / "realisations.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == N and set(SURFACE_HEADER) <= set(rows[0])
    import json

    manifest = json.loads((tmp_path / "ex" / "fields.json").read_text())
    assert manifest["governing_surface"]["columns"] == SURFACE_HEADER
    gov = governing_surfaces(r)
    kinds = set()
    for k, row in enumerate(rows):
        back, want = read_surface_columns(row), gov.surface(k)
        assert type(back) is type(want)
        kinds.add(type(back))
        if isinstance(want, Circle):
            assert (back.xc, back.yc, back.radius) == (want.xc, want.yc, want.radius)
        else:
            np.testing.assert_array_equal(back.points, want.points)   # floats written at full precision
            assert back.family == "dynamic-programming (per realisation)"
        assert float(row["sliding-mass area (m2 per m)"]) == gov.area[k]
        assert row["governing surface from the per-realisation search"] == ("true" if gov.searched[k] else "false")
    assert kinds == {Circle, Polyline}


def test_failure_map_receives_failures_of_both_kinds_with_their_own_surfaces(searched):
    from matplotlib import pyplot as plt

    from slipfield.slope.report.figures import plot_failure_map

    p, r = searched
    ks, paths = _failed_by_search(r)
    gov = governing_surfaces(r)
    sec = p.section
    fm = failure_map(gov, r.fs, np.linspace(sec.x_min, sec.x_max, 41), np.linspace(sec.base_y, 10.0, 21))
    failed = np.flatnonzero(r.fs < 1.0)
    assert fm.n_failed == failed.size and fm.n_total == N
    kinds = {g.kind: g for g in fm.groups}
    assert set(kinds) == {"bank", "search"}
    assert kinds["search"].realisations.tolist() == ks
    for xy, k in zip(kinds["search"].surfaces, ks):
        np.testing.assert_array_equal(xy, paths[k])
    assert sorted(kinds["bank"].realisations.tolist() + ks) == failed.tolist()
    # every failure's surface lies in the map once: a column through the section holds each surface
    column = failure_map(gov, r.fs, [sec.x_min, sec.x_max], [sec.base_y - 1.0, 1e3])
    assert column.density[0, 0] == pytest.approx(1.0)
    fig = plot_failure_map(fm.x_edges, fm.y_edges, fm.density, sec.ground, n_failed=fm.n_failed,
                           n_total=fm.n_total, groups=[(g.kind, g.label, g.surfaces) for g in fm.groups])
    labels = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert any("per-realisation search" in t for t in labels) and any("bank surface (circle)" in t for t in labels)
    plt.close(fig)


def test_library_failure_map_places_a_searched_failure_on_its_own_polyline(searched):
    # one failed realisation kept (the others set safe): its map lies between the searched polyline's
    # own ends (every slice-base midpoint is strictly inside them), where its bank circle reaches beyond
    import dataclasses

    p, r = searched
    ks, paths = _failed_by_search(r)
    gov = governing_surfaces(r)
    k = max(ks, key=lambda j: abs(gov.x_downslope[j] - _bank_ends(p, r, j)[1]))
    fs = np.full(r.n, 2.0)
    fs[k] = r.fs[k]
    one = dataclasses.replace(r, fs=fs)
    xa, xb = sorted((paths[k][0, 0], paths[k][-1, 0]))
    sec = p.section
    m = one.failure_map([sec.x_min - 1.0, xa, xb, sec.x_max + 1.0], [sec.base_y - 1.0, 1e3])
    np.testing.assert_allclose(m[:, 0] * r.n, [0, 1, 0])
    bank_ends = sorted(_bank_ends(p, r, k))
    assert bank_ends[0] < xa - 0.5 or bank_ends[1] > xb + 0.5   # the bank circle would have spilled over


def _bank_ends(p, r, k):
    """Upslope and downslope end abscissae (m) of realisation k's bank surface."""
    from slipfield.slope.simulate.failure_geometry import surface_ends

    up, down = surface_ends(p.bank, [r.critical_index[k]])
    return float(up[0]), float(down[0])


def test_searched_surfaces_and_their_geometry_are_the_same_for_any_jobs_and_batch(searched):
    p, r = searched
    s = RefineSettings(below=1.2, search="dynamic-programming", columns=8, passes=1)
    other = simulate(p, N, SEED, refine=s, n_jobs=2, batch=3)
    np.testing.assert_array_equal(other.fs, r.fs)
    np.testing.assert_array_equal(other.searched_vertices, r.searched_vertices)
    np.testing.assert_array_equal(other.searched_geometry, r.searched_geometry)
    assert r.searched_geometry.size == len(r.searched_surfaces()) > 0


def test_report_failure_map_is_drawn_from_the_governing_surfaces(searched, monkeypatch):
    # the report's catalogue entry hands the figure both kinds of failure, from the typed run result
    from types import SimpleNamespace

    from slipfield.slope.report.figures import catalogue
    from slipfield.slope.report.figures import failure as failure_figures

    p, r = searched
    ks, paths = _failed_by_search(r)
    gov = governing_surfaces(r)
    failed = np.flatnonzero(r.fs < 1.0)
    run = SimpleNamespace(fs=r.fs, governing=gov, failed_area=gov.area[failed])
    res = SimpleNamespace(spatial={"undrained": SimpleNamespace(spatial=run)})
    got = {}
    # the draw function imports its plotting function when called (no matplotlib in a command whose workers draw)
    monkeypatch.setattr(failure_figures, "plot_failure_map", lambda *a, **kw: got.update(kw) or "figure")
    (drawn,) = catalogue._failure_map(SimpleNamespace(section=p.section), res)
    groups = {kind: (label, surfaces) for kind, label, surfaces in got["groups"]}
    assert set(groups) == {"bank", "search"} and got["n_failed"] == failed.size
    assert groups["search"][0].endswith(f": {len(ks)}")
    for xy, k in zip(groups["search"][1], ks):
        np.testing.assert_array_equal(xy, paths[k])


def test_subset_failure_map_lies_where_the_failed_surface_is_on_a_slope_facing_minus_x():
    # the subset simulation's failure map binned slice positions in the sliding frame, so it was mirrored
    # for slopes facing -x (SimulationResult.failure_map was corrected for this in issue 11). The cuts of
    # the circle with the ground come from the circle itself (surfaces.cut_ground), not from the bank.
    from types import SimpleNamespace

    from slipfield.slope.simulate.rare_result import SubsetResult
    from slipfield.slope.surfaces import cut_ground

    p, _ = gf_problem(5.0, 0.5)
    assert p.bank.direction[p.fixed_index] == -1
    j = p.fixed_index
    x1, x2 = cut_ground(p.section, p.surfaces[j])
    held = SimpleNamespace(problem=p, failures={"crit": np.array([j, j, j]), "fs": np.full(3, 0.9)})
    sec = p.section
    m = SubsetResult.failure_map(held, [sec.x_min - 1.0, x1, x2, sec.x_max + 1.0], [sec.base_y - 1.0, 1e3])
    np.testing.assert_allclose(m[:, 0], [0, 1, 0])
