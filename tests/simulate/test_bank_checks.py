"""The bank's non-circular surfaces pass the searches' checks in every realisation (slope.simulate.bank_checks).

Checks against the deterministic search's rule, evaluated independently on
each realisation's fields: the interslice shear strength across the slice
boundaries (Chen & Morgenstern 1983; Duncan & Wright 2005, recalled), with a
Morgenstern-Price (1965) retry using another interslice function before a
surface is refused.
"""
import numpy as np
import pytest

from slipfield.fields.marginals import make_marginal
from slipfield.slope.search import evaluate_surfaces
from slipfield.slope.search.block import block_polylines
from slipfield.slope.search.interslice_strength import INTERSLICE_REASON, RATIO_TOLERANCE
from slipfield.slope.examples import clay_over_stiff_cut
from slipfield.slope.simulate import RandomProblem, RandomProperty, simulate
from slipfield.slope.simulate.refinement import realisation_overrides
from slipfield.slope.surfaces import Circle


def _problem():
    """Invented 10 m cut, c' = 8 kPa (COV 0.2) / phi' = 25 deg clay over stiffer soil; one circle and blocks."""
    sec = clay_over_stiff_cut()
    blocks = block_polylines(sec, "upper", entry=(0.0, 10.0), exit=(16.0, 21.0), points=3)
    prop = RandomProperty("clay", "c", make_marginal("lognormal", mean=8.0, cov=0.2), 10.0, 2.0)
    # a shallow circle far above the blocks' FS (5.8 at the mean): the blocks govern wherever one counts
    return RandomProblem(sec, "drained", "spencer", [prop], [Circle(24.0, 16.0, 13.0)] + blocks, 0,
                         n_slices=20, cell=1.0), blocks


def test_governing_blocks_pass_the_checks_with_their_realisation_fields():
    prob, blocks = _problem()
    sec = prob.section
    # with the mean strengths, 6 of the 9 blocks need more interslice shear than the clay carries
    det = evaluate_surfaces(sec, blocks, method="spencer", n_slices=20)
    assert det.rejected[INTERSLICE_REASON] == 6
    n, seed = 12, 3
    res = simulate(prob, n, seed)
    assert res.bank_rejected[INTERSLICE_REASON] > 0       # lowest blocks left out in some realisations ...
    assert res.bank_retried > 0                            # ... or counted with another interslice function
    gov = [k for k in range(n) if res.critical_index[k] > 0]
    assert len(gov) >= n // 2                              # the blocks govern most realisations
    for k in gov:
        i = int(res.critical_index[k])
        one = evaluate_surfaces(sec, [prob.surfaces[i]], method="spencer", n_slices=20,
                                overrides=realisation_overrides(prob, seed, k))
        # the governing block is one the deterministic search counts with that realisation's strengths,
        # with the same factor of safety (Spencer's, or the retried function's)
        assert one.counted[0], k
        assert one.interslice_ratio[0] <= 1 + RATIO_TOLERANCE
        assert res.fs[k] == pytest.approx(one.fs[0], rel=1e-9)
    d = res.to_dict()["bank_checks"]
    assert d["rejected"] == res.bank_rejected and d["retried"] == res.bank_retried


def test_banks_of_circles_alone_are_not_judged():
    prob, _ = _problem()
    circles = RandomProblem(prob.section, "drained", "spencer", prob.properties, prob.surfaces[:1], 0,
                            n_slices=20, cell=1.0)
    res = simulate(circles, 4, 3)
    assert res.bank_rejected is None and "bank_checks" not in res.to_dict()
    # Bishop's moment equilibrium carries no interslice forces to judge
    bishop = RandomProblem(prob.section, "drained", "bishop", prob.properties, prob.surfaces, 0,
                           n_slices=20, cell=1.0)
    assert simulate(bishop, 4, 3).bank_rejected is None


def test_a_store_is_tied_to_the_bank_checks(tmp_path):
    # A store written without the bank checks (its blocks counted unjudged) must not be continued with them.
    from slipfield.slope.errors import InputError as Refused
    from slipfield.slope.simulate.driver import store_header
    from slipfield.slope.simulate.store import BlockStore

    prob, _ = _problem()
    new = store_header(prob, 3)
    assert new["bank_checks"]["reasons"] and new["bank_checks"]["retry"]
    old = {k: v for k, v in new.items() if k != "bank_checks"}
    BlockStore(tmp_path / "s", old).open(resume=False)
    with pytest.raises(Refused):
        BlockStore(tmp_path / "s", new).check(resume=True)


def test_geometry_kept_per_surface_gives_the_same_bits_as_computing_it_per_realisation(monkeypatch):
    # what depends on a surface alone (its slice row and terms, the geometry of its slice boundaries,
    # where its points read the grid) is computed once per surface and kept between realisations;
    # the realisations must not see the difference, refused and retried blocks included
    from slipfield.slope.search import interslice_strength
    from slipfield.slope.simulate import bank_checks

    n, seed = 12, 3
    monkeypatch.setattr(bank_checks, "KEEP_SURFACE_GEOMETRY", False)
    before = simulate(_problem()[0], n, seed)
    monkeypatch.setattr(bank_checks, "KEEP_SURFACE_GEOMETRY", True)
    made = []
    geometry = interslice_strength.boundary_geometry
    monkeypatch.setattr(interslice_strength, "boundary_geometry", lambda *a: made.append(1) or geometry(*a))
    prob = _problem()[0]
    after = simulate(prob, n, seed)
    np.testing.assert_array_equal(after.fs, before.fs)
    np.testing.assert_array_equal(after.critical_index, before.critical_index)
    assert after.bank_rejected == before.bank_rejected and after.bank_rejected
    assert after.bank_retried == before.bank_retried > 0
    # one boundary geometry per surface judged, however many realisations judged it
    judged = len(prob._bank_check_parts)
    assert 0 < len(made) == judged < n
