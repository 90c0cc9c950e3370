"""Checks of fields.marginals against closed forms and scipy.stats."""
import math

import numpy as np
import pytest
from scipy import stats

from slipfield.fields.errors import InputError
from slipfield.fields.marginals import make_marginal, nataf_correlation, nataf_matrix
from slipfield.fields.marginals import _physical_correlation

Z = np.linspace(-7.0, 7.0, 57)


ALL = [
    ("normal", dict(mean=20.0, cov=0.25)),
    ("lognormal", dict(mean=10.0, cov=0.3)),
    ("truncated-normal", dict(mean=1.0, cov=0.5, lower=0.0)),
    ("truncated-normal", dict(mean=30.0, std=4.0, lower=20.0, upper=40.0)),
    ("beta", dict(mean=30.0, cov=0.1, lower=20.0, upper=40.0)),
    ("uniform", dict(lower=1.0, upper=3.0)),
    ("uniform", dict(mean=2.0, std=0.5)),
    ("triangular", dict(lower=0.0, mode=1.0, upper=4.0)),
]


@pytest.mark.parametrize("name,kw", ALL)
def test_round_trip_z_to_x_to_z(name, kw):
    m = make_marginal(name, **kw)
    x = m.from_standard_normal(Z)
    assert np.all(np.diff(x) >= 0)
    inner = np.abs(Z) <= 5.0  # bounded supports saturate beyond ~5 sigma
    assert np.allclose(m.to_standard_normal(x)[inner], Z[inner], atol=1e-6)
    # F(x(z)) = Phi(z): the copula map itself, checked against scipy's normal.
    assert np.allclose(m.cdf(x[inner]), stats.norm.cdf(Z[inner]), rtol=1e-7, atol=1e-12)


@pytest.mark.parametrize("name,kw", ALL)
def test_stated_moments_are_those_of_the_distribution(name, kw):
    """Mean/std recomputed by numerical integration of x f(x) (scipy.integrate)."""
    from scipy import integrate

    m = make_marginal(name, **kw)
    lo, hi = m.from_standard_normal(-9.0), m.from_standard_normal(9.0)
    pts = [m.params["mode"]] if name == "triangular" else None
    mean = integrate.quad(lambda x: x * m.pdf(x), lo, hi, points=pts, limit=200)[0]
    var = integrate.quad(lambda x: (x - mean) ** 2 * m.pdf(x), lo, hi, points=pts,
                         limit=200)[0]
    assert mean == pytest.approx(m.mean, rel=1e-7)
    assert math.sqrt(var) == pytest.approx(m.std, rel=1e-6)
    if "mean" in kw:
        assert m.mean == pytest.approx(kw["mean"], rel=1e-9)
    if "cov" in kw:
        assert m.std / m.mean == pytest.approx(kw["cov"], rel=1e-8)
    if "std" in kw:
        assert m.std == pytest.approx(kw["std"], rel=1e-8)


def test_lognormal_textbook_parameters_and_reference_pf():
    # Lognormal closed form: mean 1.5, V = 0.2 -> beta = 1.9483, pf = 0.02569.
    m = make_marginal("lognormal", mean=1.5, cov=0.2)
    s2 = math.log(1 + 0.2**2)
    assert m.params["sigma_ln"] == pytest.approx(math.sqrt(s2), rel=1e-14)
    assert m.params["mu_ln"] == pytest.approx(math.log(1.5) - s2 / 2, rel=1e-14)
    assert -m.to_standard_normal(1.0) == pytest.approx(1.9483, abs=5e-5)
    assert m.cdf(1.0) == pytest.approx(0.02569, abs=5e-6)


def test_truncated_normal_matches_scipy_moments_of_solved_parent():
    m = make_marginal("truncated-normal", mean=1.0, cov=0.5, lower=0.0)
    p = m.params
    d = stats.truncnorm((0 - p["parent_mean"]) / p["parent_std"], np.inf,
                        loc=p["parent_mean"], scale=p["parent_std"])
    assert d.mean() == pytest.approx(1.0, rel=1e-9)
    assert d.std() == pytest.approx(0.5, rel=1e-9)
    assert m.from_standard_normal(-12.0) >= 0.0


def test_beta_shape_parameters_method_of_moments():
    # Standard beta moment relations: m = a/(a+b), v = ab/((a+b)^2 (a+b+1)).
    m = make_marginal("beta", mean=30.0, cov=0.1, lower=20.0, upper=40.0)
    a, b = m.params["alpha"], m.params["beta"]
    assert a / (a + b) == pytest.approx(0.5)
    assert a * b / ((a + b) ** 2 * (a + b + 1)) * 400 == pytest.approx(9.0)


def test_deterministic():
    m = make_marginal("deterministic", mean=18.0)
    assert np.all(m.from_standard_normal(Z) == 18.0)
    assert m.std == 0.0


# --- Nataf ----------------------------------------------------------------
def test_nataf_lognormal_pair_closed_form_agrees_with_quadrature():
    # Closed form ln(1 + rho V1 V2)/(zeta1 zeta2) (Der Kiureghian & Liu 1986)
    # checked against the project's independent 2D Gauss-Hermite integral.
    a = make_marginal("lognormal", mean=10.0, cov=0.3)
    b = make_marginal("lognormal", mean=25.0, cov=0.15)
    for rho in (-0.7, -0.3, 0.4, 0.8):
        r0 = nataf_correlation(a, b, rho)
        assert _physical_correlation(a, b, r0) == pytest.approx(rho, abs=1e-9)
    n = make_marginal("normal", mean=5.0, cov=0.2)
    r0 = nataf_correlation(n, a, 0.5)
    assert r0 == pytest.approx(0.5 * 0.3 / math.sqrt(math.log(1.09)), rel=1e-12)
    assert _physical_correlation(n, a, r0) == pytest.approx(0.5, abs=1e-10)


def test_nataf_uniform_pair_matches_pearson_arcsine_relation():
    # For uniforms of correlated Gaussians, rho_x = (6/pi) arcsin(rho0/2)
    # (Pearson 1907; Kruskal 1958, JASA 53:814-861) -> rho0 = 2 sin(pi rho/6).
    u1 = make_marginal("uniform", lower=0.0, upper=1.0)
    u2 = make_marginal("uniform", lower=-3.0, upper=5.0)
    for rho in (-0.9, -0.2, 0.5, 0.95):
        assert nataf_correlation(u1, u2, rho) == pytest.approx(
            2 * math.sin(math.pi * rho / 6), abs=1e-6)


def test_nataf_beta_lognormal_by_monte_carlo():
    """Sampled correlation within 4 standard errors; SE of a Pearson r is
    about (1 - rho^2)/sqrt(n) for near-normal data (Fisher 1915)."""
    a = make_marginal("beta", mean=30.0, cov=0.1, lower=20.0, upper=40.0)
    b = make_marginal("lognormal", mean=10.0, cov=0.4)
    rho, n = -0.6, 200_000
    r0 = nataf_correlation(a, b, rho)
    rng = np.random.default_rng(12)
    z1 = rng.standard_normal(n)
    z2 = r0 * z1 + math.sqrt(1 - r0**2) * rng.standard_normal(n)
    r = np.corrcoef(a.from_standard_normal(z1), b.from_standard_normal(z2))[0, 1]
    # lognormal tails inflate the SE; allow 2x the normal-theory value.
    assert abs(r - rho) < 4 * 2 * (1 - rho**2) / math.sqrt(n)


def test_nataf_matrix_and_non_pd_pair_is_named():
    ms = [make_marginal("lognormal", mean=10.0, cov=0.3),
          make_marginal("normal", mean=30.0, cov=0.1),
          make_marginal("lognormal", mean=18.0, cov=0.05)]
    R = np.array([[1, -0.5, 0.2], [-0.5, 1, 0.0], [0.2, 0.0, 1]])
    R0 = nataf_matrix(ms, R, names=["c", "phi", "gamma"])
    assert R0[0, 1] == pytest.approx(nataf_correlation(ms[0], ms[1], -0.5))
    assert np.allclose(R0, R0.T)
    bad = np.array([[1, 0.9, -0.9], [0.9, 1, 0.9], [-0.9, 0.9, 1]])
    with pytest.raises(InputError, match="not positive definite.*pair"):
        nataf_matrix(ms, bad, names=["c", "phi", "gamma"])
    with pytest.raises(InputError, match="cannot have correlation"):
        nataf_correlation(make_marginal("lognormal", mean=1, cov=2.0),
                          make_marginal("lognormal", mean=1, cov=2.0), -0.9)


# --- bad input ------------------------------------------------------------
@pytest.mark.parametrize("name,kw,msg", [
    ("weibull", dict(mean=1, cov=0.1), "unknown distribution"),
    ("normal", dict(mean=1, cov=0.0), "cov must be > 0"),
    ("lognormal", dict(mean=1, cov=-0.1), "cov must be > 0"),
    ("lognormal", dict(mean=-1, cov=0.1), "mean must be > 0"),
    ("normal", dict(mean=1, cov=0.1, std=0.1), "not both"),
    ("uniform", dict(lower=3, upper=1), "inverted"),
    ("beta", dict(mean=50, cov=0.1, lower=20, upper=40), "outside the bounds"),
    ("beta", dict(mean=30, cov=0.9, lower=20, upper=40), "too large"),
    ("triangular", dict(lower=0, mode=5, upper=4), "mode"),
    ("truncated-normal", dict(mean=1, cov=0.1), "lower"),
    ("truncated-normal", dict(mean=1, cov=1.5, lower=0), "no normal truncated"),
])
def test_bad_input(name, kw, msg):
    with pytest.raises(InputError, match=msg):
        make_marginal(name, **kw)
