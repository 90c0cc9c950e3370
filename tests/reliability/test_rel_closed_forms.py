"""Reliability methods against closed forms.

Tolerances: FORM/FOSM on limit states that are linear in the standard
normals are exact up to the finite-difference and iteration tolerances
(1e-6 relative is far above those). Monte Carlo checks ask that the exact pf
lies inside the estimator's 99.9 % Wilson interval (fixed seed; the level is
chosen beforehand, so the check fails for a wrong estimator with high
probability and for a right one with probability 0.001).
"""
import math

import numpy as np
import pytest
from scipy import integrate, special, stats

from slipfield.slope.reliability import (InfiniteSlope, LimitState, estimate_pf, form, fosm,
                               hong, importance_sampling, latin_hypercube, monte_carlo,
                               random_vector, rosenblueth)

LEVEL = 0.999


def linear_case():
    # g = 1 + a1 x1 + a2 x2 + a3 x3 with normal x: FS normal, pf closed form.
    v = random_vector([
        dict(name="x1", dist="normal", mean=2.0, std=0.5),
        dict(name="x2", dist="normal", mean=-1.0, std=0.3),
        dict(name="x3", dist="normal", mean=0.5, std=0.2),
    ])
    a = np.array([0.2, 0.4, -0.3])

    def g(X):
        return 1.0 + X @ a

    mean = 1.0 + a @ v.means
    std = math.sqrt(np.sum((a * v.stds) ** 2))
    return g, v, a, mean, std


def test_linear_normal_form_fosm_pem_exact_mc_in_ci():
    g, v, a, mean, std = linear_case()
    beta = (mean - 1.0) / std          # closed form (FS normal)
    pf = special.ndtr(-beta)
    f = form(g, v)
    assert f.converged
    assert f.beta == pytest.approx(beta, rel=1e-6)
    assert f.pf == pytest.approx(pf, rel=1e-5)
    # Importance factors of a linear limit state: alpha_i^2 = (a_i s_i)^2 / s_g^2.
    exp_imp = (a * v.stds) ** 2 / std**2
    assert np.allclose([f.importance[n] for n in v.names], exp_imp, atol=1e-6)
    # Design point: x* = mu - beta alpha sigma (Hasofer & Lind 1974).
    assert g(f.design_point_x[None, :])[0] == pytest.approx(1.0, abs=1e-7)
    fo = fosm(g, v)
    assert fo.mean_fs == pytest.approx(mean, rel=1e-12)
    assert fo.std_fs == pytest.approx(std, rel=1e-10)
    assert sum(fo.variance_share.values()) == pytest.approx(1.0)
    for pem in (rosenblueth(g, v), hong(g, v)):
        assert pem.mean_fs == pytest.approx(mean, rel=1e-12)
        assert pem.std_fs == pytest.approx(std, rel=1e-10)
        assert pem.pf_normal == pytest.approx(pf, rel=1e-8)
    for run in (monte_carlo, latin_hypercube):
        r = run(g, v, 40_000, seed=7, level=LEVEL)
        lo, hi = r.main.estimate.ci
        assert lo <= pf <= hi, (run.__name__, r.pf, pf)
        # Running history ends at the final estimate.
        assert r.main.history["pf"][-1] == r.pf


def test_correlated_normals_form_exact():
    # Var(a.x) = a^T C a with C from the correlation (closed form).
    v = random_vector([
        dict(name="c", dist="normal", mean=12.0, cov=0.25),
        dict(name="t", dist="normal", mean=0.6, cov=0.1),
    ], correlation={("c", "t"): -0.5})
    a = np.array([0.05, 1.0])

    def g(X):
        return X @ a

    C = v.correlation * np.outer(v.stds, v.stds)
    beta = (a @ v.means - 1.0) / math.sqrt(a @ C @ a)
    f = form(g, v)
    assert f.beta == pytest.approx(beta, rel=1e-6)
    assert fosm(g, v).beta_normal == pytest.approx(beta, rel=1e-10)
    # Rosenblueth's correlated weights (1 +/- rho)/4 are exact for linear g.
    assert rosenblueth(g, v).beta_normal == pytest.approx(beta, rel=1e-10)
    r = monte_carlo(g, v, 40_000, seed=3, level=LEVEL)
    assert r.main.estimate.ci[0] <= special.ndtr(-beta) <= r.main.estimate.ci[1]
    # The sampled correlation matches the target: SE of r ~ (1 - rho^2)/sqrt(n).
    rho = np.corrcoef(r.X.T)[0, 1]
    assert abs(rho + 0.5) < 4 * 0.75 / math.sqrt(40_000)


def test_lognormal_fs_reference_values():
    # Lognormal FS closed form (beta = ln(mu/sqrt(1+V^2))/sqrt(ln(1+V^2))): mu = 1.5, V = 0.2 -> beta = 1.9483, pf = 0.02569.
    v = random_vector([dict(name="fs", dist="lognormal", mean=1.5, cov=0.2)])

    def g(X):
        return X[:, 0]

    f = form(g, v)
    assert f.beta == pytest.approx(1.9483, abs=5e-5)
    assert f.pf == pytest.approx(0.02569, abs=5e-6)
    # Two-point estimates give the exact mean and std of a linear g, so the
    # lognormal-assumption pf is the closed form too.
    pem = rosenblueth(g, v)
    assert pem.beta_lognormal == pytest.approx(1.9483, abs=5e-5)
    assert pem.pf_lognormal == pytest.approx(0.02569, abs=5e-6)
    r = monte_carlo(g, v, 50_000, seed=11, level=LEVEL)
    assert r.main.estimate.ci[0] <= 0.02569 <= r.main.estimate.ci[1]


def _rs_case(rho=0.0):
    v = random_vector([
        dict(name="R", dist="lognormal", mean=150.0, cov=0.2),
        dict(name="S", dist="lognormal", mean=80.0, cov=0.25),
    ], correlation=None if rho == 0 else {("R", "S"): rho})
    zr, zs = (math.sqrt(math.log1p(c * c)) for c in (0.2, 0.25))
    lr, ls_ = math.log(150.0) - zr**2 / 2, math.log(80.0) - zs**2 / 2
    # Nataf closed form for two lognormals, then beta of ln R - ln S
    # (closed form of two lognormal variables: beta = (lR - lS)/sqrt(zR^2 + zS^2) when rho = 0).
    r0 = math.log1p(rho * 0.2 * 0.25) / (zr * zs)
    beta = (lr - ls_) / math.sqrt(zr**2 + zs**2 - 2 * r0 * zr * zs)
    return v, beta


@pytest.mark.parametrize("rho", [0.0, 0.5])
def test_rs_lognormal_closed_form(rho):
    v, beta = _rs_case(rho)

    def g(X):
        return X[:, 0] / X[:, 1]

    f = form(g, v)
    assert f.converged
    assert f.beta == pytest.approx(beta, rel=1e-6)
    r = monte_carlo(g, v, 50_000, seed=5, level=LEVEL)
    assert r.main.estimate.ci[0] <= special.ndtr(-beta) <= r.main.estimate.ci[1]
    # Importance sampling at the design point: exact within 4 CoV (normal
    # approximation of the IS estimator).
    i = importance_sampling(g, v, 4_000, seed=9, form_result=f)
    assert abs(i.pf / special.ndtr(-beta) - 1) < 4 * i.cov_pf


def test_infinite_slope_lognormal_c_normal_tanphi_by_1d_integral():
    # Infinite slope (Duncan, Wright & Brandon 2014): F = a c' + b tan(phi').
    # With c' lognormal and tan(phi') normal, independent:
    # pf = integral f_T(t) F_C((1 - b t)/a) dt (scipy.integrate.quad).
    slope = InfiniteSlope(slope_angle=30.0, depth=3.0, unit_weight=19.0, ru=0.1)
    v = random_vector([
        dict(name="c", dist="lognormal", mean=10.0, cov=0.4),
        dict(name="tan_phi", dist="normal", mean=math.tan(math.radians(32.0)), cov=0.1),
    ])
    a, b = slope.coefficients()
    mc, mt = v.variables[0].marginal, v.variables[1].marginal

    def integrand(t):
        cstar = (1.0 - b * t) / a
        return mt.pdf(t) * (mc.cdf(cstar) if cstar > 0 else 0.0)

    lo, hi = mt.mean - 9 * mt.std, mt.mean + 9 * mt.std
    pf = integrate.quad(integrand, lo, hi, points=[1.0 / b], limit=200, epsabs=1e-14)[0]
    assert 1e-3 < pf < 0.2  # a meaningful case
    r = monte_carlo(slope, v, 60_000, seed=21, level=LEVEL)
    assert r.main.estimate.ci[0] <= pf <= r.main.estimate.ci[1]
    f = form(slope, v)
    i = importance_sampling(slope, v, 5_000, seed=2, form_result=f)
    assert abs(i.pf / pf - 1) < 4 * i.cov_pf
    # Same slope with phi' in degrees as the variable: same FS at the same point.
    s2 = InfiniteSlope(30.0, 3.0, 19.0, 0.1, columns={"c": 0, "phi": 1})
    X = np.array([[8.0, 32.0]])
    assert s2(X)[0] == pytest.approx(slope(np.array([[8.0, math.tan(math.radians(32))]]))[0])
    # Closed form at the mean (no water): c'=0, beta=phi -> F = tan(phi)/tan(beta) = 1.
    dry = InfiniteSlope(30.0, 4.0, 19.0, 0.0, columns={"c": 0, "phi": 1})
    assert dry(np.array([[0.0, 30.0]]))[0] == pytest.approx(1.0, rel=1e-12)


def test_invalid_samples_are_counted_not_dropped():
    g, v, a, mean, std = linear_case()

    def g_status(X):
        fs = g(X)
        conv = X[:, 0] < 2.8  # pretend the solver fails on large x1
        adm = X[:, 1] < -0.5
        return np.where(conv, fs, np.nan), conv, adm

    r = monte_carlo(g_status, v, 20_000, seed=1)
    e = r.main.estimate
    X = r.X
    conv = X[:, 0] < 2.8
    adm = X[:, 1] < -0.5
    assert e.n_nonconverged == int((~conv).sum()) > 0
    assert e.n_inadmissible == int((conv & ~adm).sum()) > 0
    assert e.n_valid == int((conv & adm).sum())
    assert e.n == 20_000
    # bounds: invalid samples counted as safe (low) and as failed (high),
    # counted here from the samples themselves (a check that can fail: the
    # old assertion lo <= pf <= hi held by construction)
    ok = conv & adm
    k = int((g(X)[ok] < 1.0).sum())
    assert e.n_fail == k and e.pf == pytest.approx(k / e.n_valid, rel=1e-15)
    assert e.pf_bounds == pytest.approx((k / e.n, (k + e.n - e.n_valid) / e.n), rel=1e-15)


def test_per_sample_search_both_surfaces():
    """Two surfaces, FS1 = 1 + 0.3 x1, FS2 = 1 + 0.3 x2 (x standard normal,
    independent, both at mean 1.5 after shifting). With re-search each sample
    takes the least FS: system pf = 1 - (1 - p1)(1 - p2) (closed form); the
    fixed surface has pf = p1 (Huang, Griffiths & Fenton 2010: system pf is at
    least any fixed surface's)."""
    v = random_vector([dict(name="x1", dist="normal", mean=0.0, std=1.0),
                       dict(name="x2", dist="normal", mean=0.0, std=1.0)])

    def bank(X):
        return 1.3 + 0.15 * X  # (n, 2): FS on two surfaces

    ls = LimitState(lambda X: bank(X)[:, 0], searched=bank)
    r = monte_carlo(ls, v, 50_000, seed=4, surface="both", level=LEVEL)
    p1 = special.ndtr(-2.0)
    p_sys = 1 - (1 - p1) ** 2
    fx, se = r.surfaces["fixed"].estimate, r.surfaces["searched"].estimate
    assert fx.ci[0] <= p1 <= fx.ci[1]
    assert se.ci[0] <= p_sys <= se.ci[1]
    assert se.n_fail >= fx.n_fail  # same samples (common random numbers)
    assert r.n_evaluations == 100_000
    assert form(ls, v, surface="fixed").beta == pytest.approx(2.0, rel=1e-6)
