"""Per-realisation search by dynamic programming (slope.simulate.mechanisms, issue 15).

Checks: with common random numbers (same seed) the free search never gives
a realisation a higher FS, nor pf a lower value, than circles alone, and its
circles-only FS is exactly the circles-only run's; homogeneous realisations
(θ → ∞) keep their circle (FS proportional to su) when the paths are less
critical as mechanisms of rigid blocks; the accepted surfaces are stored, drawable and
judged clean by the method of slices when evaluated again.
"""
import math

import numpy as np
import pytest

from slipfield.fields.marginals import make_marginal
from slipfield.fields.seeding import realisation_rng
from slipfield.slope.errors import InputError
from slipfield.slope.examples import layered_weak_section
from slipfield.slope.search import evaluate_surfaces, lattice_circles
from slipfield.slope.search.block import block_polylines
from slipfield.slope.simulate import RandomProblem, RandomProperty, RefineSettings, simulate
from slipfield.slope.simulate.refinement import realisation_overrides
from slipfield.slope.surfaces import Circle, Polyline, family_of

from support.problems import gf_problem

DP = dict(search="dynamic-programming")


def _seam_problems():
    """Invented: 10 m cut over a thin weak seam (slope.examples), seam φ' random; circles alone, circles + blocks."""
    sec = layered_weak_section()
    c = lattice_circles(sec, x_range=(30.0, 55.0), y_range=(12.0, 30.0), nx=5, ny=5, n_radii=4)
    circles = [Circle(float(x), float(y), float(r)) for x, y, r in zip(c.xc, c.yc, c.radius)]
    blocks = block_polylines(sec, "seam", entry=(15.0, 30.0), exit=(45.0, 60.0), points=4)
    prop = RandomProperty("seam", "phi", make_marginal("lognormal", mean=9.0, cov=0.25), 10.0, 1.0)
    kw = dict(n_slices=40, cell=1.0)
    only = RandomProblem(sec, "drained", "spencer", [prop], circles, 0, **kw)
    both = RandomProblem(sec, "drained", "spencer", [prop], circles + blocks, 0, **kw)
    return only, both


def test_free_search_never_below_circles_alone_sample_by_sample():
    # Griffiths & Fenton (2004) undrained slope, θ = 5 m, COV 0.5: a bank of circles, then the
    # per-realisation search below FS 1.3. Same seed: common random numbers.
    p, _ = gf_problem(5.0, 0.5)
    n, seed = 40, 5
    a = simulate(p, n, seed)
    b = simulate(p, n, seed, refine=RefineSettings(below=1.3, **DP))
    np.testing.assert_array_equal(b.fs_circles_only, a.fs)  # circles alone: exactly the plain run
    assert b.n_refined > 0                                  # the search found lower surfaces ...
    ok = np.isfinite(a.fs)
    assert np.all(b.fs[ok] <= a.fs[ok])                     # ... and never a higher FS
    assert b.pf >= a.pf
    assert b.pf_circles == a.pf
    d = b.to_dict()
    assert d["pf_circles_only"] == a.pf
    assert d["governing_family"]["dynamic-programming (per realisation)"] == b.n_refined
    assert sum(d["governing_family"].values()) == n


def test_bank_with_blocks_keeps_circles_only_pf_by_common_random_numbers():
    only, both = _seam_problems()
    n, seed = 16, 11
    a = simulate(only, n, seed)
    b = simulate(both, n, seed)
    # the same fields on both banks: the circles of the bigger bank give the circles-only run
    np.testing.assert_allclose(b.fs_circles_only, a.fs, rtol=1e-12)
    assert np.all(b.fs <= a.fs)
    # the seam (φ' about 9°) governs: blocks along it, not circles through the stiff clay
    assert b.family_counts().get("block", 0) == n
    assert np.all(b.fs < 0.8 * a.fs)


def test_homogeneous_realisations_keep_their_circle_against_paths_less_critical_as_mechanisms():
    # θ → ∞: realisation k is the homogeneous Griffiths & Fenton (2004) slope with su_k, so FS ∝ su_k.
    # Spencer's method finds paths along the firm base 2-3.5 % below the bank's best circle (measured
    # 1.450-1.470 against 1.503 at the mean su), but as chains of rigid blocks with optimised interfaces
    # (the upper bound of Donald & Chen 1997) they are less critical than the circle's chords (measured
    # 1.566-1.569 against 1.555), so slope.search.path_acceptance refuses them in every realisation and
    # each keeps its circle, counted under the rule's reason. The circle, a rigid rotation, is an upper
    # bound for φ = 0: it may not lie below the collapse value, about 1.47 at cu/(γH) = 0.25, D = 2
    # (Griffiths & Lane 1999, finite elements, and Taylor's chart; recalled from memory), by more than
    # the reading of a chart (2 %). Before the rule the paths were accepted in all 6 realisations.
    from slipfield.slope.search.path_acceptance import KINEMATIC_REASON

    p, _ = gf_problem(math.inf, 0.3)
    r = simulate(p, 6, seed=3, refine=RefineSettings(below=5.0, **DP))
    assert r.n_refined == 0
    assert r.refine_rejected[KINEMATIC_REASON] >= 6
    np.testing.assert_array_equal(r.fs, r.fs_bank)
    su_mean = p.properties[0].marginal.mean
    su = np.array([p.properties[0].marginal.from_standard_normal(realisation_rng(3, k, 0, 0).standard_normal())
                   for k in range(6)])
    scaled = r.fs * su_mean / su
    np.testing.assert_allclose(scaled, scaled[0], rtol=1e-6)
    assert scaled[0] >= 1.47 * 0.98


def test_accepted_surfaces_are_stored_and_clean():
    p, _ = gf_problem(5.0, 0.5)
    settings = RefineSettings(below=1.3, **DP)
    b = simulate(p, 12, 5, refine=settings)
    refined = np.flatnonzero(b.fs < b.fs_bank)
    assert refined.size
    paths = b.searched_surfaces()
    assert sorted(paths) == refined.tolist()      # a polyline kept for every lowered realisation, none else
    for k in refined[:3]:
        xy = paths[int(k)]
        e = evaluate_surfaces(p.section, Polyline(xy), hypothesis=p.hypothesis, method=settings.method,
                              n_slices=p.n_slices, overrides=realisation_overrides(p, 5, int(k)))
        assert e.counted[0]                       # converged, no intolerable flag
        assert e.fs[0] == pytest.approx(b.fs[k], rel=1e-9)


def test_results_reproducible_for_any_batch_and_kept_terms():
    from slipfield.slope.simulate import mechanisms

    p, _ = gf_problem(5.0, 0.5)
    s = RefineSettings(below=1.3, **DP)
    mechanisms._CACHE.clear()
    a = simulate(p, 8, 5, refine=s)                 # first bands built as the starts come
    c = simulate(p, 8, 5, refine=s, batch=3)        # other batches, first bands kept from the run above
    np.testing.assert_array_equal(a.fs, c.fs)
    np.testing.assert_array_equal(a.searched_vertices, c.searched_vertices)
    np.testing.assert_array_equal(a.searched_geometry, c.searched_geometry)


def test_refine_settings_refuse_unknown_search_and_keep_old_description():
    with pytest.raises(InputError, match="refine_search"):
        RefineSettings(below=1.2, search="simulated-annealing")
    with pytest.raises(InputError, match="columns"):
        RefineSettings(below=1.2, search="dynamic-programming", columns=2)
    # stores written before the dynamic-programming search keep their header
    assert set(RefineSettings(below=1.2).describe()) == {"below", "method", "n_vertices", "max_evaluations"}
    assert RefineSettings(below=1.2, **DP).describe()["search"] == "dynamic-programming"


def test_family_tags_survive_pickling():
    import pickle

    only, both = _seam_problems()
    back = pickle.loads(pickle.dumps(both))
    assert [family_of(s) for s in back.surfaces] == [family_of(s) for s in both.surfaces]


def test_mechanism_results_maps_and_export(tmp_path):
    import csv

    from slipfield.slope.commands.export import export_realisations
    from slipfield.slope.simulate.mechanism_results import accepted_surfaces, mechanism_maps, mechanism_summary

    p, _ = gf_problem(5.0, 0.5, mean_c=0.2)   # weaker than the published case: failures in a few realisations
    plain = simulate(p, 16, 5)
    assert mechanism_summary(plain) is None    # circles alone, no search: nothing to add to the report
    r = simulate(p, 16, 5, refine=RefineSettings(below=1.2, **DP))
    m = mechanism_summary(r)
    assert m.pf_circles == plain.pf and m.pf == r.pf and m.n_refined == r.n_refined
    assert sum(m.families.values()) == 16
    sec = p.section
    xe = np.linspace(sec.x_min, sec.x_max, 41)
    ye = np.linspace(sec.base_y, float(sec.ground[:, 1].max()), 21)
    free, circ, nf, nc = mechanism_maps(r, xe, ye)
    assert nf == int(np.sum(r.fs < 1.0)) and nc == int(np.sum(plain.fs < 1.0))
    assert nf > 0 and free.max() <= 1.0 and circ.max() <= 1.0
    export_realisations(p, r, 5, tmp_path, "npz")
    with open(tmp_path / "realisations.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    surfs = accepted_surfaces(r)
    for k, row in enumerate(rows):
        assert float(row["FS circles alone (-)"]) == pytest.approx(plain.fs[k])
        if r.fs[k] < r.fs_bank[k]:   # the searched polyline itself, at full precision
            xy = np.array([[float(v) for v in pt.split()] for pt in row["polyline vertices x y (m)"].split(";")])
            np.testing.assert_array_equal(xy, surfs[k])
        want = "dynamic-programming (per realisation)" if r.fs[k] < r.fs_bank[k] else "circle"
        assert row["governing family"] == want


def test_rigid_block_refusals_are_counted_reported_and_tie_stores():
    # The rule's reasons are among the per-realisation counts (so a store's identity, which lists them,
    # changes with the rule) and the report says what each means.
    from slipfield.slope.report.exclusions import MEANINGS
    from slipfield.slope.search.path_acceptance import KINEMATIC_REASON, UNSUPPORTED_REASON
    from slipfield.slope.simulate.refinement import REFINE_REASONS

    for reason in (KINEMATIC_REASON, UNSUPPORTED_REASON):
        assert reason in REFINE_REASONS and reason in MEANINGS
    assert REFINE_REASONS[-1] == "other geometry"     # unknown reasons still land in the last column


def test_a_store_is_tied_to_the_rigid_block_rule(tmp_path):
    # A store written by the per-realisation search before the rule (its paths counted unjudged as
    # mechanisms) must not be continued with it.
    from slipfield.slope.errors import InputError as Refused
    from slipfield.slope.search.path_acceptance import KINEMATIC_REASON, RULE_ID
    from slipfield.slope.simulate.driver import store_header
    from slipfield.slope.simulate.store import BlockStore

    p, _ = gf_problem(5.0, 0.5)
    new = store_header(p, 3, refine=RefineSettings(below=1.3, **DP))
    assert RULE_ID in new["refine"]["acceptance"] and KINEMATIC_REASON in new["refine"]["acceptance"]
    old = {**new, "refine": {**new["refine"], "acceptance": [a for a in new["refine"]["acceptance"]
                                                             if a not in (RULE_ID, KINEMATIC_REASON)]}}
    BlockStore(tmp_path / "s", old).open(resume=False)
    with pytest.raises(Refused):
        BlockStore(tmp_path / "s", new).check(resume=True)
