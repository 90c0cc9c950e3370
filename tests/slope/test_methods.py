"""Methods of slices against closed forms, theory and each other.

Banks are built by hand here (trapezoidal slices between boundary points on
the surface and the ground) so the methods are checked independently of the
bank builder; the mirror-image check uses :func:`slope.bank.build_bank`.
"""
import numpy as np
import pytest
from scipy.optimize import brentq

from slipfield.slope.errors import InputError
from slipfield.slope.methods import FSResult, factor_of_safety, prepare_bank
from slipfield.slope.methods.janbu import janbu_depth_ratio, janbu_f0
from slipfield.slope.methods.result import NEGATIVE_NORMAL, NEGATIVE_STRENGTH, SMALL_M_ALPHA, THRUST_OUTSIDE
from slipfield.slope.slices import SliceBank

GW = 9.81
ALL_METHODS = ["ordinary", "bishop", "janbu", "spencer", "morgenstern-price"]


# ---------------------------------------------------------------- helpers --
def make_bank(xb, yb, yt, gamma=20.0, u=None, kh=0.0, centre=(np.nan, np.nan, np.nan),
              q_v=None, q_h=None, x_q=None, y_q=None, crack_force=0.0, crack_y=np.nan):
    """Bank from boundary points (sliding frame), arrays (m, n + 1).

    Slices are trapezoids between straight chords of the surface and the
    ground; the weight acts at mid-width, its centroid at mid-height.
    """
    xb, yb, yt = (np.atleast_2d(np.asarray(a, float)) for a in (xb, yb, yt))
    m, n1 = xb.shape
    n = n1 - 1
    xl, xr = xb[:, :-1], xb[:, 1:]
    ybl, ybr = yb[:, :-1], yb[:, 1:]
    ytl, ytr = yt[:, :-1], yt[:, 1:]
    b = xr - xl
    area = 0.5 * ((ytl - ybl) + (ytr - ybr)) * b
    alpha = np.arctan2(ybl - ybr, b)
    ybase, ytop = 0.5 * (ybl + ybr), 0.5 * (ytl + ytr)
    W = gamma * area
    ub = np.zeros((m, n)) if u is None else np.broadcast_to(u, (m, n)).astype(float)
    z = np.zeros((m, n))
    nan = np.full((m, n), np.nan)
    cx, cy, r = (np.broadcast_to(np.asarray(v, float), (m,)).copy() for v in centre)
    return SliceBank(
        direction=np.ones(m, int), x_left=xl, x_right=xr, width=b, x_mid=0.5 * (xl + xr),
        y_base_left=ybl, y_base_right=ybr, y_base=ybase, y_top_left=ytl, y_top_right=ytr,
        y_top=ytop, alpha=alpha, base_length=b / np.cos(alpha), weight=W,
        y_centroid=0.5 * (ybase + ytop), u_base=ub, sigma_v_eff=gamma * (ytop - ybase) - ub,
        depth=ytop - ybase, zone=np.zeros((m, n), int),
        q_v=z if q_v is None else np.asarray(q_v, float),
        q_h=z if q_h is None else np.asarray(q_h, float),
        x_q=nan if x_q is None else np.asarray(x_q, float),
        y_q=nan if y_q is None else np.asarray(y_q, float), kh=kh,
        crack_force=np.broadcast_to(np.asarray(crack_force, float), (m,)).copy(),
        crack_y=np.broadcast_to(np.asarray(crack_y, float), (m,)).copy(),
        centre_x=cx, centre_y=cy, radius=r, valid=np.ones(m, bool),
        reason=np.array([""] * m, dtype=object), zone_names=["soil"])


def infinite_slope_bank(beta_deg, z, u, n=20, length=60.0, gamma=20.0):
    """Parallelogram block of an infinite slope: base and ground inclined at β.

    z is the vertical depth of the plane below the ground (m); end faces are
    vertical and free, so each slice is in equilibrium on its own.
    """
    x = np.linspace(0.0, length, n + 1)
    yb = -x * np.tan(np.radians(beta_deg))
    return make_bank(x, yb, yb + z, gamma=gamma, u=np.full((1, n), u))


def circle_bank(xc, yc, R, ground, n=40, gamma=20.0, u_fn=None, **kw):
    """Circle (lower arc) below a ground line given as a function of x'."""
    base = lambda x: yc - np.sqrt(np.maximum(R ** 2 - (x - xc) ** 2, 0.0))
    g = lambda x: ground(x) - base(x)
    xs = np.linspace(xc - R, xc + R, 4001)[1:-1]
    d = g(xs)
    idx = np.where(np.diff(np.sign(d)) != 0)[0]
    x0 = brentq(g, xs[idx[0]], xs[idx[0] + 1], xtol=1e-13)
    x1 = brentq(g, xs[idx[-1]], xs[idx[-1] + 1], xtol=1e-13)
    x = np.linspace(x0, x1, n + 1)
    yb = base(x)
    yt = ground(x)
    yt[0], yt[-1] = yb[0], yb[-1]
    u = None
    if u_fn is not None:
        xm = 0.5 * (x[1:] + x[:-1])
        u = u_fn(xm, 0.5 * (yb[1:] + yb[:-1]))[None, :]
    return make_bank(x, yb, yt, gamma=gamma, centre=(xc, yc, R), u=u, **kw)


def stack(banks):
    """Rows of several one-surface banks with the same number of slices."""
    out = {}
    for name, v in banks[0].__dict__.items():
        if isinstance(v, np.ndarray):
            out[name] = np.concatenate([getattr(b, name) for b in banks], axis=0)
        else:
            out[name] = v
    return SliceBank(**out)


def slope_ground(height=10.0, cot=2.0, x_crest=0.0):
    """Ground of a simple slope descending toward +x' (crest at x' = x_crest)."""
    def g(x):
        return np.clip(height - (x - x_crest) / cot, 0.0, height)
    return g


def polyline_bank(points, ground, n=40, gamma=20.0, u=None, **kw):
    """Non-circular surface through ``points`` (x', y), clipped to the ground ends."""
    px, py = np.asarray(points, float).T
    x = np.linspace(px[0], px[-1], n + 1)
    yb = np.interp(x, px, py)
    yt = ground(x)
    yt[0], yt[-1] = yb[0], yb[-1]
    return make_bank(x, yb, yt, gamma=gamma, u=u, **kw)


def rel(a, b):
    return np.abs(np.asarray(a) - np.asarray(b)) / np.abs(np.asarray(b))


# ------------------------------------------------- infinite slope (closed) --
# Skempton & DeLory 1957; Duncan, Wright & Brandon 2014, Soil Strength and
# Slope Stability, 2nd ed.: F = [c' + (γ z cos²β − u) tanφ'] / (γ z sinβ cosβ).
BETA, Z, GAMMA, C, PHI = 26.0, 5.0, 19.0, 6.0, 32.0


def _infinite_cases():
    b = np.radians(BETA)
    return {
        "dry": 0.0,
        # seepage parallel to the slope, water table at the ground (h_w = z):
        # u = γw h_w cos²β
        "seepage": GW * Z * np.cos(b) ** 2,
        # ru = 0.25: u = ru γ z
        "ru": 0.25 * GAMMA * Z,
    }


def _closed_form(u):
    b = np.radians(BETA)
    return (C + (GAMMA * Z * np.cos(b) ** 2 - u) * np.tan(np.radians(PHI))) / (
        GAMMA * Z * np.sin(b) * np.cos(b))


@pytest.mark.parametrize("case", ["dry", "seepage", "ru"])
@pytest.mark.parametrize("method,interslice", [(m, "constant") for m in ALL_METHODS]
                         + [("morgenstern-price", "half-sine")])
def test_infinite_slope_closed_form(method, interslice, case):
    u = _infinite_cases()[case]
    bank = infinite_slope_bank(BETA, Z, u, gamma=GAMMA)
    kw = {"interslice": interslice} if method == "morgenstern-price" else {}
    res = factor_of_safety(bank, C, np.tan(np.radians(PHI)), method=method, tol=1e-10, **kw)
    # every slice of the parallelogram is exact, so only the solver tolerance remains
    assert res.converged.all() and res.admissible.all()
    np.testing.assert_allclose(res.fs, _closed_form(u), rtol=1e-8)


def test_infinite_slope_ru_form():
    # The ru version of the closed form (Duncan, Wright & Brandon 2014):
    # F = c'/(γ z sinβ cosβ) + (1 − ru sec²β) tanφ'/tanβ
    ru = 0.25
    b = np.radians(BETA)
    expected = C / (GAMMA * Z * np.sin(b) * np.cos(b)) + (1 - ru / np.cos(b) ** 2) * np.tan(
        np.radians(PHI)) / np.tan(b)
    bank = infinite_slope_bank(BETA, Z, ru * GAMMA * Z, gamma=GAMMA)
    res = factor_of_safety(bank, C, np.tan(np.radians(PHI)), method="bishop", tol=1e-10)
    np.testing.assert_allclose(res.fs, expected, rtol=1e-8)


# ------------------------------------------------------- circles, φ = 0 ----
def _segment_closed_form(R, p, beta, c, gamma):
    """φ = 0 circle under a straight ground line: F = c R² θ / (γ A d sinβ).

    Circular segment of central angle θ = 2 acos(p/R) (p: distance of the
    ground line from the centre): area A = R²(θ − sinθ)/2, centroid at
    d = 4 R sin³(θ/2) / (3(θ − sinθ)) from the centre on the normal to the
    chord (standard results, e.g. Roark's Formulas for Stress and Strain,
    table of properties of plane areas). The resisting moment of the arc is
    c R · Rθ; the weight's arm about the centre is d sinβ.
    """
    th = 2 * np.arccos(p / R)
    A = R ** 2 * (th - np.sin(th)) / 2
    d = 4 * R * np.sin(th / 2) ** 3 / (3 * (th - np.sin(th)))
    return c * R ** 2 * th / (gamma * A * d * np.sin(beta))


def _segment_bank(n, R=12.0, p=8.0, beta_deg=20.0, gamma=18.0):
    beta = np.radians(beta_deg)
    # ground line x sinβ + y cosβ = −p: distance p below the centre (0, 0),
    # descending toward +x'
    ground = lambda x: (-p - x * np.sin(beta)) / np.cos(beta)
    return circle_bank(0.0, 0.0, R, ground, n=n, gamma=gamma)


@pytest.mark.parametrize("method", ["ordinary", "bishop"])
def test_phi_zero_circle_closed_form_and_convergence(method):
    # both ends of the chord lie below the centre, so the mass is a segment
    # bounded by the lower arc (what slices can represent)
    R, p, beta, c, gamma = 12.0, 8.0, np.radians(20.0), 25.0, 18.0
    exact = _segment_closed_form(R, p, beta, c, gamma)
    err = []
    for n in (50, 100, 200):
        res = factor_of_safety(_segment_bank(n), c, 0.0, method=method, tol=1e-12)
        # (Bishop's N' turns negative under the steep crest slices when the
        # strength is all cohesion: flagged, but F is still the right number)
        assert res.converged.all()
        err.append(res.fs[0, 0] - exact)
    err = np.array(err)
    # chord bases and trapezoidal slices are second-order accurate: halving the
    # slice width must divide the error by 4 (3.5-4.5 allows the next order),
    # which shows convergence to the closed form rather than to anything else
    ratios = err[:-1] / err[1:]
    assert np.all((ratios > 3.5) & (ratios < 4.5)), ratios
    assert abs(err[-1]) / exact < 1e-3


def test_phi_zero_bishop_equals_ordinary():
    # Theory: with tanφ = 0, m_alpha = cos a and Bishop's equation reduces to
    # the Ordinary method's, for any circle (e.g. Duncan, Wright & Brandon 2014).
    ground = slope_ground()
    banks = [circle_bank(xc, yc, R, ground, u_fn=lambda x, y: np.maximum(5.0 - y, 0) * GW)
             for xc, yc, R in [(12.0, 18.0, 16.0), (10.0, 22.0, 22.0), (16.0, 14.0, 11.0)]]
    bank = stack(banks)
    rng = np.random.default_rng(3)
    c = rng.uniform(10, 40, (4, 3, 40))
    fo = factor_of_safety(bank, c, 0.0, method="ordinary").fs
    fb = factor_of_safety(bank, c, 0.0, method="bishop", tol=1e-12).fs
    np.testing.assert_allclose(fb, fo, rtol=1e-10)


# ------------------------------------- Spencer vs Morgenstern-Price (f = 1) --
def _mixed_bank(kh=0.0, surcharge=0.0, crack=0.0):
    """Three circles and two polylines on a 10 m high 2H:1V slope, with water."""
    ground = slope_ground()
    u_fn = lambda x, y: np.maximum(6.0 - 0.2 * x - y, 0.0) * GW
    circles = [(12.0, 18.0, 16.0), (10.0, 22.0, 22.0), (16.0, 14.0, 11.0)]
    banks = [circle_bank(*cr, ground, u_fn=u_fn) for cr in circles]
    for pts in ([(-4.0, 10.0), (2.0, 2.5), (14.0, -1.0), (24.0, 0.0)],
                [(-2.0, 10.0), (4.0, 4.0), (10.0, 1.0), (21.0, 0.0)]):
        x = np.linspace(pts[0][0], pts[-1][0], 41)
        xm = 0.5 * (x[1:] + x[:-1])
        ym = np.interp(xm, *np.asarray(pts).T)
        banks.append(polyline_bank(pts, ground, u=u_fn(xm, ym)[None, :]))
    bank = stack(banks)
    bank.kh = kh
    if surcharge:
        # a strip on the crest: vertical load on slices whose top is at the crest
        on_crest = bank.y_top >= 10.0 - 1e-9
        bank.q_v = np.where(on_crest, surcharge * bank.width, 0.0)
        bank.x_q = np.where(on_crest, bank.x_mid, np.nan)
        bank.y_q = np.where(on_crest, bank.y_top, np.nan)
    if crack:
        bank.crack_force = np.full(bank.n_surfaces, crack)
        bank.crack_y = bank.y_base_left[:, 0] + 0.5
    return bank


@pytest.mark.parametrize("loads", [{}, {"kh": 0.12}, {"surcharge": 20.0, "crack": 15.0}])
def test_spencer_equals_morgenstern_price_constant(loads):
    # Spencer (1967) is Morgenstern-Price with f = 1; the two are solved by
    # independent code here (closed-form Q per slice vs the E recursion).
    bank = _mixed_bank(**loads)
    rng = np.random.default_rng(7)
    c = rng.uniform(5, 20, (3, 1, 1))
    tp = np.tan(np.radians(rng.uniform(20, 35, (3, 1, 1))))
    sp = factor_of_safety(bank, c, tp, method="spencer", tol=1e-10, return_forces=True)
    mp = factor_of_safety(bank, c, tp, method="morgenstern-price", interslice="constant",
                          tol=1e-10, return_forces=True)
    assert sp.converged.all() and mp.converged.all()
    np.testing.assert_allclose(mp.fs, sp.fs, rtol=1e-8)
    np.testing.assert_allclose(mp.lam, sp.lam, atol=1e-7)
    np.testing.assert_allclose(mp.E, sp.E, atol=1e-6 * np.abs(sp.E).max())
    inner = slice(1, -1)
    np.testing.assert_allclose(mp.thrust_y[..., inner], sp.thrust_y[..., inner], atol=1e-5)
    np.testing.assert_array_equal(mp.flags, sp.flags)


@pytest.mark.parametrize("method,interslice", [("spencer", "constant"),
                                               ("morgenstern-price", "half-sine"),
                                               ("morgenstern-price", "clipped-sine")])
def test_full_equilibrium_independent_of_moment_point(method, interslice):
    # Methods satisfying force and moment equilibrium cannot depend on the
    # point moments are taken about (statics).
    bank = _mixed_bank(kh=0.1)
    kw = {"interslice": interslice} if method != "spencer" else {}
    a = factor_of_safety(bank, 8.0, 0.5, method=method, tol=1e-10, **kw)
    b = factor_of_safety(bank, 8.0, 0.5, method=method, tol=1e-10,
                         moment_point=(np.full(5, -30.0), np.full(5, 60.0)), **kw)
    assert a.converged.all() and b.converged.all()
    np.testing.assert_allclose(a.fs, b.fs, rtol=1e-8)
    np.testing.assert_allclose(a.lam, b.lam, atol=1e-7)


@pytest.mark.parametrize("method,interslice", [("spencer", "constant"),
                                               ("morgenstern-price", "half-sine"),
                                               ("morgenstern-price", "tabulated")])
def test_every_slice_in_equilibrium(method, interslice):
    # Statics of each slice from the returned forces: horizontal, vertical and
    # moment about the base midpoint must vanish, including the last slice,
    # which the solver never imposes directly (it follows from the overall
    # moment equation).
    bank = _mixed_bank(kh=0.08, surcharge=10.0, crack=8.0)
    kw = {}
    if method != "spencer":
        kw["interslice"] = interslice
        if interslice == "tabulated":
            kw["interslice_table"] = ([0, 0.3, 1.0], [0.2, 1.0, 0.4])
    c, tp = 10.0, np.tan(np.radians(28.0))
    r = factor_of_safety(bank, c, tp, method=method, tol=1e-11, return_forces=True, **kw)
    assert r.converged.all()
    F = r.fs[0][:, None]
    E, X, yt, Ne = r.E[0], r.X[0], r.thrust_y[0], r.normal_eff[0]
    a = bank.alpha
    N = Ne + bank.u_base * bank.base_length
    S = (c * bank.base_length + Ne * tp) / F
    W = bank.weight
    Bx = bank.kh * W + bank.q_h
    Bx[:, 0] += bank.crack_force
    H = E[:, :-1] - E[:, 1:] + Bx + N * np.sin(a) - S * np.cos(a)
    V = X[:, 1:] - X[:, :-1] - W - bank.q_v + N * np.cos(a) + S * np.sin(a)
    scale = W.sum(axis=1, keepdims=True)
    assert np.abs(H).max() / scale.min() < 1e-8
    assert np.abs(V).max() / scale.min() < 1e-8
    # moments about each base midpoint (ccw +); E acts at the thrust line,
    # ends (E = 0) carry no moment
    ytl = np.nan_to_num(yt[:, :-1])
    ytr = np.nan_to_num(yt[:, 1:])
    xm, yb = bank.x_mid, bank.y_base
    Mq = np.where(bank.q_v != 0, (np.nan_to_num(bank.x_q) - xm) * (-bank.q_v), 0.0)
    Ms = -(bank.y_centroid - yb) * bank.kh * W
    Mc = np.zeros_like(W)
    Mc[:, 0] = -(bank.crack_y - yb[:, 0]) * bank.crack_force
    Ml = (bank.x_left - xm) * (-X[:, :-1]) - (ytl - yb) * E[:, :-1]
    Mr = (bank.x_right - xm) * X[:, 1:] + (ytr - yb) * E[:, 1:]
    Mres = Mq + Ms + Mc + Ml + Mr
    # the last slice: E_n = 0 so its thrust height drops out; its residual is
    # the overall moment balance
    assert np.abs(Mres).max() / (scale.min() * 10.0) < 1e-7


# ---------------------------------------------------------- mirror images --
def _mirrored_sections():
    from slipfield.slope.section import Section, Zone
    from slipfield.slope.strength import Material
    from slipfield.slope.water import Water
    mat = Material("soil", unit_weight=19.0, unit_weight_sat=20.0, c=8.0, phi=28.0)
    g = np.array([[-30.0, 10.0], [0.0, 10.0], [20.0, 0.0], [50.0, 0.0]])
    w = np.array([[-30.0, 6.0], [0.0, 5.0], [20.0, 0.0], [50.0, 0.0]])
    base = -10.0

    def build(ground, water):
        poly = np.vstack([ground, [[ground[-1, 0], base], [ground[0, 0], base], ground[0]]])
        return Section(ground, [Zone("soil", "soil", poly)], {"soil": mat},
                       water=Water(phreatic=water), base_y=base)

    mirror = lambda p: (p * [-1, 1])[::-1]
    return build(g, w), build(mirror(g), mirror(w))


@pytest.mark.parametrize("method", ALL_METHODS)
def test_mirror_image_sections_give_equal_fs(method):
    # A section and its mirror image are the same problem (symmetry of statics).
    from slipfield.slope.bank import build_bank
    from slipfield.slope.surfaces import Circles
    from slipfield.slope.strength import base_strength
    right, left = _mirrored_sections()
    xc = np.array([8.0, 12.0, 5.0])
    yc = np.array([18.0, 20.0, 15.0])
    R = np.array([16.0, 21.0, 12.0])
    b1 = build_bank(right, Circles(xc, yc, R))
    b2 = build_bank(left, Circles(-xc, yc, R))
    assert b1.valid.all() and b2.valid.all()
    r1 = factor_of_safety(b1, *base_strength(b1, right.materials), method=method)
    r2 = factor_of_safety(b2, *base_strength(b2, left.materials), method=method)
    assert r1.converged.all()
    np.testing.assert_allclose(r2.fs, r1.fs, rtol=1e-9)


# ------------------------------------------------ vectorised vs one by one --
@pytest.mark.parametrize("method", ALL_METHODS)
def test_vectorised_equals_per_sample_loop(method):
    bank = _mixed_bank(kh=0.05)
    rng = np.random.default_rng(11)
    S, M, N = 4, bank.n_surfaces, bank.n_slices
    c = rng.lognormal(np.log(10), 0.3, (S, M, N))
    tp = np.tan(np.radians(rng.uniform(22, 34, (S, M, N))))
    kw = {"interslice": "half-sine"} if method == "morgenstern-price" else {}
    full = factor_of_safety(bank, c, tp, method=method, **kw)
    terms = prepare_bank(bank)
    for s in range(S):
        for m in range(M):
            one = factor_of_safety(bank.subset([m]), c[s, m], tp[s, m], method=method, **kw)
            assert one.fs.shape == (1, 1)
            # same arithmetic in the same order: identical up to round-off
            np.testing.assert_allclose(one.fs[0, 0], full.fs[s, m], rtol=1e-12)
            assert one.converged[0, 0] == full.converged[s, m]
            assert one.flags[0, 0] == full.flags[s, m]
    again = factor_of_safety(terms, c, tp, method=method, **kw)
    np.testing.assert_array_equal(again.fs, full.fs)


def test_strength_broadcasting():
    bank = _mixed_bank()
    per_surface = np.array([5.0, 8.0, 10.0, 12.0, 15.0])[:, None]
    a = factor_of_safety(bank, per_surface, 0.5)
    b = factor_of_safety(bank, np.broadcast_to(per_surface, (1, 5, 40)).copy(),
                         np.full((1, 5, 40), 0.5))
    np.testing.assert_array_equal(a.fs, b.fs)
    assert a.fs.shape == (1, 5)


# ----------------------------------------------------------------- Janbu --
def test_janbu_depth_ratio_of_circle():
    # For a circular arc of half-angle ψ: chord L = 2R sinψ, depth d = R(1 − cosψ)
    # (sagitta), exact geometry; chord bases put the boundary points on the arc.
    R = 15.0
    bank = circle_bank(0.0, 0.0, R, lambda x: np.full_like(x, -9.0), n=40)
    psi = np.arccos(9.0 / R)
    np.testing.assert_allclose(janbu_depth_ratio(prepare_bank(bank)),
                               R * (1 - np.cos(psi)) / (2 * R * np.sin(psi)), rtol=1e-12)


def test_janbu_f0_curve_fit_values():
    # Curve fit to Janbu's chart, value recalled from Abramson et al. (2002):
    # f0 = 1 + b1 (d/L − 1.4 (d/L)²), b1 = 0.69 (c only), 0.31 (φ only), 0.50.
    r = np.array([0.2])
    one = np.ones((1, 1, 3))
    zero = np.zeros((1, 1, 3))
    np.testing.assert_allclose(janbu_f0(r, one, zero), 1 + 0.69 * (0.2 - 1.4 * 0.04))
    np.testing.assert_allclose(janbu_f0(r, zero, one), 1 + 0.31 * (0.2 - 1.4 * 0.04))
    np.testing.assert_allclose(janbu_f0(r, one, one), 1 + 0.50 * (0.2 - 1.4 * 0.04))


def test_janbu_uncorrected_is_horizontal_force_balance():
    # With f0 switched off, Janbu's F is the F at which the horizontal forces on
    # the mass balance with X = 0; check that balance directly.
    bank = _mixed_bank(kh=0.1)
    c, tp = 10.0, 0.55
    r = factor_of_safety(bank, c, tp, method="janbu", correction=False, tol=1e-12,
                         return_forces=True)
    F = r.fs[0][:, None]
    Ne = r.normal_eff[0]
    S = (c * bank.base_length + Ne * tp) / F
    N = Ne + bank.u_base * bank.base_length
    # vertical balance of each slice with X = 0
    V = N * np.cos(bank.alpha) + S * np.sin(bank.alpha) - bank.weight - bank.q_v
    H = (N * np.sin(bank.alpha) - S * np.cos(bank.alpha) + bank.kh * bank.weight + bank.q_h).sum(axis=1)
    assert np.abs(V).max() / bank.weight.sum() < 1e-9
    assert np.abs(H).max() / bank.weight.sum() < 1e-9
    rc = factor_of_safety(bank, c, tp, method="janbu", tol=1e-12)
    np.testing.assert_allclose(rc.fs / rc.f0, r.fs, rtol=1e-12)
    assert np.all(rc.f0 >= 1.0)


# ---------------------------------------------------------------- status --
def test_not_converged_is_reported():
    bank = _mixed_bank()
    r = factor_of_safety(bank, 10.0, 0.5, method="morgenstern-price", max_iter=1)
    assert not r.converged.any()
    st = r.status()
    assert st["not_converged"] == r.fs.size and st["ok"] == 0
    assert "not converged" in r.summary()
    fs_min, idx = r.critical()
    assert np.isnan(fs_min).all() and (idx == -1).all()


def test_inadmissible_flags():
    # A surface leaving the toe steeply upward (base at -67 degrees), with high
    # friction: m_alpha = cos a + sin a tan(phi) / F falls below 0.2 on the
    # exit slices, the case where Bishop's F is known to be unreliable.
    ground = slope_ground()
    bank = polyline_bank([(-4.0, 10.0), (15.5, -2.0), (17.0, 1.5)], ground)
    tp = np.tan(np.radians(40.0))
    r = factor_of_safety(bank, 0.5, tp, method="bishop")
    a_min = bank.alpha.min()
    m_alpha = np.cos(a_min) + np.sin(a_min) * tp / r.fs[0, 0]
    assert m_alpha <= 0.2
    assert r.flags[0, 0] & SMALL_M_ALPHA
    assert not r.admissible[0, 0] and r.converged[0, 0]
    assert r.status()["m_alpha <= 0.2 on a slice"] == 1
    # pore pressure above the overburden makes the effective normal force negative
    hi = circle_bank(12.0, 18.0, 16.0, ground, u_fn=lambda x, y: 1.5 * 20.0 * (ground(x) - y))
    r2 = factor_of_safety(hi, 20.0, 0.5, method="ordinary")
    assert r2.flags[0, 0] & NEGATIVE_NORMAL
    assert r2.status()["negative effective base normal force"] == 1


def test_invalid_surface_is_counted_not_dropped():
    bank = _mixed_bank()
    bank.valid = bank.valid.copy()
    bank.valid[1] = False
    bank.reason = bank.reason.copy()
    bank.reason[1] = "test"
    r = factor_of_safety(bank, 10.0, 0.5, method="spencer")
    assert r.fs.shape == (1, 5) and np.isnan(r.fs[0, 1])
    assert r.status()["surface rejected by the slice bank"] == 1
    fs_min, idx = r.critical(require_ok=False)
    assert idx[0] != 1 and np.isfinite(fs_min[0])
    np.testing.assert_allclose(fs_min[0], np.nanmin(r.fs[0]))


# ------------------------------------------------------------- bad input --
@pytest.mark.parametrize("kwargs,word", [
    ({"c": -1.0}, "c"),
    ({"tan_phi": np.nan}, "tan_phi"),
    ({"c": np.ones((2, 3))}, "c"),
    ({"method": "wedge"}, "method"),
    ({"method": "bishop", "lam_start": 0.2}, "lam_start"),
    ({"method": "morgenstern-price", "interslice": "triangle"}, "interslice"),
    ({"method": "morgenstern-price", "interslice": "clipped-sine", "f_ends": (1.2, 0.0)}, "f_ends"),
    ({"method": "morgenstern-price", "interslice": "tabulated"}, "interslice_table"),
    ({"tol": 0.0}, "tol"),
])
def test_bad_input_names_the_item(kwargs, word):
    bank = _mixed_bank()
    args = {"c": 10.0, "tan_phi": 0.5}
    args.update(kwargs)
    with pytest.raises(InputError, match=word):
        factor_of_safety(bank, **args)


@pytest.mark.parametrize("method", ALL_METHODS)
@pytest.mark.parametrize("name,bad", [("c", np.nan), ("c", -0.5), ("tan_phi", np.inf), ("tan_phi", -1e-3)])
@pytest.mark.parametrize("where", ["valid surface", "rejected surface"])
def test_one_bad_strength_anywhere_is_refused(method, name, bad, where):
    # one value of one sample on one slice base: Bishop and Janbu check the strengths in
    # their kernel's own pass, which skips surfaces the bank rejected; a value there must
    # be refused all the same
    bank = _mixed_bank()
    if where == "rejected surface":
        bank.valid = bank.valid.copy()
        bank.valid[3] = False
    s, m, n = 3, bank.n_surfaces, bank.n_slices
    args = {"c": np.full((s, m, n), 10.0), "tan_phi": np.full((s, m, n), 0.5)}
    args[name][1, 3, n // 2] = bad
    with pytest.raises(InputError, match=name):
        factor_of_safety(bank, method=method, **args)
    # broadcast inputs (one row for every sample) are checked as well
    args = {"c": np.full((1, m, n), 10.0), "tan_phi": 0.5}
    if name == "c":
        args["c"][0, 3, 0] = bad
    else:
        args["tan_phi"] = np.full(n, 0.5)
        args["tan_phi"][-1] = bad
    with pytest.raises(InputError, match=name):
        factor_of_safety(bank, method=method, **args)


@pytest.mark.parametrize("method,interslice", [("bishop", "constant"), ("morgenstern-price", "constant"),
                                                ("morgenstern-price", "half-sine")])
def test_a_sample_does_not_depend_on_the_others_in_the_call(method, interslice):
    # The kernels solve the samples of one surface together (Morgenstern-Price: all of them
    # in SIMD lanes, each stopping at its own iteration). Each sample's result must be the
    # one it has alone, bit for bit, or the simulator's results would depend on the batch
    # size and the number of jobs (DEVELOPERS.md, "Seeds").
    bank = _mixed_bank(kh=0.05, crack=5.0)
    rng = np.random.default_rng(17)
    s, m, n = 23, bank.n_surfaces, bank.n_slices
    # invented strengths, a factor per sample so that the samples' FS spread widely
    c = rng.uniform(0.5, 25.0, (s, m, n)) * rng.lognormal(0.0, 1.0, (s, 1, 1))
    tp = np.tan(np.radians(rng.uniform(5.0, 40.0, (s, m, n))))
    kw = {"interslice": interslice} if method == "morgenstern-price" else {}
    whole = factor_of_safety(bank, c, tp, method=method, **kw)
    # on some surface the samples stop at different iterations (lanes that wait for others)
    assert any(np.unique(whole.iterations[:, j]).size > 1 for j in range(m))
    for lo, hi in ((0, 1), (4, 5), (22, 23), (3, 10), (5, 22)):
        part = factor_of_safety(bank, c[lo:hi], tp[lo:hi], method=method, **kw)
        for key in ("fs", "lam", "iterations", "flags", "converged"):
            a, b = getattr(whole, key), getattr(part, key)
            if a is not None:
                np.testing.assert_array_equal(a[lo:hi], b, err_msg=f"{key}, samples {lo}-{hi}")


def test_result_type():
    r = factor_of_safety(_mixed_bank(), 10.0, 0.5)
    assert isinstance(r, FSResult) and r.method == "bishop"


# ------------------------------- spurious Morgenstern-Price roots (levee) --
_LEVEE = __import__("pathlib").Path(__file__).resolve().parents[2] / "cases" / "levee_soft_clay.toml"
# the trial circles of the demo levee's centre-lattice search ([search]:
# centres x 0..20 m, y 6..20 m on an 11 x 11 lattice, 10 radii set by the
# lowest point from the base y = -12 m to 4.5 m); circles centred on the
# levee axis x = 0 have no driving moment
_TANGENTS = np.linspace(-12.0, 4.5, 10)


def _levee_bank(circles, hypothesis):
    from slipfield.slope.bank import build_bank
    from slipfield.slope.case.build import load_case
    from slipfield.slope.strength import base_strength

    sec = load_case(str(_LEVEE)).section
    bank = build_bank(sec, circles, n_slices=30)
    bank = bank.subset(np.nonzero(bank.valid)[0])
    c, tp = base_strength(bank, sec.materials, hypothesis)
    return prepare_bank(bank), c, tp


def _counted(r):
    # what the searches count: converged, no flag other than the tolerated
    # negative-normal (1) and thrust-outside (4)
    return r.converged & ((r.flags & ~(NEGATIVE_NORMAL | THRUST_OUTSIDE)) == 0) & np.isfinite(r.fs)


@pytest.mark.parametrize("hypothesis,centre_y,k_tangent", [
    # values before the fix, all counted by the searches:
    ("drained", 7.4, 4),     # reported: M-P half-sine 0.277, counted as critical
    ("drained", 6.0, 5),     # 0.387
    ("drained", 17.2, 4),    # 632.6, lam = 5.2
    ("undrained", 6.0, 4),   # 8.12, lam = 3.1
])
def test_circle_without_driving_moment_is_rejected_when_the_bank_is_built(hypothesis, centre_y, k_tangent):
    # statics: a circle centred on the axis of the symmetric levee has loads
    # with no moment about its centre, so moment equilibrium about the centre,
    # F M_active = sum mt (c l + N' tan phi), admits no finite F; Morgenstern-
    # Price found spurious roots on these circles (values above) and the
    # simulator counted them as inadmissible in every realisation. They are now
    # refused once, when the bank is built, with their own reason.
    from slipfield.slope.bank import NO_DRIVING_REASON, build_bank
    from slipfield.slope.case.build import load_case
    from slipfield.slope.surfaces import Circle

    sec = load_case(str(_LEVEE)).section
    r = centre_y - _TANGENTS[k_tangent]
    bank = build_bank(sec, [Circle(0.0, centre_y, r), Circle(0.5, centre_y, r)], n_slices=30)
    assert list(bank.reason) == [NO_DRIVING_REASON, ""]  # 0.5 m off the axis the loads drive it
    pt, c, tp = _levee_bank([Circle(0.5, centre_y, r)], hypothesis)
    mp = factor_of_safety(pt, c, tp, method="morgenstern-price", interslice="half-sine")
    sp = factor_of_safety(pt, c, tp, method="spencer")
    if _counted(mp)[0, 0] and _counted(sp)[0, 0]:
        # Spencer = M-P with constant f (theory); half-sine within 2 % of
        # Spencer on circles in published comparisons (common practice)
        assert abs(mp.fs[0, 0] / sp.fs[0, 0] - 1) < 0.02


@pytest.mark.parametrize("hypothesis", ["undrained", "drained"])
def test_mp_half_sine_follows_spencer_on_the_levee_search_bank(hypothesis):
    from slipfield.slope.search import lattice_circles
    from slipfield.slope.case.build import load_case

    circles = lattice_circles(load_case(str(_LEVEE)).section, x_range=(0.0, 20.0),
                              y_range=(6.0, 20.0), nx=11, ny=11, n_radii=10)
    pt, c, tp = _levee_bank(circles, hypothesis)
    mp = factor_of_safety(pt, c, tp, method="morgenstern-price", interslice="half-sine")
    sp = factor_of_safety(pt, c, tp, method="spencer")
    bi = factor_of_safety(pt, c, tp, method="bishop")
    cm, cs = _counted(mp)[0], _counted(sp)[0]
    # every circle M-P counts, Spencer counts too, within 3 % (published
    # comparisons: 1-2 % on circles, common practice; 3 % for 30 slices)
    assert cm.sum() > 800
    assert cs[cm].all()
    ratio = mp.fs[0, cm] / sp.fs[0, cm]
    assert np.abs(ratio - 1).max() < 0.03
    # and not far below Bishop simplified where that is admissible
    ok_b = cm & bi.ok[0]
    assert (mp.fs[0, ok_b] / bi.fs[0, ok_b]).min() > 0.9
    # the critical circles agree (reported: 0.277 from a spurious root)
    crit_mp = mp.fs[0, cm].min()
    crit_sp = sp.fs[0, cs].min()
    assert abs(crit_mp / crit_sp - 1) < 0.02


@pytest.mark.parametrize("method", ["bishop", "janbu"])
def test_single_equation_bits_independent_of_layout_and_batch(method):
    # The simulator's reproducibility rule: a sample's FS must not depend on
    # how its strengths are laid out (broadcast, read-only, contiguous) or on
    # how many samples share the call; compared bit for bit.
    bank = _mixed_bank()
    rng = np.random.default_rng(11)
    c_surf = rng.uniform(5, 20, (1, 5, 40))
    tp = np.tan(np.radians(rng.uniform(20, 35, (6, 5, 40))))
    ref = factor_of_safety(bank, np.broadcast_to(c_surf, (6, 5, 40)), tp, method=method)
    dense = factor_of_safety(bank, np.repeat(c_surf, 6, axis=0), tp, method=method)
    frozen = tp.copy()
    frozen.flags.writeable = False
    ro = factor_of_safety(bank, c_surf, frozen, method=method)
    for other in (dense, ro):
        np.testing.assert_array_equal(other.fs, ref.fs)
        np.testing.assert_array_equal(other.flags, ref.flags)
    for s in (0, 3, 5):
        one = factor_of_safety(bank, c_surf, tp[s:s + 1], method=method)
        np.testing.assert_array_equal(one.fs[0], ref.fs[s])
        np.testing.assert_array_equal(one.iterations[0], ref.iterations[s])
