"""Simulator against the infinite slope in purely cohesive soil (closed forms).

A long block on a plane parallel to the face at vertical depth z, φ = 0:
FS = s̄u / (γ z sinβ cosβ) (Skempton & DeLory 1957; Duncan, Wright &
Brandon 2014, infinite-slope closed form), with s̄u the average of su along
the base. With su a normal random field, s̄u is a linear functional of it,
hence normal with mean μ and variance γ(T)σ² (Vanmarcke 1983, *Random
Fields*, ch. 5: variance function of the local average over length T), so
pf = Φ((1 − μ_FS)/(√γ(T) σ_FS)) exactly. The Markov closed form of γ(T) is
used (Vanmarcke 1983).

The block's ends are two short near-vertical segments (0.2 m wide), so the
method's FS at unit su (``fs1``) is used in place of 1/(γ z sinβ cosβ): the
Ordinary method with φ = 0 is linear in su with per-slice weights that are
proportional to base length to within 0.2 % of the summed variance (checked
below), so the closed form holds for this surface with T = its base length.
"""
import math

import numpy as np
import pytest
from scipy.stats import chi2, norm

from slipfield.fields import get_model, variance_function
from slipfield.fields.marginals import make_marginal
from slipfield.slope.methods import factor_of_safety
from slipfield.slope.section import Section, Zone
from slipfield.slope.simulate import RandomProblem, RandomProperty, simulate
from slipfield.slope.simulate.studies import reduced_variance_problem, surface_variance_factor
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Polyline

TAN_B = 0.5          # 2H:1V face
Z = 3.0              # m, vertical depth of the slip plane
LF = 60.0            # m, horizontal length of the face
GAMMA = 20.0         # kN/m³
COV = 0.2            # normal su: P(su < 0) at a point = Φ(−5) ≈ 3e-7
N = 300
ALPHA = 1e-3         # two-sided level of every statistical check below
Z_CRIT = norm.ppf(1 - ALPHA / 2)


def _section(su=50.0):
    H = LF * TAN_B
    mat = Material("clay", unit_weight=GAMMA, su_model="constant", su=su)
    ground = np.array([[-10.0, 0.0], [0.0, 0.0], [LF, H], [LF + 10.0, H]])
    poly = np.vstack([ground, [[LF + 10.0, -6.0], [-10.0, -6.0], [-10.0, 0.0]]])
    return Section(ground, [Zone("clay", "clay", poly)], {"clay": mat}, base_y=-6.0)


SURFACE = Polyline(np.array([[-0.1, 0.01], [0.1, 0.1 * TAN_B - Z], [LF - 0.1, (LF - 0.1) * TAN_B - Z],
                             [LF + 0.1, LF * TAN_B + 0.01]]))


def _problem(theta, mean, cov=COV, cell=0.5, field_method="fft"):
    prop = RandomProperty("clay", "su", make_marginal("normal", mean=mean, cov=cov), theta, theta)
    return RandomProblem(_section(), "undrained", "ordinary", [prop], [SURFACE], 0, n_slices=60,
                         cell=cell, field_method=field_method)


@pytest.fixture(scope="module")
def geometry():
    p = _problem(math.inf, 50.0)
    b = p.bank
    fs1 = float(factor_of_safety(b, np.ones(b.zone.shape), 0.0, method="ordinary").fs[0, 0])
    return fs1, float(b.base_length.sum()), b


def test_block_is_an_infinite_slope(geometry):
    fs1, T, b = geometry
    beta = math.atan(TAN_B)
    closed = 1.0 / (GAMMA * Z * math.sin(beta) * math.cos(beta))
    # the two 0.2 m end segments are the only departure from the closed form;
    # they stiffen the block by ~10 % (bounded here, not tuned)
    assert closed < fs1 < 1.15 * closed
    # FS linear in su with weights ∝ base length: var of the weighted mean of
    # white noise relative to the plain length average
    w = np.array([factor_of_safety(b, np.eye(b.zone.shape[1])[i][None], 0.0, method="ordinary").fs[0, 0]
                  for i in range(b.zone.shape[1])])
    l = b.base_length[0]
    np.testing.assert_allclose(w.sum(), fs1, rtol=1e-9)
    assert T * np.sum(w ** 2 / l) / w.sum() ** 2 < 1.005


# θ/T = 0.1, 1, 10 (T ≈ 71.4 m); large θ on 2 m cells with the exact (Cholesky)
# generator: the FFT generator pads to several θ and becomes slow there
@pytest.mark.parametrize("ratio,cell,gen", [(0.1, 0.5, "fft"), (1.0, 2.0, "cholesky"), (10.0, 2.0, "cholesky")])
def test_pf_matches_local_average_closed_form(geometry, ratio, cell, gen):
    fs1, T, _ = geometry
    theta = ratio * T
    mean = 1.05 / fs1                       # mean FS 1.05, invented for the test
    g = float(variance_function(get_model("exponential", theta_h=theta, theta_v=theta), T))
    sd_fs = fs1 * mean * COV * math.sqrt(g)
    pf_exact = norm.cdf((1.0 - 1.05) / sd_fs)
    r = simulate(_problem(theta, mean, cell=cell, field_method=gen), N, seed=11, batch=100)
    assert r.n_no_valid == 0 and r.n_inadmissible == 0
    # z-test of a binomial proportion at level ALPHA (sd from the exact pf)
    se = math.sqrt(pf_exact * (1 - pf_exact) / N)
    assert abs(r.pf - pf_exact) < Z_CRIT * se, (r.pf, pf_exact, se)
    # and the mean FS: t-free z-test with the exact sd
    assert abs(r.fs.mean() - 1.05) < Z_CRIT * sd_fs / math.sqrt(N)


def test_theta_inf_is_the_single_variable_closed_form(geometry):
    fs1, _, _ = geometry
    mean = 1.05 / fs1
    r = simulate(_problem(math.inf, mean), N, seed=4)
    # one su per realisation: FS_k = fs1 · su_k exactly, pf = Φ((1/fs1 − μ)/σ)
    pf_exact = norm.cdf((1.0 / fs1 - mean) / (COV * mean))
    se = math.sqrt(pf_exact * (1 - pf_exact) / N)
    assert abs(r.pf - pf_exact) < Z_CRIT * se
    np.testing.assert_allclose(r.fs, r.fs_fixed)


@pytest.mark.parametrize("theta", [0.5, 2.0])
def test_variance_falls_as_gamma_for_small_theta(geometry, theta):
    fs1, T, _ = geometry
    mean = 1.05 / fs1
    g = float(variance_function(get_model("exponential", theta_h=theta, theta_v=theta), T))
    assert g < 0.03  # θ → 0 regime: γ ≈ θ/T
    r = simulate(_problem(theta, mean), N, seed=7, batch=150)
    var_single = (fs1 * mean * COV) ** 2   # exact Var FS at θ → inf
    ratio = r.fs.var(ddof=1) / var_single
    # (n−1)s²/σ² ~ χ²(n−1): two-sided ALPHA interval for the ratio / γ.
    # Known bias: bilinear interpolation of 0.5 m cells and 4 points per base
    # change the variance by a few % at θ = 0.5 m, well inside this interval.
    lo, hi = chi2.ppf([ALPHA / 2, 1 - ALPHA / 2], N - 1) / (N - 1)
    assert lo < ratio / g < hi, (ratio, g, lo, hi)


@pytest.mark.parametrize("theta", [3.5, 35.0])
def test_surface_gamma_is_the_variance_function_along_the_plane(geometry, theta):
    # along a straight line the surface γ is Vanmarcke's γ(T) (Markov closed
    # form); the block's ends are 0.2 m wide but 3 m tall (8 % of its 73 m) and
    # bend the line: sliced exactly (slice sides at the polyline's vertices) they
    # raise γ by 2.0 % at θ = 3.5 m, within 0.4 % of a dense quadrature along the
    # actual polyline (when equal slices smeared them into the end slices, ~1 %)
    _, T, _ = geometry
    T_s, g = surface_variance_factor(_problem(theta, 50.0), 0)
    assert T_s == pytest.approx(T, rel=1e-12)
    g1 = float(variance_function(get_model("exponential", theta_h=theta, theta_v=theta), T))
    assert g == pytest.approx(g1, rel=0.03)


def test_surface_gamma_anisotropic_equals_line_theta(geometry):
    # elliptical anisotropy: along a line at angle β the Markov correlation is
    # exp(−2τ/θ_β) with 1/θ_β² = cos²β/θh² + sin²β/θv², so γ along the plane is
    # the 1D γ(T) with θ_β (Vanmarcke 1983, ch. 5, for a line average); the
    # block's 3 m tall ends add 1.6 % (see the test above), hence 3 %
    _, T, _ = geometry
    th, tv = 40.0, 4.0
    prop = RandomProperty("clay", "su", make_marginal("normal", mean=50.0, cov=COV), th, tv)
    p = RandomProblem(_section(), "undrained", "ordinary", [prop], [SURFACE], 0, n_slices=60)
    beta = math.atan(TAN_B)
    t_line = 1.0 / math.hypot(math.cos(beta) / th, math.sin(beta) / tv)
    g1 = float(variance_function(get_model("exponential", theta_h=t_line, theta_v=t_line), T))
    _, g = surface_variance_factor(p, 0)
    assert g == pytest.approx(g1, rel=0.03)


def test_quick_estimate_is_exact_for_the_cohesive_infinite_slope(geometry):
    # FS is linear in the base average of a normal su, so the single variable
    # with σ√γ(T) gives the exact pf of test_pf_matches_local_average_closed_form
    fs1, T, _ = geometry
    theta = T
    mean = 1.05 / fs1
    red, table = reduced_variance_problem(_problem(theta, mean))
    g = float(variance_function(get_model("exponential", theta_h=theta, theta_v=theta), T))
    assert table[0]["std_averaged"] == pytest.approx(COV * mean * math.sqrt(table[0]["gamma"]), rel=1e-9)
    r = simulate(red, N, seed=5)
    pf_exact = norm.cdf((1.0 - 1.05) / (fs1 * mean * COV * math.sqrt(g)))
    se = math.sqrt(pf_exact * (1 - pf_exact) / N)
    assert abs(r.pf_fixed - pf_exact) < Z_CRIT * se + 0.01 * pf_exact, (r.pf_fixed, pf_exact)


def test_random_unit_weight_closed_form_simulator_and_form(geometry):
    # φ = 0, no water: every slice weight scales with the factor f on γ, so
    # FS = FS_mean / f exactly (Ordinary method: FS = Σ su l / Σ W sin α).
    # With f lognormal (mean 1, COV V), pf = P(f > FS_mean)
    # = 1 − Φ((ln FS_mean − μ_ln)/σ_ln) and FORM is exact (the limit state is
    # linear in the standard normal of ln f; Hasofer & Lind 1974).
    from slipfield.slope.bank import unit_weight_parts
    from slipfield.slope.reliability import form
    from slipfield.slope.reliability.limit_state import LimitState
    from slipfield.slope.limit_state import SliceBankLimitState
    from slipfield.slope.reliability.variables import RandomVariable, RandomVector

    fs1, _, bank = geometry
    su, V = 1.1 / fs1, 0.1                     # FS at the mean unit weight 1.1 (invented)
    f = make_marginal("lognormal", mean=1.0, cov=V)
    mu, sg = f.params["mu_ln"], f.params["sigma_ln"]
    pf_exact = 1.0 - norm.cdf((math.log(1.1) - mu) / sg)
    props = [RandomProperty("clay", "unit_weight", f, math.inf, math.inf)]
    p = RandomProblem(_section(su), "undrained", "ordinary", props, [SURFACE], 0, n_slices=60)
    r = simulate(p, N, seed=21, batch=64)
    assert r.n_no_valid == 0
    se = math.sqrt(pf_exact * (1 - pf_exact) / N)
    assert abs(r.pf - pf_exact) < Z_CRIT * se, (r.pf, pf_exact)
    # FS_k · f_k is the same number for every realisation
    from slipfield.fields.seeding import realisation_rng

    fk = np.array([f.from_standard_normal(realisation_rng(21, k, 0, 0).standard_normal()) for k in range(N)])
    np.testing.assert_allclose(r.fs * fk, 1.1, rtol=1e-6)
    # the single-variable reliability layer on the same surface
    parts = unit_weight_parts(_section(), [SURFACE], [0], 60)
    ls = SliceBankLimitState(bank, {"clay": Material("clay", unit_weight=GAMMA, su_model="constant", su=su)},
                             {0: ("clay", "unit_weight")}, method="ordinary", hypothesis="undrained",
                             weight_parts=parts)
    fr = form(LimitState(ls), RandomVector([RandomVariable("clay.unit_weight", f)]))
    assert fr.beta == pytest.approx((math.log(1.1) - mu) / sg, rel=1e-4)
