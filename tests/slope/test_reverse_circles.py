"""Reverse circles: the lam scan that Spencer and Morgenstern-Price skip on them.

On a circle whose loads turn the sliding mass *against* its direction of
motion (negative moment about the centre), moment equilibrium of the whole
mass about the centre (statics; the textbook form of Bishop 1955,
Géotechnique 5(1):7-17, holds for any method that satisfies moment
equilibrium) gives ``sum mt (c l + N' tan phi) = F M_active < 0``, so any
root with F > 0 leans on negative base strengths and is flagged
NEGATIVE_STRENGTH; the rescue by continuation and lam scan accepts only
unflagged roots, so the kernels skip it there. These tests check the
premise (the whole-mass moment identity at converged roots) and that
skipping changes no result on the demo levee's search bank.
"""
import numpy as np
import pytest

from slipfield.slope.methods import factor_of_safety, prepare_bank
from slipfield.slope.methods import gle
from slipfield.slope.methods.result import NEGATIVE_STRENGTH

_LEVEE = __import__("pathlib").Path(__file__).resolve().parents[2] / "cases" / "levee_soft_clay.toml"


@pytest.fixture(scope="module")
def levee():
    from slipfield.slope.bank import build_bank
    from slipfield.slope.case.build import load_case
    from slipfield.slope.search import lattice_circles

    sec = load_case(str(_LEVEE)).section
    # the demo's centre-lattice search ([search] of the case file)
    circles = lattice_circles(sec, x_range=(0.0, 20.0), y_range=(6.0, 20.0), nx=11, ny=11, n_radii=10)
    bank = build_bank(sec, circles, n_slices=30)
    return sec, bank.subset(np.nonzero(bank.valid)[0])


def _strengths(bank, sec, hypothesis, n_samples, seed):
    from slipfield.slope.strength import base_strength

    c, tp = base_strength(bank, sec.materials, hypothesis)
    rng = np.random.default_rng(seed)
    # scatter about the demo's strengths (invented, as the demo): lognormal factors per base
    shape = (n_samples,) + np.shape(c)
    return (np.asarray(c) * rng.lognormal(0.0, 0.3, shape),
            np.asarray(tp) * rng.lognormal(0.0, 0.1, shape))


@pytest.mark.parametrize("hypothesis", ["undrained", "drained"])
def test_skipping_the_scan_on_reverse_circles_changes_no_result(levee, hypothesis, monkeypatch):
    sec, bank = levee
    rev = gle.reverse_circles(prepare_bank(bank))
    assert rev.sum() >= 5  # the demo lattice has centres on the far side of the levee axis
    pick = np.r_[np.nonzero(rev)[0], np.nonzero(~rev)[0][::40]]
    sub = bank.subset(pick)
    c, tp = _strengths(sub, sec, hypothesis, 3, seed=5)
    pt = prepare_bank(sub)
    rv = gle.reverse_circles(pt)
    assert rv.sum() == rev.sum() and (pt.m_active[rv] < 0).all()
    bi = factor_of_safety(pt, c, tp, method="bishop")  # the kernels' own start
    runs = {}
    for label in ("skip", "full"):
        if label == "full":
            monkeypatch.setattr(gle, "reverse_circles", lambda terms: np.zeros(terms.n_surfaces, bool))
        runs[label] = [factor_of_safety(pt, c, tp, method="morgenstern-price", interslice="half-sine"),
                       factor_of_safety(pt, c, tp, method="spencer")]
    for a, b in zip(runs["skip"], runs["full"]):
        np.testing.assert_array_equal(a.fs, b.fs)
        np.testing.assert_array_equal(a.lam, b.lam)
        np.testing.assert_array_equal(a.flags, b.flags)
        np.testing.assert_array_equal(a.converged, b.converged)
    # the scan itself, run on the reverse cells: it finds no root it would accept
    si, mi = np.nonzero(np.broadcast_to(rv, bi.fs.shape))
    f = np.full((pt.n_surfaces, pt.n_slices + 1), 1.0)
    *_, found, flags = gle.bracketed_roots(pt, c, tp, f, (si, mi), bi.fs[si, mi])
    assert not found.any()


def test_whole_mass_moment_about_the_centre_at_converged_roots(levee):
    # the premise of the bound: at a Morgenstern-Price root, the base shear
    # strengths' moment about the circle centre equals F times the loads'
    # moment, sum mt (c l + N' tan phi) = F M_active (statics)
    sec, bank = levee
    sub = bank.subset(np.arange(0, bank.n_surfaces, 25))
    c, tp = _strengths(sub, sec, "drained", 2, seed=7)
    pt = prepare_bank(sub)
    r = factor_of_safety(pt, c, tp, method="morgenstern-price", interslice="half-sine", return_forces=True)
    ok = r.converged & np.isfinite(r.fs)
    assert ok.sum() > 20
    strength = c * pt.length + r.normal_eff * tp
    lhs = (pt.mt * strength).sum(axis=2)
    rhs = r.fs * pt.m_active
    scale = (pt.mt * np.abs(strength)).sum(axis=2)
    # Newton stops at steps below tol = 1e-6 of F: the identity holds to that order
    assert np.all(np.abs(lhs - rhs)[ok] <= 1e-5 * scale[ok])
    # and where it leans on negative strengths the root is flagged
    lean = ok & (lhs < 0)
    assert np.all(r.flags[lean] & NEGATIVE_STRENGTH)
