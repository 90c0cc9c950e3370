"""Published cases and closed forms checked through the public API.

section -> surfaces -> bank -> methods.factor_of_safety / search. Checks that
already exist in tests/slope/test_methods.py (hand-built banks: infinite slope,
phi = 0 segment closed form, Spencer = M-P, mirror image) are not repeated.
Chart values are read to about +-0.01 to 0.02 in FS, and a coarse lattice
search overestimates the true minimum by up to about 1 %; published-value
tolerances below are set from those two effects, not tuned.
"""
import numpy as np
import pytest

from slipfield.slope.bank import build_bank
from slipfield.slope.examples import simple_slope, two_zone_section
from slipfield.slope.methods import factor_of_safety
from slipfield.slope.search import centre_lattice, evaluate_surfaces, window
from slipfield.slope.section import Section, Zone
from slipfield.slope.strength import Material, base_strength
from slipfield.slope.surfaces import Circle, Circles, Polyline
from slipfield.slope.water import Water

PHI0_TOL = ("negative-normal", "thrust-outside", "small-m-alpha")  # m_alpha = cos a is harmless for phi = 0


def test_griffiths_lane_homogeneous_c_phi_slope():
    # Griffiths & Lane 1999 (Geotechnique 49(3):387-403), value recalled from
    # memory: 2H:1V, phi' = 20 deg, c'/(gamma H) = 0.05, firm base at toe level;
    # Bishop & Morgenstern (1960) charts give FS = 1.380. Tolerance 2 %: chart
    # reading (+-0.02) plus lattice coarseness (<= 1 %).
    sec = simple_slope(10.0, 2.0, 1.0, material=Material("soil", unit_weight=20.0, c=10.0, phi=20.0))
    r = centre_lattice(sec, nx=15, ny=15, n_radii=10, method="bishop")
    assert r.fs_min == pytest.approx(1.380, rel=0.02)


def test_undrained_slope_depth_factor_two():
    # Taylor's chart (Taylor 1948), as quoted by Griffiths & Fenton 2004, value
    # recalled from memory: 2H:1V, cu/(gamma H) = 0.25, D = 2 -> FS ~ 1.47.
    # Tolerance 2 %: chart reading plus lattice coarseness.
    sec = simple_slope(10.0, 2.0, 2.0, material=Material("clay", unit_weight=20.0, su_model="constant", su=50.0))
    r = centre_lattice(sec, nx=15, ny=15, n_radii=12, method="bishop", hypothesis="undrained",
                       tolerate=PHI0_TOL)
    assert r.fs_min == pytest.approx(1.47, rel=0.02)


def _acads_ex1a():
    g = np.array([[20.0, 25.0], [30.0, 25.0], [50.0, 35.0], [70.0, 35.0]])
    poly = np.vstack([g, [[70.0, 20.0], [20.0, 20.0], [20.0, 25.0]]])
    mat = Material("soil", unit_weight=20.0, c=3.0, phi=19.6)
    return Section(g, [Zone("soil", "soil", poly)], {"soil": mat}, base_y=20.0)


@pytest.mark.parametrize("method", ["bishop", "spencer"])
def test_acads_ex1a(method):
    # ACADS referee problem EX1(a) (Giam & Donald 1989; Donald & Giam 1989),
    # recalled from memory: referee FS = 1.00. Tolerance 2 %: referee answers
    # quoted to two decimals plus lattice coarseness (the minimum can only be
    # approached from above by a search, hence the one-sided lower bound).
    r = centre_lattice(_acads_ex1a(), nx=15, ny=15, n_radii=10, method=method)
    assert 0.99 <= r.fs_min <= 1.02


# Taylor (1937, 1948) stability numbers c/(F gamma H), phi = 0, recalled from
# memory. Toe circles; for beta <= 53 deg with unlimited depth, 0.181.
def _taylor_ns(beta):
    cot = 1e-3 if beta == 90 else 1.0 / np.tan(np.radians(beta))  # x must increase: near-vertical face
    sec = simple_slope(10.0, cot, 3.0, material=Material("clay", unit_weight=20.0, su_model="constant", su=50.0))
    L = 10.0 * cot
    r = window(sec, upslope=(L + 0.5, L + 15.0), downslope=(-3.0, 0.0), n_up=30, n_down=7, n_radii=30,
               max_angle=89.0, min_angle=5.0, method="ordinary", hypothesis="undrained", tolerate=PHI0_TOL)
    return 50.0 / (20.0 * 10.0 * r.fs_min)


@pytest.mark.parametrize("beta,ns", [(90, 0.261), (75, 0.219), (60, 0.191), (53.13, 0.181)])
def test_taylor_stability_numbers(beta, ns):
    # 2 %: Taylor's numbers are given to three figures from his own friction-
    # circle construction; the window search approaches the minimum from above
    # (Ns from below) by < 1 %.
    assert _taylor_ns(beta) == pytest.approx(ns, rel=0.02)


def test_toe_circle_dipping_below_toe_level_is_the_arc_to_the_toe():
    # A toe circle whose arc continues below toe level beyond the toe cuts the
    # ground three times; the slip surface is the arc from the crest entry to
    # the toe (Taylor 1937's toe circles). Reference: phi = 0 statics of the
    # mass right of the toe, F = su L R / (gamma * moment of the weight),
    # integrated here independently of the slice engine (20,000 strips).
    H, beta, su, gam = 10.0, 75.0, 50.0, 20.0
    cot = 1.0 / np.tan(np.radians(beta))
    sec = simple_slope(H, cot, 3.0, material=Material("clay", unit_weight=gam, su_model="constant", su=su))
    xc, yc = -0.473 * H, 1.66 * H
    R = np.hypot(xc, yc)                      # through the toe (0, 0)
    xe = xc + np.sqrt(R ** 2 - (H - yc) ** 2)  # entry on the crest
    xs = np.linspace(0.0, xe, 20001)
    xm = 0.5 * (xs[1:] + xs[:-1])
    h = np.clip(xm / (H * cot), 0, 1) * H - (yc - np.sqrt(R ** 2 - (xm - xc) ** 2))
    moment = gam * np.sum(h * np.diff(xs) * (xm - xc))
    arc = R * abs(np.arctan2(H - yc, xe - xc) - np.arctan2(-yc, -xc))
    exact = su * arc * R / moment
    r = evaluate_surfaces(sec, Circle(xc, yc, R), method="ordinary", hypothesis="undrained", n_slices=400,
                          tolerate=PHI0_TOL)
    assert r.counted[0], r.rejected
    # 0.2 %: 400 slices against 20,000 strips, both midpoint rules
    assert r.fs[0] == pytest.approx(exact, rel=2e-3)


# ------------------------------------------------------ infinite slope --
def _long_slope(L, beta=20.0, z=3.0, hw=None, ru=None):
    t = np.tan(np.radians(beta))
    h0 = L * t
    ground = np.array([[-20.0, h0], [0.0, h0], [L, 0.0], [L + 20.0, 0.0]])
    poly = np.vstack([ground, [[L + 20, -10.0], [-20, -10.0], [-20, h0]]])
    mat = Material("soil", unit_weight=18.0, unit_weight_sat=20.0, c=5.0, phi=30.0)
    water = Water(phreatic=ground - [0.0, z - hw]) if hw is not None else (Water(ru=ru) if ru else None)
    sec = Section(ground, [Zone("soil", "soil", poly)], {"soil": mat}, water=water, base_y=-10.0)
    gy = lambda x: h0 - x * t
    e = 0.025 * L  # end wedges scale with L, so their share of F falls as 1/L
    surf = Polyline([[e / 2, gy(e / 2) + 1], [e, gy(e) - z], [L - e, gy(L - e) - z], [L - e / 2, gy(L - e / 2) + 1]])
    return sec, surf


@pytest.mark.parametrize("method", ["ordinary", "bishop"])
@pytest.mark.parametrize("case", ["seepage", "ru"])
def test_infinite_slope_long_polyline_richardson(case, method):
    # Closed form (Skempton & DeLory 1957; Duncan, Wright & Brandon 2014):
    # F = [c' + (W/b cos^2 b - u) tan phi'] / (W/b sin b cos b); seepage parallel
    # to the slope: u = gw hw cos^2 b; ru: u = ru gamma z. The end wedges add a
    # term ~ 1/L (geometry scaled with L, equal slice width 2.5 m), so the
    # Richardson value 2F(2L) - F(L) is within O(1/L^2): 0.3 % at L = 400 m.
    b, z, hw, ru = np.radians(20.0), 3.0, 1.2, 0.25
    if case == "seepage":
        Wb, u = 18 * (z - hw) + 20 * hw, 9.81 * hw * np.cos(b) ** 2
        kw = {"hw": hw}
    else:
        Wb = 18 * z
        u = ru * Wb
        kw = {"ru": ru}
    exact = (5 + (Wb * np.cos(b) ** 2 - u) * np.tan(np.radians(30))) / (Wb * np.sin(b) * np.cos(b))
    f = []
    for L in (400.0, 800.0):
        sec, s = _long_slope(L, **kw)
        r = evaluate_surfaces(sec, s, method=method, n_slices=int(L / 2.5))
        assert r.counted[0]
        f.append(r.fs[0])
    assert abs(f[1] - exact) < abs(f[0] - exact)  # converging toward the closed form
    assert 2 * f[1] - f[0] == pytest.approx(exact, rel=3e-3)


# ------------------------------------------- water table, methods, slices --
def _two_zone_circles():
    sec = two_zone_section()
    return sec, Circles([36.0, 30.0, 40.0], [26.0, 30.0, 22.0], [24.0, 28.0, 22.5])


def test_water_table_lowers_fs_by_effective_stress():
    # Terzaghi's effective stress: the base resistance falls by u l tan phi', and
    # the Ordinary method's F is a ratio with a u-free denominator, so F is
    # linear in a factor k scaling the pore pressure: F(0) - F(1) = 2 (F(1/2) -
    # F(1)) exactly (round-off only), and the water table lowers F.
    sec, circ = _two_zone_circles()
    bank = build_bank(sec, circ)
    assert np.all(bank.u_base.max(axis=1) > 0)  # every circle dips below the water table
    c, tp = base_strength(bank, sec.materials)
    u0 = bank.u_base.copy()
    f = {}
    for k in (0.0, 0.5, 1.0):
        bank.u_base = k * u0
        f[k] = factor_of_safety(bank, c, tp, method="ordinary").fs[0]
    assert np.all(f[0.0] > f[1.0])
    np.testing.assert_allclose(f[0.0] - f[1.0], 2 * (f[0.5] - f[1.0]), rtol=1e-9)


def test_methods_ordering_on_one_section():
    # Common practice / theory (Fredlund & Krahn 1977; Duncan, Wright & Brandon
    # 2014): on circles Ordinary <= Bishop, and Bishop, Spencer and M-P agree
    # within a few per cent (Bishop satisfies moment equilibrium exactly on a
    # circle). 3 % is the spread reported by Fredlund & Krahn (recalled).
    sec, circ = _two_zone_circles()
    bank = build_bank(sec, circ)
    c, tp = base_strength(bank, sec.materials)
    fs = {m: factor_of_safety(bank, c, tp, method=m, tol=1e-9).fs[0]
          for m in ("ordinary", "bishop", "spencer", "morgenstern-price")}
    assert np.all(fs["ordinary"] <= fs["bishop"] + 1e-9)
    for m in ("spencer", "morgenstern-price"):
        np.testing.assert_allclose(fs[m], fs["bishop"], rtol=0.03)
    # Spencer = M-P with constant f (Morgenstern & Price 1965; Spencer 1967)
    np.testing.assert_allclose(fs["morgenstern-price"], fs["spencer"], rtol=1e-6)


def test_ordinary_equals_bishop_phi_zero_built_section():
    # tan phi = 0: m_alpha = cos a, Bishop's equation reduces to Ordinary's
    # (theory), here on a bank from the section builder with su(z).
    sec, circ = _two_zone_circles()
    bank = build_bank(sec, circ)
    c, tp = base_strength(bank, sec.materials, "undrained")
    tp = np.zeros_like(tp)
    a = factor_of_safety(bank, c, tp, method="ordinary").fs
    b = factor_of_safety(bank, c, tp, method="bishop", tol=1e-12).fs
    np.testing.assert_allclose(b, a, rtol=1e-10)


@pytest.mark.parametrize("method", ["bishop", "spencer"])
def test_slice_number_convergence(method):
    # Chord bases and trapezoidal slices converge as O(b^2) where no vertex
    # lies inside a slice; a ground, zone or water vertex inside a slice adds a
    # term that need not fall monotonically (seen on the second circle), so
    # only the size is checked: 160 -> 320 slices changes F by < 0.1 %, and
    # the 40-slice default is within 1 % of the 320-slice value.
    sec, circ = _two_zone_circles()
    f = []
    for n in (40, 80, 160, 320):
        bank = build_bank(sec, circ, n_slices=n)
        f.append(factor_of_safety(bank, *base_strength(bank, sec.materials), method=method, tol=1e-10).fs[0])
    f = np.array(f)
    assert np.all(np.abs(f[3] - f[2]) / f[3] < 1e-3)
    assert np.all(np.abs(f[3] - f[0]) / f[3] < 1e-2)


def test_mirror_symmetry_of_a_search():
    # A section and its mirror image are the same problem: the centre-lattice
    # search on both must give the same minimum (the lattice is mirrored with it).
    sec = simple_slope(10.0, 2.0, 1.5)
    g = sec.ground * [-1, 1]
    mg = g[::-1]
    poly = np.vstack([mg, [[mg[-1, 0], sec.base_y], [mg[0, 0], sec.base_y], mg[0]]])
    mir = Section(mg, [Zone("soil", "soil", poly)], sec.materials, base_y=sec.base_y)
    r1 = centre_lattice(sec, x_range=(-5.0, 25.0), y_range=(12.0, 30.0), nx=9, ny=9, n_radii=6)
    r2 = centre_lattice(mir, x_range=(-25.0, 5.0), y_range=(12.0, 30.0), nx=9, ny=9, n_radii=6)
    assert r1.fs_min == pytest.approx(r2.fs_min, rel=1e-9)
