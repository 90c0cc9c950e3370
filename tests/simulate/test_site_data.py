"""Site data in the simulator: fields conditioned on measurements.

Closed forms (Gaussian conditioning, e.g. Rasmussen & Williams 2006,
Gaussian Processes for Machine Learning, eq. 2.19; for soils Vanmarcke
1983, Random Fields, ch. 7 (recalled from memory)):

* one datum z_d at x_d with zero error: the field at x has conditional
  mean ρ(d) z_d and variance σ²(1 − ρ(d)²), d = |x − x_d|;
* the line average s̄ of a normal field over the slip plane, given data d:
  E = μ + c_sᵀ C_dd⁻¹ (d − μ), Var = σ²γ(T) − c_sᵀ C_dd⁻¹ c_s with
  c_s = Cov(s̄, su(x_j)) (quadrature along the plane).

Statistical tolerances: 4 standard errors at the number of realisations
(sample mean SE = √(v/n), sample variance SE = v√(2/(n−1)) for Gaussian
values), and the binomial z-test at level 1e-3 for pf.
"""
import math
import textwrap

import numpy as np
import pytest
from scipy.stats import norm

from slipfield.fields.marginals import make_marginal
from slipfield.slope.case.build import load_case
from slipfield.slope.case.schema import CaseError
from slipfield.slope.methods import factor_of_safety
from slipfield.slope.section import Section, Zone
from slipfield.slope.simulate import RandomProblem, RandomProperty, simulate
from slipfield.slope.simulate.engine import _correlated
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Polyline

TAN_B, Z, LF, GAMMA = 0.5, 3.0, 60.0, 20.0


def _section(su=50.0):
    H = LF * TAN_B
    mat = Material("clay", unit_weight=GAMMA, su_model="constant", su=su)
    ground = np.array([[-10.0, 0.0], [0.0, 0.0], [LF, H], [LF + 10.0, H]])
    poly = np.vstack([ground, [[LF + 10.0, -6.0], [-10.0, -6.0], [-10.0, 0.0]]])
    return Section(ground, [Zone("clay", "clay", poly)], {"clay": mat}, base_y=-6.0)


SURFACE = Polyline(np.array([[-0.1, 0.01], [0.1, 0.1 * TAN_B - Z], [LF - 0.1, (LF - 0.1) * TAN_B - Z],
                             [LF + 0.1, LF * TAN_B + 0.01]]))


def _problem(theta, mean, cov, cell, data=None):
    prop = RandomProperty("clay", "su", make_marginal("normal", mean=mean, cov=cov), theta, theta)
    return RandomProblem(_section(), "undrained", "ordinary", [prop], [SURFACE], 0, n_slices=60,
                         cell=cell, field_method="fft", site_data=data or {})


def test_single_datum_is_honoured_and_the_variance_follows_the_closed_form():
    theta, n = 4.0, 400
    xd = np.array([[5.5, -2.5]])                   # a cell centre of the 1 m grid
    p = _problem(theta, 50.0, 0.2, 1.0, {"clay.su": (xd, np.array([1.3]), np.array([0.0]))})
    g = p.grid
    zs = _correlated(p, 3, range(n), 0, [0])[0].reshape(n, g.nx, g.ny)
    i0, j0 = int((xd[0, 0] - g.x0) // g.dx), int((xd[0, 1] - g.y0) // g.dy)
    np.testing.assert_allclose(zs[:, i0, j0], 1.3, rtol=0, atol=1e-12)  # every realisation: the datum
    for d in (1, 2, 4, 8, 40):                             # lags along x (m); 40 m ≫ θ: unconditional
        rho = math.exp(-2.0 * d / theta)                   # Markov (Vanmarcke 1983)
        v = zs[:, i0 + d, j0]
        var = 1.0 - rho ** 2
        assert abs(v.mean() - rho * 1.3) < 4 * math.sqrt(var / n)
        assert abs(v.var(ddof=1) - var) < 4 * var * math.sqrt(2 / (n - 1))


@pytest.mark.slow  # two worker processes
def test_realisations_do_not_depend_on_batch_size_or_jobs():
    data = {"clay.su": (np.array([[10.25, 2.25], [30.25, 12.25]]), np.array([-1.0, 0.5]),
                        np.array([0.0, 0.3]))}
    p = _problem(7.0, 50.0, 0.2, 0.5, data)
    a = simulate(p, 24, seed=5, batch=24)
    b = simulate(_problem(7.0, 50.0, 0.2, 0.5, data), 24, seed=5, batch=5, n_jobs=2)
    np.testing.assert_array_equal(a.fs, b.fs)
    c = simulate(_problem(7.0, 50.0, 0.2, 0.5), 24, seed=5, batch=24)
    assert not np.array_equal(a.fs, c.fs)
    assert p.fingerprint() != _problem(7.0, 50.0, 0.2, 0.5).fingerprint()


def _surface_quadrature(n=300):
    """Points and weights (summing to 1, ∝ length) of the line average over SURFACE."""
    u, w = np.polynomial.legendre.leggauss(n)
    P = np.asarray(SURFACE.points)
    qs, ws = [], []
    for a, b in zip(P[:-1], P[1:]):
        qs.append(a + np.outer(0.5 * (u + 1), b - a))
        ws.append(0.5 * w * np.hypot(*(b - a)))
    w = np.concatenate(ws)
    return np.vstack(qs), w / w.sum()


def _planar_data(theta, mu, sd, cell):
    """Five weak readings (invented) at cell centres next to the slip plane, and E[s̄u | data] in closed form."""
    xs = np.array([10.25, 20.25, 30.25, 40.25, 50.25])
    ys = np.round((xs * TAN_B - Z - 0.25) / cell) * cell + 0.25
    pts = np.column_stack([xs, ys])
    su_d = mu * np.array([0.85, 0.8, 0.9, 0.75, 0.85])
    q, w = _surface_quadrature()
    rho = lambda a, b: np.exp(-2.0 * np.hypot(a[:, None, 0] - b[None, :, 0], a[:, None, 1] - b[None, :, 1]) / theta)
    k = np.linalg.solve(rho(pts, pts), w @ rho(q, pts))
    return pts, su_d, mu + float(k @ (su_d - mu))


def test_deterministic_fs_uses_the_conditional_mean():
    from slipfield.slope.simulate.conditioning import conditional_mean_fs

    theta, cell, mu = 7.0, 0.5, 50.0
    sd = 0.2 * mu
    p0 = _problem(math.inf, mu, 0.2, cell)
    fs1 = float(factor_of_safety(p0.bank, np.ones(p0.bank.zone.shape), 0.0, method="ordinary").fs[0, 0])
    pts, su_d, mean_bar = _planar_data(theta, mu, sd, cell)
    r = conditional_mean_fs(_problem(theta, mu, 0.2, cell, {"clay.su": (pts, (su_d - mu) / sd, np.zeros(5))}))
    # normal marginal: FS is linear in su, so FS at the conditional mean = fs1 · E[s̄u | data];
    # 0.5 % covers the field's cell-centre representation (θ/cell = 14; 0.15 % measured)
    assert r["fs"] == pytest.approx(fs1 * mean_bar, rel=5e-3)
    assert r["fs_material_values"] == pytest.approx(fs1 * mu, rel=1e-9)


def test_conditional_pf_of_the_planar_slope_matches_gaussian_conditioning():
    theta, cell, cov, N = 7.0, 0.5, 0.2, 300
    p0 = _problem(math.inf, 50.0, cov, cell)
    b = p0.bank
    fs1 = float(factor_of_safety(b, np.ones(b.zone.shape), 0.0, method="ordinary").fs[0, 0])
    mu = 1.05 / fs1
    sd = cov * mu
    pts, su_d, _ = _planar_data(theta, mu, sd, cell)   # five weak readings by the slip plane
    data = {"clay.su": (pts, (su_d - mu) / sd, np.zeros(5))}
    # closed form: s̄u over the whole surface (the plane and its two short ends),
    # Gauss–Legendre on each segment weighted by its length; Markov ρ = exp(−2r/θ)
    q, w = _surface_quadrature()
    rho = lambda a, b: np.exp(-2.0 * np.hypot(a[:, None, 0] - b[None, :, 0], a[:, None, 1] - b[None, :, 1]) / theta)
    gamma_T = float(w @ rho(q, q) @ w)
    c_s = w @ rho(q, pts)
    C = rho(pts, pts)
    k = np.linalg.solve(C, c_s)
    mean_bar = mu + sd * float(k @ ((su_d - mu) / sd))
    var_bar = sd ** 2 * (gamma_T - float(c_s @ k))
    pf_cond = norm.cdf((1.0 - fs1 * mean_bar) / (fs1 * math.sqrt(var_bar)))
    pf_uncond = norm.cdf((1.0 - 1.05) / (fs1 * sd * math.sqrt(gamma_T)))
    assert pf_cond > pf_uncond + 0.1          # the weak readings matter (not a vacuous check)
    r = simulate(_problem(theta, mu, cov, cell, data), N, seed=21, batch=100)
    se = math.sqrt(pf_cond * (1 - pf_cond) / N)
    assert abs(r.pf - pf_cond) < norm.ppf(1 - 5e-4) * se, (r.pf, pf_cond, se)


CASE = """
[case]
title = "site data test (invented)"
[section]
ground = [[0.0, 0.0], [10.0, 0.0], [30.0, 10.0], [40.0, 10.0]]
bottom = -8.0
[[section.zone]]
name = "fill"
material = "fill"
polygon = [[10.0, 0.0], [30.0, 10.0], [30.0, 0.0]]
[[section.zone]]
name = "clay"
material = "clay"
polygon = [[0.0, -8.0], [40.0, -8.0], [40.0, 10.0], [30.0, 10.0], [30.0, 0.0], [0.0, 0.0]]
[[material]]
name = "fill"
unit_weight = 19.0
c = 2.0
phi = 30.0
[[material]]
name = "clay"
unit_weight = 17.0
c = 5.0
phi = 25.0
su = { law = "depth", value = 12.0, gradient = 1.5 }
[analysis]
hypotheses = ["undrained"]
[search]
kind = "centre-lattice"
trials = 60
x_range = [15.0, 30.0]
y_range = [12.0, 25.0]
[[random]]
material = "clay"
property = "su"
cov = 0.3
theta_h = 20.0
theta_v = 2.0
"""


def _case(tmp_path, extra, csv=None):
    (tmp_path / "c.toml").write_text(CASE + textwrap.dedent(extra))
    if csv is not None:
        (tmp_path / "cpt.csv").write_text(csv)
    return tmp_path / "c.toml"


@pytest.mark.parametrize("extra,csv,match", [
    ('[[site_data]]\nproperty = "clay.su"\npoints = [[50.0, -2.0, 15.0]]\n', None, r"site_data\[0\].points\[0\].*outside the section"),
    ('[[site_data]]\nproperty = "clay.su"\npoints = [[20.0, 2.0, 15.0]]\n', None, r"points\[0\].*zone 'fill'"),
    ('[[site_data]]\nproperty = "clay.su"\nx = 5.0\nreadings = [[-1.0, 14.0], [-1.0, 16.0]]\n', None,
     r"readings\[1\]: same place as site_data\[0\].readings\[0\].*error_sd"),
    ('[[site_data]]\nproperty = "clay.su"\nfile = "cpt.csv"\n', "x,elevation,value\n5,-1,14\n5,-2,1O\n",
     r"cpt.csv, row 3"),
    ('[[site_data]]\nproperty = "clay.phi"\nx = 5.0\nreadings = [[-1.0, 14.0]]\n', None,
     r"site_data\[0\].property 'clay.phi' is not a random property"),
    ('[[site_data]]\nproperty = "clay.su"\nx = 5.0\npoints = [[5.0, -1.0, 14.0]]\n', None, r"x \(m\) goes with readings"),
    ('[[site_data]]\nproperty = "clay.su"\nfile = "a.csv"\npoints = [[5.0, -1.0, 14.0]]\n', None, r"exactly one of"),
])
def test_bad_site_data_is_refused_naming_the_key(tmp_path, extra, csv, match):
    with pytest.raises(CaseError, match=match):
        load_case(_case(tmp_path, extra, csv))


def test_value_the_marginal_cannot_take_is_refused_and_nothing_is_written(tmp_path, capsys):
    from slipfield.slope.cli import main

    path = _case(tmp_path, '[[site_data]]\nproperty = "clay.su"\nx = 5.0\nreadings = [[-1.0, -3.0]]\n')
    out = tmp_path / "out"
    assert main(["run", str(path), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "site_data[0].readings[0]" in err and "cannot take" in err
    assert not out.exists()


def test_csv_profile_conditions_the_su_field_through_the_depth_law(tmp_path):
    from slipfield.slope.case.analyses import deterministic, random_problem

    path = _case(tmp_path, '[[site_data]]\nproperty = "clay.su"\nfile = "cpt.csv"\nerror_cov = 0.05\n',
                 "x,elevation,value\n5,-1,15.0\n5,-3,16.5\n")
    case = load_case(path)
    p = random_problem(case, deterministic(case), "undrained")
    pts, z, nug = p.site_data["clay.su"]
    # the su law gives 13.5 and 16.5 kPa there: factors 15/13.5 and 1 on a lognormal of mean 1, COV 0.3
    s = math.sqrt(math.log(1 + 0.3 ** 2))
    np.testing.assert_allclose(z, (np.log([15 / 13.5, 1.0]) + 0.5 * s ** 2) / s)
    # delta method: σ_z = (σ_e / su_law) f(v)/φ(z) = 0.05 v / (v s) for a lognormal
    np.testing.assert_allclose(np.sqrt(nug), 0.05 / s)


def test_conditional_sd_map_is_sqrt_one_minus_rho_squared():
    from slipfield.slope.commands.site_effect import conditional_sd

    theta = 4.0
    xd = np.array([[5.5, -2.5]])
    p = _problem(theta, 50.0, 0.2, 1.0, {"clay.su": (xd, np.array([0.4]), np.array([0.0]))})
    sd = conditional_sd(p)["clay.su"]
    g = p.grid
    i0, j0 = int((xd[0, 0] - g.x0) // g.dx), int((xd[0, 1] - g.y0) // g.dy)
    for d in (0, 1, 3, 40):
        assert sd[i0 + d, j0] == pytest.approx(math.sqrt(1 - math.exp(-4.0 * d / theta)), abs=1e-9)
    assert np.isnan(sd[0, -1])                              # above the ground: not soil


@pytest.mark.slow  # a whole run with its report
def test_run_reports_pf_with_and_without_the_data(tmp_path):
    import json

    from slipfield.slope.cli import main

    path = _case(tmp_path, """
[[site_data]]
property = "clay.su"
x = 22.25
readings = [[-0.75, 30.0], [-1.75, 32.0], [-2.75, 35.0]]
[drilling]
candidates = [22.0, 38.0]
[simulation]
realisations = 60
[reliability]
methods = ["monte-carlo"]
samples = 100
""")
    assert main(["run", str(path), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    s = json.loads((tmp_path / "out" / "results.json").read_text())["spatial_simulation"]["undrained"]["site_data"]
    assert s["n_data"] == {"clay.su": 3}
    assert 0 <= s["pf_conditional"] <= 1 and 0 <= s["pf_unconditional"] <= 1
    assert "changed pf from" in s["statement"]
    sv = json.loads((tmp_path / "out" / "results.json").read_text())["single_variable_reliability"]["undrained"]
    assert sv["site_data"]["conditional_mean"] == ["clay.su"]        # the single variables used the data too
    assert sv["monte-carlo"]["pf"] != sv["site_data"]["without_site_data"]["monte-carlo"]["pf"]
    assert (tmp_path / "out" / "figures" / "site_data_sd_undrained.png").exists()
    page = (tmp_path / "out" / "report.html").read_text()
    assert "changed pf from" in page
    assert "Site data in the single-variable analyses: clay.su took the conditional mean" in page
    dr = json.loads((tmp_path / "out" / "results.json").read_text())["spatial_simulation"]["undrained"]["drilling"]
    assert [c["x"] for c in dr["candidates"]] == [22.0, 38.0]
    assert all(0 <= c["properties"]["clay.su"]["fraction_removed"] <= 1 for c in dr["candidates"])


def test_drilling_without_a_field_is_refused(tmp_path):
    path = _case(tmp_path, "[drilling]\ncandidates = [5.0]\n")
    text = path.read_text().replace('theta_h = 20.0\ntheta_v = 2.0', 'theta_h = "inf"\ntheta_v = "inf"')
    path.write_text(text)
    with pytest.raises(CaseError, match=r"\[drilling\] needs a spatially random property"):
        load_case(path)


def test_profile_value_is_the_conditional_variance_of_the_surface_average():
    # pre-posterior: for a Gaussian field the posterior variance of the line
    # average does not depend on the values measured, so the closed form
    # γ(T) − c_sᵀ C_dd⁻¹ c_s (quadrature along the surface) is the expected one
    from slipfield.slope.simulate.drilling import profile_value

    theta, cell = 7.0, 0.5
    p = _problem(theta, 50.0, 0.2, cell)
    res = profile_value(p, [30.1, -9.0], spacing=1.0)
    q, w = _surface_quadrature()
    rho = lambda a, b: np.exp(-2.0 * np.hypot(a[:, None, 0] - b[None, :, 0], a[:, None, 1] - b[None, :, 1]) / theta)
    prior = float(w @ rho(q, q) @ w)
    xc = 30.25                                         # centre of the cell holding x = 30.1
    ys = np.arange(-5.75, xc * TAN_B, cell)[::-1][::2]  # every 1 m from the top cell down
    pts = np.column_stack([np.full(ys.size, xc), ys])
    c_s = w @ rho(q, pts)
    after = prior - float(c_s @ np.linalg.solve(rho(pts, pts), c_s))
    r = res[0]["properties"]["clay.su"]
    # 2 % covers the cell-centre / bilinear representation of the field (θ/cell = 14)
    assert r["variance_now"] == pytest.approx(prior, rel=0.02)
    assert r["variance_after"] == pytest.approx(after, rel=0.02)
    far = res[1]["properties"]["clay.su"]
    assert far["fraction_removed"] < 0.2 * r["fraction_removed"]   # 9 m beyond the toe: little to learn
