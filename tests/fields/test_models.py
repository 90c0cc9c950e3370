"""Correlation models: θ definition, closed forms, anisotropy, GSTools conversion."""
import math

import gstools as gs
import numpy as np
import pytest
from scipy import integrate, special

from slipfield import fields
from slipfield.fields import InputError, get_model

ALL = [("exponential", {}), ("gaussian", {}), ("second-order-markov", {}),
       ("spherical", {}), ("matern", {"nu": 0.5}), ("matern", {"nu": 1.5}),
       ("matern", {"nu": 3.7})]


def test_public_api_star_import():
    ns = {}
    exec("from fields import *", ns)
    for name in fields.__all__:
        assert name in ns


@pytest.mark.parametrize("name,kw", ALL)
@pytest.mark.parametrize("axis_deg", [0.0, 90.0, 35.0])
def test_theta_is_integral_of_correlation(name, kw, axis_deg):
    # Vanmarcke (1983) definition θ = ∫ρ(τ)dτ over the whole line, integrated
    # by scipy.integrate.quad (an outside reference) along a line at axis_deg;
    # for the elliptical model the line's θ is 1/√((cos b/θh)² + (sin b/θv)²)
    m = get_model(name, theta_h=6.0, theta_v=1.5, angle=20.0, **kw)
    c, s = math.cos(math.radians(axis_deg)), math.sin(math.radians(axis_deg))
    val = 2 * integrate.quad(lambda t: float(m.correlation(t * c, t * s)), 0, np.inf,
                             limit=400, epsabs=1e-12)[0]
    b = math.radians(axis_deg - 20.0)
    expected = 1 / math.hypot(math.cos(b) / 6.0, math.sin(b) / 1.5)
    assert val == pytest.approx(expected, rel=1e-7)
    assert m.theta_along(axis_deg) == pytest.approx(expected, rel=1e-12)


def test_closed_form_definitions():
    tau = np.linspace(0, 10, 41)
    th = 2.5
    # Vanmarcke 1983 / Fenton & Griffiths 2008 forms of ρ(τ) in terms of θ
    assert np.allclose(get_model("markov", theta_h=th).correlation(tau), np.exp(-2 * tau / th))
    assert np.allclose(get_model("squared-exponential", theta_h=th).correlation(tau),
                       np.exp(-np.pi * tau ** 2 / th ** 2))
    b = th / 4
    assert np.allclose(get_model("second-order-markov", theta_h=th).correlation(tau),
                       (1 + tau / b) * np.exp(-tau / b))
    a = 4 * th / 3  # spherical range, θ = 3a/4 (Vanmarcke 1983)
    r = np.minimum(tau / a, 1)
    assert np.allclose(get_model("spherical", theta_h=th).correlation(tau),
                       1 - 1.5 * r + 0.5 * r ** 3)
    # Matérn ν=1/2 is the Markov model: K_{1/2}(x) = √(π/2x) e^{-x} (Abramowitz & Stegun 10.2.17)
    assert np.allclose(get_model("matern", theta_h=th, nu=0.5).correlation(tau),
                       np.exp(-2 * tau / th), atol=1e-14)
    # Matérn ν=3/2 is the second-order Markov model (closed form of K_{3/2})
    assert np.allclose(get_model("matern", theta_h=th, nu=1.5).correlation(tau),
                       (1 + tau / b) * np.exp(-tau / b), atol=1e-14)


def test_matern_against_scipy_kv():
    # direct evaluation of the textbook Matérn form with scipy.special.kv; ℓ from
    # θ = ℓ √(2π/ν) Γ(ν+½)/Γ(ν) (Gradshteyn & Ryzhik 6.561.16)
    nu, th = 2.3, 3.0
    ell = th / (math.sqrt(2 * math.pi / nu) * special.gamma(nu + 0.5) / special.gamma(nu))
    tau = np.linspace(0.01, 12, 50)
    x = math.sqrt(2 * nu) * tau / ell
    ref = 2 ** (1 - nu) / special.gamma(nu) * x ** nu * special.kv(nu, x)
    got = get_model("matern", theta_h=th, nu=nu).correlation(tau)
    assert np.allclose(got, ref, rtol=1e-10, atol=1e-300)


@pytest.mark.parametrize("name,kw", ALL)
def test_gstools_conversion(name, kw):
    # GSTools (outside reference): its model built by to_gstools must give the
    # same correlation at arbitrary 2D lags, rotation and anisotropy included,
    # and its integral scale must be θh/2 (GSTools' definition: ∫₀^∞ ρ).
    m = get_model(name, theta_h=8.0, theta_v=2.0, angle=-25.0, **kw)
    gm = m.to_gstools()
    assert gm.integral_scale == pytest.approx(4.0, rel=1e-9)
    rng = np.random.default_rng(0)
    lags = rng.uniform(-10, 10, size=(2, 200))
    ours = m.correlation(lags[0], lags[1])
    theirs = gm.cov_spatial(lags) / gm.var
    assert np.allclose(ours, theirs, atol=1e-12)


def test_gstools_len_scale_convention():
    # GSTools (covmodel/models.py): Exponential ρ = exp(-r/ℓ) and
    # Gaussian ρ = exp(-π r²/4ℓ²), so ℓ = θ/2 for both
    assert get_model("exponential", theta_h=10.0).to_gstools().len_scale == pytest.approx(5.0)
    assert get_model("gaussian", theta_h=10.0).to_gstools().len_scale == pytest.approx(5.0)
    assert isinstance(get_model("exponential", theta_h=1.0).to_gstools(), gs.Exponential)


def test_rotation_convention():
    # DEVELOPERS.md: angle from +x to the θh direction, counter-clockwise
    # positive; a stratum dipping down to the right by 10° has angle = -10.
    m = get_model("exponential", theta_h=20.0, theta_v=2.0, angle=-10.0)
    d = 5.0
    a = math.radians(-10.0)
    along = m.correlation(d * math.cos(a), d * math.sin(a))
    across = m.correlation(-d * math.sin(a), d * math.cos(a))
    assert along == pytest.approx(math.exp(-2 * d / 20.0))
    assert across == pytest.approx(math.exp(-2 * d / 2.0))
    # rotating the lag with the model leaves the correlation unchanged
    rng = np.random.default_rng(1)
    l1, l2 = rng.normal(size=(2, 50)) * 4
    m0 = get_model("gaussian", theta_h=7.0, theta_v=3.0)
    for ang in (-40.0, 15.0, 90.0, 200.0):
        mr = m0.with_theta(angle=ang)
        c, s = math.cos(math.radians(ang)), math.sin(math.radians(ang))
        assert np.allclose(mr.correlation(c * l1 - s * l2, s * l1 + c * l2),
                           m0.correlation(l1, l2))
    # angle 90° swaps the roles of θh and θv
    m90 = get_model("spherical", theta_h=7.0, theta_v=3.0, angle=90.0)
    sw = get_model("spherical", theta_h=3.0, theta_v=7.0)
    assert np.allclose(m90.correlation(l1, l2), sw.correlation(l1, l2))


def test_anisotropy_metamorphic_covariance():
    # ratio θv/θh = 0.5 at vertical position y equals the isotropic model at 2y
    rng = np.random.default_rng(2)
    pts = rng.uniform(0, 10, size=(30, 2))
    aniso = get_model("exponential", theta_h=4.0, theta_v=2.0)
    iso = get_model("exponential", theta_h=4.0)
    assert np.allclose(aniso.covariance_matrix(pts), iso.covariance_matrix(pts * [1.0, 2.0]))


def test_covariance_matrix_shape_and_symmetry():
    m = get_model("matern", theta_h=3.0, theta_v=1.0, angle=30.0, nu=1.2)
    a = np.random.default_rng(3).uniform(0, 5, size=(12, 2))
    b = a[:5] + 0.3
    C = m.covariance_matrix(a)
    assert C.shape == (12, 12)
    assert np.allclose(C, C.T) and np.allclose(np.diag(C), 1.0)
    assert np.linalg.eigvalsh(C).min() > 0
    assert m.covariance_matrix(a, b).shape == (12, 5)


@pytest.mark.parametrize("bad", [
    dict(name="exponential", theta_h=0.0),
    dict(name="exponential", theta_h=-1.0),
    dict(name="exponential", theta_h=2.0, theta_v=0.0),
    dict(name="exponential", theta_h=float("nan")),
    dict(name="gaussian", theta_h=2.0, length_scale=3.0),
    dict(name="exponential", theta_h=2.0, nu=1.0),
    dict(name="matern", theta_h=2.0),
    dict(name="matern", theta_h=2.0, nu=-1.0),
    dict(name="matern", theta_h=2.0, nu=1.0, foo=2),
    dict(name="cubic", theta_h=2.0),
    dict(name="exponential", theta_h=2.0, angle="steep"),
])
def test_bad_input_raises_input_error(bad):
    name = bad.pop("name")
    with pytest.raises(InputError):
        get_model(name, **bad)


def test_theta_keyword_only_and_messages():
    with pytest.raises(TypeError):
        get_model("exponential", 2.0)  # θ must be named
    with pytest.raises(InputError, match="theta_h"):
        get_model("exponential", theta_h=-2)
    with pytest.raises(InputError, match="length_scale"):
        get_model("exponential", theta_h=2, length_scale=1)
    # aliases and spelling variants
    assert isinstance(get_model("Squared_Exponential", theta_h=1.0), type(get_model("gaussian", theta_h=1.0)))
    assert get_model("markov", theta_h=1.0) == get_model("exponential", theta_h=1.0)


# --------------------------------------------------------------- spectra
# One-sided spectral densities G(ω) = (2/π)∫₀^∞ρ(τ)cos(ωτ)dτ, closed forms from
# Vanmarcke (1983, *Random Fields*, Table 3.1) as Fourier pairs that can be
# checked by hand (exponential: standard Lorentzian pair; squared exponential:
# Gaussian pair; second-order Markov: Vanmarcke's Table 3.1, recalled from memory,
# but verifiable by differentiating the Lorentzian pair with respect to b).
_W = np.array([0.0, 0.05, 0.3, 1.0, 2.5, 7.0])


@pytest.mark.parametrize("theta", [0.7, 2.0, 15.0])
def test_spectral_density_closed_forms(theta):
    w = _W / theta * 2.0
    exp_g = (theta / math.pi) / (1.0 + (w * theta / 2.0) ** 2)
    gau_g = (theta / math.pi) * np.exp(-(w * theta) ** 2 / (4.0 * math.pi))
    b = theta / 4.0
    som_g = (4.0 * b / math.pi) / (1.0 + (w * b) ** 2) ** 2
    for name, ref in (("exponential", exp_g), ("gaussian", gau_g), ("second-order-markov", som_g)):
        got = get_model(name, theta_h=theta).spectral_density(w)
        np.testing.assert_allclose(got, ref, rtol=1e-6, atol=1e-10 * theta, err_msg=name)
    # Whittle–Matérn with ν = 3/2 is the second-order Markov model
    np.testing.assert_allclose(get_model("matern", theta_h=theta, nu=1.5).spectral_density(w), som_g,
                               rtol=1e-6, atol=1e-10 * theta)


@pytest.mark.filterwarnings("ignore::scipy.integrate.IntegrationWarning")
@pytest.mark.parametrize("name", ["exponential", "gaussian", "second-order-markov", "spherical"])
def test_spectral_density_gives_theta_and_unit_variance(name):
    # Vanmarcke (1983): θ = π G(0) and ∫₀^∞ G dω = σ² = 1
    from scipy import integrate

    m = get_model(name, theta_h=3.0)
    assert math.pi * m.spectral_density([0.0])[0] == pytest.approx(3.0, rel=1e-8)
    var = integrate.quad(lambda w: m.spectral_density([w])[0], 0, np.inf, limit=400)[0]
    # the exponential's G decays like ω⁻² so the tail integral converges slowly
    assert var == pytest.approx(1.0, rel=2e-3)


def test_spectral_density_along_a_direction_and_bad_omega():
    m = get_model("exponential", theta_h=20.0, theta_v=2.0)
    # along the vertical the 1D process has θ = θv, hence G(0) = θv/π
    assert m.spectral_density([0.0], direction_deg=90.0)[0] == pytest.approx(2.0 / math.pi)
    with pytest.raises(Exception, match="omega"):
        m.spectral_density([-1.0])
