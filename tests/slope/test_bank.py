"""Slice bank geometry against closed forms and scipy quadrature."""
import numpy as np
import pytest
from scipy import integrate

from slipfield.slope.bank import build_bank
from slipfield.slope.errors import InputError
from slipfield.slope.examples import simple_slope, two_zone_section
from slipfield.slope.loads import Loads, StripLoad, TensionCrack
from slipfield.slope.section import Section, Zone
from slipfield.slope.strength import Material, base_strength
from slipfield.slope.surfaces import Circle, Circles, Polyline, circle_through, cut_ground
from slipfield.slope.water import Water

GW = 9.81


def infinite_slope(beta_deg=20.0, z=3.0, hw=None, gamma=18.0, gamma_sat=20.0, ru=None):
    """A long straight slope and a polyline surface parallel to it at vertical depth z."""
    t = np.tan(np.radians(beta_deg))
    L = 200.0
    h0 = L * t
    ground = np.array([[-20.0, h0], [0.0, h0], [L, 0.0], [L + 20.0, 0.0]])
    base_y = -10.0
    poly = np.vstack([ground, [[L + 20, base_y], [-20, base_y], [-20, h0]]])
    mat = Material("soil", unit_weight=gamma, unit_weight_sat=gamma_sat, c=5.0, phi=30.0)
    water = None
    if hw is not None:
        water = Water(phreatic=ground - [0.0, z - hw])
    if ru is not None:
        water = Water(ru=ru)
    sec = Section(ground, [Zone("soil", "soil", poly)], {"soil": mat}, water=water, base_y=base_y)

    def gy(x):
        return h0 - x * t

    surf = Polyline([[5.0, gy(5.0) + 1.0], [10.0, gy(10.0) - z], [190.0, gy(190.0) - z], [195.0, gy(195.0) + 1.0]])
    return sec, surf, t


def interior(bank, lo=12.0, hi=188.0):
    x = bank.direction[0] * bank.x_mid[0]
    return (x - bank.width[0] > lo) & (x + bank.width[0] < hi)


def test_infinite_slope_slice_forces_closed_form():
    # Skempton & DeLory (1957); Duncan, Wright & Brandon (2014): with the water
    # table hw above the plane and seepage parallel to the slope,
    # u = γw hw cos²β; W/b = γ (z − hw) + γsat hw. Exact for straight lines.
    beta, z, hw = 20.0, 3.0, 1.2
    sec, surf, t = infinite_slope(beta, z, hw)
    bank = build_bank(sec, surf, n_slices=120)
    assert bank.valid[0] and bank.direction[0] == 1
    k = interior(bank)
    assert k.sum() > 80
    b = bank.width[0, k]
    c2 = np.cos(np.radians(beta)) ** 2
    np.testing.assert_allclose(bank.alpha[0, k], np.radians(beta), rtol=1e-12)
    np.testing.assert_allclose(bank.weight[0, k] / b, 18.0 * (z - hw) + 20.0 * hw, rtol=1e-10)
    np.testing.assert_allclose(bank.u_base[0, k], GW * hw * c2, rtol=1e-10)
    np.testing.assert_allclose(bank.depth[0, k], z, rtol=1e-10)
    np.testing.assert_allclose(bank.sigma_v_eff[0, k], 18.0 * (z - hw) + 20.0 * hw - GW * hw * c2, rtol=1e-10)
    np.testing.assert_allclose(bank.base_length[0, k], b / np.cos(np.radians(beta)), rtol=1e-12)
    # centre of gravity of a column of two unit weights (closed form)
    yb = bank.y_base[0, k]
    m = 20.0 * hw * (yb + hw / 2) + 18.0 * (z - hw) * (yb + hw + (z - hw) / 2)
    np.testing.assert_allclose(bank.y_centroid[0, k], m / (18.0 * (z - hw) + 20.0 * hw), rtol=1e-10)


def test_infinite_slope_ru():
    # ru = u / (γ z) (Bishop & Morgenstern 1960)
    sec, surf, t = infinite_slope(25.0, 4.0, ru=0.3)
    bank = build_bank(sec, surf, n_slices=120)
    k = interior(bank)
    np.testing.assert_allclose(bank.u_base[0, k], 0.3 * 18.0 * 4.0, rtol=1e-10)


def _mass_area(sec, circ, bank):
    """Area above the chords of the slice bases and below the ground (scipy quad + segments)."""
    x1, x2 = cut_ground(sec, circ)

    def depth(x):
        return sec.ground_y(x) - (circ.yc - np.sqrt(circ.radius ** 2 - (x - circ.xc) ** 2))

    pts = [p for p in sec.ground[:, 0] if x1 < p < x2]
    area, _ = integrate.quad(depth, x1, x2, points=pts or None, epsabs=1e-11, epsrel=1e-12, limit=200)
    # circular segments between each base chord and the arc: R²/2 (θ − sin θ)
    chord = np.hypot(bank.width[0], bank.y_base_left[0] - bank.y_base_right[0])
    th = 2 * np.arcsin(chord / (2 * circ.radius))
    return area - np.sum(circ.radius ** 2 / 2 * (th - np.sin(th)))


def test_circle_weight_exact_without_kinks():
    # Entry and exit both on the face of simple_slope: the ground is straight over
    # the whole mass, so Gauss quadrature of the linear integrand is exact.
    sec = simple_slope(height=10.0, cot_beta=2.0)
    circ = circle_through((4.0, 2.0), (10.0, 3.0), (16.0, 8.0))
    bank = build_bank(sec, circ, n_slices=30)
    assert bank.valid[0]
    assert bank.weight.sum() == pytest.approx(20.0 * _mass_area(sec, circ, bank), rel=1e-9)


def test_circle_weight_with_crest_kink_bound():
    # One kink of the ground (the crest, slope change Δs = 0.5) inside the mass: a
    # rule exact for linear integrands errs by at most γ |Δs| b² on that slice
    # (|∫(x−x0)⁺ − Q[(x−x0)⁺]| ≤ b²), b the slice width.
    sec = simple_slope(height=10.0, cot_beta=2.0)
    circ = Circle(8.0, 24.0, 24.5)
    bank = build_bank(sec, circ, n_slices=40)
    assert bank.valid[0]
    x1, x2 = cut_ground(sec, circ)
    assert 0.0 < x1 < 20.0 < x2  # exits on the face, enters on the crest
    b = bank.width[0, 0]
    ref = 20.0 * _mass_area(sec, circ, bank)
    assert abs(bank.weight.sum() - ref) <= 20.0 * 0.5 * b * b
    assert ref > 100


def _mirror(sec):
    def m(p):
        p = np.array(p, float)
        p[:, 0] *= -1
        return p

    zones = [Zone(z.name, z.material, np.vstack([m(z.polygon)[::-1], m(z.polygon)[::-1][:1]])) for z in sec.zones]
    w = sec.water
    water = None if w is None else Water(phreatic=None if w.phreatic is None else m(w.phreatic)[::-1], ru=w.ru,
                                         piezometric={k: m(v)[::-1] for k, v in w.piezometric.items()})
    loads = sec.loads
    if loads is not None:
        loads = Loads([StripLoad(-s.x2, -s.x1, s.q2, s.q) for s in loads.strips], kh=loads.kh, crack=loads.crack)
    return Section(m(sec.ground)[::-1], zones, sec.materials, water=water, loads=loads, base_y=sec.base_y)


def test_mirror_image_gives_identical_bank():
    # The sliding frame makes a mirror-image section give the same arrays.
    sec = two_zone_section()
    sec = Section(sec.ground, sec.zones, sec.materials, water=sec.water,
                  loads=Loads([StripLoad(5.0, 15.0, 20.0, 10.0)], crack=TensionCrack(2.0, water_filled=True)),
                  base_y=sec.base_y)
    rng = np.random.default_rng(3)
    xc, yc, r = rng.uniform(25, 45, 200), rng.uniform(15, 35, 200), rng.uniform(15, 35, 200)
    a = build_bank(sec, Circles(xc, yc, r))
    b = build_bank(_mirror(sec), Circles(-xc, yc, r))
    assert a.valid.sum() > 50
    np.testing.assert_array_equal(a.valid, b.valid)
    assert np.all(a.direction[a.valid] == 1) and np.all(b.direction[b.valid] == -1)
    for name in ("x_left", "width", "y_base", "alpha", "weight", "y_centroid", "u_base", "sigma_v_eff",
                 "q_v", "q_h", "x_q", "y_q", "zone", "crack_force", "centre_x"):
        v = a.valid
        np.testing.assert_allclose(getattr(a, name)[v], getattr(b, name)[v], rtol=1e-9, atol=1e-9, err_msg=name)


def test_tension_crack_water_force():
    # A water-filled crack of depth zc pushes with γw zc²/2 at zc/3 above its bottom (hydrostatics).
    zc = 2.5
    sec = simple_slope(loads=Loads(crack=TensionCrack(zc, water_filled=True)))
    bank = build_bank(sec, Circle(8.0, 24.0, 24.5))
    assert bank.valid[0]
    assert bank.y_top_left[0, 0] - bank.y_base_left[0, 0] == pytest.approx(zc, rel=1e-6)
    assert bank.crack_force[0] == pytest.approx(GW * zc * zc / 2, rel=1e-5)
    assert bank.crack_y[0] == pytest.approx(bank.y_base_left[0, 0] + zc / 3, rel=1e-9)
    # a dry crack truncates the surface the same way but pushes nothing
    dry = build_bank(simple_slope(loads=Loads(crack=TensionCrack(zc))), Circle(8.0, 24.0, 24.5))
    assert dry.crack_force[0] == 0.0
    assert dry.x_left[0, 0] == pytest.approx(bank.x_left[0, 0])


def test_ponded_water_on_face():
    # Water ponded to y = 4 m against a 2H:1V face. Hydrostatics: the vertical
    # load is γw × the wetted area above the mass; the horizontal thrust on the
    # face is γw h²/2 = 78.48 kN/m, pushing into the slope (here −x').
    h = 4.0
    sec = simple_slope(water=Water(phreatic=[[-30.0, h], [60.0, h]]))
    circ = Circle(10.0, 22.0, 26.0)
    bank = build_bank(sec, circ, n_slices=37)
    assert bank.valid[0] and bank.direction[0] == -1
    x1, _ = cut_ground(sec, circ)
    assert x1 < 0  # exits on the level ground in front of the toe
    wet_area = h * (0.0 - x1) + h * (2 * h) / 2
    assert bank.q_v.sum() == pytest.approx(GW * wet_area, rel=1e-10)
    assert bank.q_h.sum() == pytest.approx(-GW * h * h / 2, rel=1e-10)
    # hydrostatic pore pressure under the ponded level ground: u = γw (h − y)
    k = bank.direction[0] * bank.x_mid[0] < x1 + 1.0
    np.testing.assert_allclose(bank.u_base[0, k], GW * (h - bank.y_base[0, k]), rtol=1e-10)


def test_strip_load_total():
    # A uniform strip of 25 kPa over 6 m lying wholly on the mass gives 150 kN/m.
    sec = simple_slope(loads=Loads([StripLoad(22.0, 28.0, 25.0)]))
    bank = build_bank(sec, Circle(8.0, 24.0, 24.5))
    assert bank.q_v.sum() == pytest.approx(150.0, rel=1e-12)
    # its resultant acts at x = 25 m (section frame); x_q is in the sliding frame
    loaded = bank.q_v[0] > 0
    xs = bank.direction[0] * bank.x_q[0, loaded]
    assert np.sum(xs * bank.q_v[0, loaded]) / 150.0 == pytest.approx(25.0, rel=1e-12)


def test_rejections_are_counted_with_reasons():
    sec = simple_slope()
    circles = Circles([8.0, 8.0, 8.0, 100.0], [24.0, 24.0, 24.0, 50.0], [24.5, 40.0, 1.0, 5.0])
    bank = build_bank(sec, circles)
    assert list(bank.valid) == [True, False, False, False]
    assert "section base" in bank.reason[1]
    assert "twice" in bank.reason[2] and "twice" in bank.reason[3]
    assert np.all(np.isnan(bank.weight[~bank.valid]))
    with pytest.raises(InputError, match="does not cut the ground line twice"):
        cut_ground(sec, Circle(8.0, 24.0, 1.0))


def test_circle_through_three_points():
    c = circle_through((0, 0), (2, 2), (4, 0))
    assert (c.xc, c.yc, c.radius) == pytest.approx((2.0, 0.0, 2.0))
    with pytest.raises(InputError, match="collinear"):
        circle_through((0, 0), (1, 1), (2, 2))


def test_base_strength_models():
    # su laws evaluated at the base midpoints (definitions in slope.strength)
    mat = Material("clay", unit_weight=18.0, c=5.0, phi=25.0, su_model="depth", su=10.0, su_gradient=2.0)
    sec = simple_slope(material=mat)
    bank = build_bank(sec, Circle(8.0, 24.0, 24.5))
    c, t = base_strength(bank, sec.materials, "undrained")
    np.testing.assert_allclose(c, 10.0 + 2.0 * bank.depth)
    assert np.all(t == 0)
    c, t = base_strength(bank, sec.materials, "drained")
    np.testing.assert_allclose(t, np.tan(np.radians(25.0)))
    elev = {"clay": Material("clay", 18.0, su_model="elevation", su=30.0, su_gradient=1.5, su_datum=10.0)}
    c, _ = base_strength(bank, elev, "undrained")
    np.testing.assert_allclose(c, 30.0 + 1.5 * (10.0 - bank.y_base))
    ratio = {"clay": Material("clay", 18.0, su_model="ratio", su_ratio=0.25, su_min=2.0)}
    c, _ = base_strength(bank, ratio, "undrained")
    np.testing.assert_allclose(c, np.maximum(0.25 * bank.sigma_v_eff, 2.0))
    with pytest.raises(InputError, match="no drained strength"):
        base_strength(bank, ratio, "drained")


def test_base_strength_overrides_broadcast():
    sec = two_zone_section()
    bank = build_bank(sec, Circles([40.0, 38.0], [30.0, 28.0], [30.0, 27.0]))
    rng = np.random.default_rng(0)
    phi = rng.uniform(20, 30, size=(5, 2, 40))
    su = np.full((5, 1, 1), np.nan)  # NaN keeps the material's su
    c, t = base_strength(bank, sec.materials, "drained", overrides={"phi": phi})
    assert c.shape == t.shape == (5, 2, 40)
    np.testing.assert_allclose(t, np.tan(np.radians(phi)))
    cu, tu = base_strength(bank, sec.materials, "undrained", overrides={"su": su})
    c0, _ = base_strength(bank, sec.materials, "undrained")
    clay = bank.zone == 1
    np.testing.assert_allclose(cu[:, clay], np.broadcast_to(c0[clay], (5, clay.sum())))
    # fill has no undrained model: it stays drained (c', φ') in the undrained analysis
    assert np.all(tu[:, ~clay] == pytest.approx(np.tan(np.radians(32.0))))
    with pytest.raises(InputError, match="unknown key"):
        base_strength(bank, sec.materials, "drained", overrides={"cohesion": 1.0})


@pytest.mark.parametrize("water", ["phreatic", "ru"])
def test_scaled_unit_weights_equal_a_bank_built_with_them(water):
    # weights, their moments, σ'v and ru pore pressures are linear in the unit
    # weights (vertical integration of γ over the column): the parts from one
    # doubled zone at a time reproduce a bank built with other unit weights
    from dataclasses import replace

    from slipfield.slope.bank import scale_unit_weights, unit_weight_parts

    sec = two_zone_section()
    if water == "ru":
        sec = Section(sec.ground, [replace(z, polygon=np.vstack([z.polygon, z.polygon[:1]])) for z in sec.zones],
                      sec.materials, water=Water(ru=0.3), base_y=sec.base_y)
    circles = Circles(np.array([20.0, 25.0, 30.0]), np.array([30.0, 34.0, 40.0]), np.array([18.0, 24.0, 30.0]))
    bank = build_bank(sec, circles, 24)
    assert bank.valid.sum() >= 2
    factors = {0: 1.17, 1: 0.91}
    mats = dict(sec.materials)
    for i, z in enumerate(sec.zones):
        m = mats[z.material]
        mats[z.material] = replace(m, unit_weight=m.unit_weight * factors[i],
                                   unit_weight_sat=m.unit_weight_sat * factors[i])
    other = Section(sec.ground, [replace(z, polygon=np.vstack([z.polygon, z.polygon[:1]])) for z in sec.zones],
                    mats, water=sec.water, loads=sec.loads, base_y=sec.base_y)
    want = build_bank(other, circles, 24)
    got = scale_unit_weights(bank, unit_weight_parts(sec, circles, [0, 1], 24), factors)
    ok = want.valid
    for k in ("weight", "y_centroid", "sigma_v_eff", "u_base"):
        np.testing.assert_allclose(getattr(got, k)[ok], getattr(want, k)[ok], rtol=1e-10, atol=1e-9, err_msg=k)
