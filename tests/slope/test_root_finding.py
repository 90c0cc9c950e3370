"""Spencer and Morgenstern-Price roots on steep toe circles in phi = 0 soil.

Closed form (statics): for a circle in a phi = 0 material, moment
equilibrium about the centre involves only the weights and the base shears
c l / F (base normals pass through the centre, interslice forces are
internal), so every method that satisfies moment equilibrium gives the same
F as Bishop's simplified method (Bishop 1955; e.g. Duncan, Wright & Brandon
2014, "Soil Strength and Slope Stability", 2nd ed., ch. 6 -- recalled from
memory). Whether Spencer's method has a solution at all is decided by
Spencer's (1967, Geotechnique 17(1):11-26) construction: the factors of
safety from force and from moment equilibrium as functions of the interslice
inclination theta, F_f(theta) and F_m(theta), must cross. For phi = 0 both
are closed forms of the slice terms, which this test evaluates on a fine
theta grid, independently of the solver, on the branch where every slice
denominator F cos(a - theta) is positive.
"""
import numpy as np
import pytest

from slipfield.slope.bank import build_bank
from slipfield.slope.examples import simple_slope
from slipfield.slope.methods import factor_of_safety, prepare_bank
from slipfield.slope.methods.result import BEYOND_POLE, NEGATIVE_NORMAL, THRUST_OUTSIDE
from slipfield.slope.search import lattice_circles, window_circles
from slipfield.slope.strength import Material, base_strength

H = 10.0
COT = 1.0 / np.tan(np.radians(60.0))  # a 60 degree face


def _bank():
    sec = simple_slope(height=H, cot_beta=COT, depth_factor=1.2,
                       material=Material("clay", unit_weight=20.0, c=40.0, phi=0.0))
    crest = COT * H
    toe = window_circles(sec, (crest + 0.5, crest + 1.5 * H), (-0.5 * H, 0.05), 8, 8, 8)
    lat = lattice_circles(sec, nx=7, ny=7, n_radii=6)
    from slipfield.slope.surfaces import Circles

    circ = Circles(np.r_[toe.xc, lat.xc], np.r_[toe.yc, lat.yc], np.r_[toe.radius, lat.radius])
    bank = build_bank(sec, circ, n_slices=30)
    bank = bank.subset(np.flatnonzero(bank.valid))
    c, tp = base_strength(bank, sec.materials, "drained")
    return prepare_bank(bank), c, tp


@pytest.fixture(scope="module")
def steep():
    return _bank()


def _counted(r):
    # what the searches count: converged, no flag but the tolerated ones
    return r.converged[0] & ((r.flags[0] & ~(NEGATIVE_NORMAL | THRUST_OUTSIDE)) == 0)


def _physical_branch_has_root(terms, c):
    """Spencer's F_f(theta) and F_m(theta) for phi = 0 cross where every
    slice has cos(a - theta) > 0 (closed forms on a 0.1 degree grid)."""
    ca, sa, A, B = terms.cos_a, terms.sin_a, terms.A, terms.B
    T = B * ca + A * sa                       # driving force along the base
    R = np.broadcast_to(c, (1,) + ca.shape)[0] * terms.length   # c l
    G0 = terms.couple.sum(axis=1)
    prev_d = prev_adm = None
    has = np.zeros(ca.shape[0], bool)
    for th in np.radians(np.arange(-83.0, 83.0, 0.1)):
        cam = ca * np.cos(th) + sa * np.sin(th)
        arm = -terms.dx * np.sin(th) - terms.dy * np.cos(th)
        with np.errstate(divide="ignore", invalid="ignore"):
            Ff = (R / cam).sum(1) / (T / cam).sum(1)
            Fm = (R * arm / cam).sum(1) / (G0 + (T * arm / cam).sum(1))
        d = Ff - Fm
        adm = (cam > 0).all(axis=1)
        if prev_d is not None:
            # a crossing, not a jump through a pole of F_f
            has |= ((np.sign(d) != np.sign(prev_d)) & adm & prev_adm
                    & (np.abs(d - prev_d) < 0.05 * np.abs(Fm)))
        prev_d, prev_adm = d, adm
    return has


@pytest.mark.parametrize("method", ["spencer", "morgenstern-price"])
def test_phi0_circles_give_bishop_fs_and_every_physical_root_is_found(steep, method):
    terms, c, tp = steep
    bi = factor_of_safety(terms, c, tp, method="bishop")
    kw = {"interslice": "half-sine"} if method == "morgenstern-price" else {}
    r = factor_of_safety(terms, c, tp, method=method, **kw)
    ok = _counted(r)
    assert ok.sum() > 100
    # the closed-form identity, on every counted circle
    np.testing.assert_allclose(r.fs[0, ok], bi.fs[0, ok], rtol=1e-8)
    if method == "spencer":
        # every circle on which Spencer's construction has a solution is solved
        has = _physical_branch_has_root(terms, c)
        assert has.sum() > 100
        assert ok[has].all(), f"{int((has & ~ok).sum())} circles with a root were missed"


@pytest.mark.parametrize("method", ["spencer", "morgenstern-price"])
def test_result_does_not_depend_on_where_newton_starts(steep, method):
    # before the fix a start at theta = -45 degrees reached roots across a
    # pole of the slice forces on about 190 more circles, which the searches
    # counted, and the critical FS moved from 0.905 to 0.794 on a 60 degree
    # slope: the answer depended on the start. Now roots across a pole are
    # flagged and the scan over both signs of lam finds the physical ones.
    terms, c, tp = steep
    runs = [factor_of_safety(terms, c, tp, method=method, lam_start=ls) for ls in (0.0, -1.0, 1.5)]
    ref = _counted(runs[0])
    for r in runs[1:]:
        ok = _counted(r)
        np.testing.assert_array_equal(ok, ref)
        np.testing.assert_allclose(r.fs[0, ok], runs[0].fs[0, ok], rtol=1e-8)
        beyond = r.converged[0] & ((r.flags[0] & BEYOND_POLE) != 0)
        assert not (beyond & ok).any()
    # roots of both signs of lam are found
    lam = runs[0].lam[0, ref]
    assert (lam > 0).any() and (lam < 0).any()
