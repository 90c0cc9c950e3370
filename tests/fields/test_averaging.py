"""Variance function γ and covariance of local averages."""
import math

import numpy as np
import pytest
from scipy import integrate, stats

from slipfield.fields import (InputError, RegularGrid, cell_average_covariance, get_model,
                    grid_cell_covariance, make_generator, variance_function,
                    variance_function_2d)

CLOSED = ["exponential", "gaussian", "second-order-markov", "spherical"]


def test_published_values():
    # Exact values of the closed forms (Vanmarcke 1983):
    # Markov / squared exponential at T/θ = 0.5 and 2
    th = 3.0
    mk = get_model("markov", theta_h=th)
    se = get_model("squared-exponential", theta_h=th)
    assert variance_function(mk, 0.5 * th) == pytest.approx(0.735759, abs=5e-7)
    assert variance_function(se, 0.5 * th) == pytest.approx(0.887096, abs=5e-7)
    assert variance_function(mk, 2 * th) == pytest.approx(0.377289, abs=5e-7)
    assert variance_function(se, 2 * th) == pytest.approx(0.420423, abs=5e-7)


def _gamma_by_quad(rho, T):
    # γ(T) = (2/T)∫₀ᵀ(1 − τ/T)ρ(τ)dτ (Vanmarcke 1983; Fenton & Griffiths 2008),
    # integrated by scipy.integrate.quad as the outside reference
    return 2 / T * integrate.quad(lambda t: (1 - t / T) * rho(t), 0, T, limit=400,
                                  epsabs=1e-13)[0]


@pytest.mark.parametrize("name", CLOSED)
def test_closed_forms_against_quadrature(name):
    # closed forms (Vanmarcke 1983) against quad of the definition,
    # and our own numerical route against both
    th = 2.0
    m = get_model(name, theta_h=th)
    T = np.array([0.02, 0.3, 1.0, 2.7, 8.0, 40.0])
    closed = variance_function(m, T)
    ref = np.array([_gamma_by_quad(lambda t: float(m.correlation(t)), t) for t in T])
    assert np.allclose(closed, ref, rtol=1e-9)
    assert np.allclose(variance_function(m, T, method="numerical"), closed, rtol=1e-8)


@pytest.mark.parametrize("name,kw", [(n, {}) for n in CLOSED] + [("matern", {"nu": 0.8}),
                                                                 ("matern", {"nu": 4.0})])
def test_limits(name, kw):
    # γ(0) = 1 and T·γ(T)/θ → 1 as T → ∞ (Vanmarcke 1983). The slowest models
    # (Markov, Matérn with small ν) approach 1 like 1 − O(θ/T): at T = 1e4 θ the
    # gap is below 1e-3.
    th = 1.7
    m = get_model(name, theta_h=th, theta_v=0.4, **kw)
    assert variance_function(m, 0.0) == 1.0
    assert variance_function(m, 1e-6 * th) == pytest.approx(1.0, abs=1e-5)
    big = 1e4 * th
    assert big * variance_function(m, big) / th == pytest.approx(1.0, abs=1e-3)
    # along the vertical axis θv takes over
    assert big * variance_function(m, big, axis="v") / 0.4 == pytest.approx(1.0, abs=1e-3)


def test_matern_special_cases_match_closed_forms():
    # Matérn ν = 1/2 ≡ Markov, ν = 3/2 ≡ second-order Markov: the numerical γ
    # must reproduce the published closed forms
    T = np.array([0.1, 1.0, 3.0, 12.0])
    for nu, other in ((0.5, "exponential"), (1.5, "second-order-markov")):
        a = variance_function(get_model("matern", theta_h=2.0, nu=nu), T)
        b = variance_function(get_model(other, theta_h=2.0), T)
        assert np.allclose(a, b, rtol=1e-8)


def test_2d_separable_gaussian_product():
    # Vanmarcke (1983): γ(X, Y) = γ(X)γ(Y) holds for the (separable) squared
    # exponential; our 2D quadrature must agree with the product of closed forms
    m = get_model("gaussian", theta_h=5.0, theta_v=1.0)
    X, Y = np.array([1.0, 7.0, 20.0]), np.array([0.5, 2.0, 0.1])
    prod = variance_function_2d(m, X, Y)
    assert np.allclose(prod, variance_function(m, X, axis="h") * variance_function(m, Y, axis="v"))
    assert np.allclose(variance_function_2d(m, X, Y, method="numerical"), prod, rtol=1e-7)


def test_2d_elliptical_exponential_against_dblquad():
    # elliptical Markov model, rotated: the product form is not valid
    # (Vanmarcke 1983); scipy's dblquad of the definition is the reference
    m = get_model("exponential", theta_h=3.0, theta_v=1.0, angle=30.0)
    X, Y = 3.0, 2.0
    ref = integrate.dblquad(
        lambda ty, tx: (1 - abs(tx) / X) * (1 - abs(ty) / Y) * float(m.correlation(tx, ty)),
        -X, X, -Y, Y, epsabs=1e-11)[0] / (X * Y)
    got = variance_function_2d(m, X, Y)
    assert got == pytest.approx(ref, rel=1e-7)
    prod = variance_function(m, X, axis="x") * variance_function(m, Y, axis="y")
    assert abs(prod - ref) / ref > 0.01  # why the 2D integral is needed
    # a vanishing side reduces to the 1D closed form along the other axis
    m0 = get_model("exponential", theta_h=3.0, theta_v=1.0)
    assert variance_function_2d(m0, 1e-7, 2.0) == pytest.approx(
        float(variance_function(m0, 2.0, axis="v")), rel=1e-6)


def _cov_adjacent_1d(g, X, k):
    # covariance of averages over two length-X intervals k lengths apart, from γ
    # (Vanmarcke 1983, covariance of local averages):
    # Cov = [((k+1)X)²γ((k+1)X) − 2(kX)²γ(kX) + ((k−1)X)²γ((k−1)X)] / (2X²)
    f = lambda L: L ** 2 * g(L)
    return (f((k + 1) * X) - 2 * f(k * X) + f(abs(k - 1) * X)) / (2 * X ** 2)


@pytest.mark.parametrize("cell_over_theta", [0.1, 1.0, 10.0])
def test_cell_covariance_against_gamma_identity(cell_over_theta):
    # separable squared exponential: cell covariance = 1D covariance along x
    # (from the closed-form γ) × γ along y; cells both small and large vs θ
    m = get_model("gaussian", theta_h=1.0, theta_v=0.5)
    X = cell_over_theta * 1.0
    Y = 0.7
    gx = lambda L: float(variance_function(m, L, axis="x"))
    gy = float(variance_function(m, Y, axis="y"))
    for k in (0, 1, 2, 4):
        ref = _cov_adjacent_1d(gx, X, k) * gy
        got = float(grid_cell_covariance(m, X, Y, k * X, 0.0))
        assert got == pytest.approx(ref, rel=1e-6, abs=1e-14)
    # Markov on a line (cells thin in y): same identity with the Markov closed form
    mk = get_model("exponential", theta_h=1.0)
    gk = lambda L: float(variance_function(mk, L))
    for k in (0, 1, 3):
        got = float(grid_cell_covariance(mk, X, 1e-9, k * X, 0.0))
        assert got == pytest.approx(_cov_adjacent_1d(gk, X, k), rel=1e-6, abs=1e-14)


def test_cell_covariance_zero_offset_is_gamma_2d():
    m = get_model("exponential", theta_h=4.0, theta_v=1.0, angle=-15.0)
    assert float(grid_cell_covariance(m, 2.0, 0.8, 0.0, 0.0)) == pytest.approx(
        float(variance_function_2d(m, 2.0, 0.8)), rel=1e-6)


def test_cell_average_covariance_quadrature():
    # general cells via Gauss–Legendre points on rectangles: converges to the
    # grid-cell result for a smooth model
    m = get_model("gaussian", theta_h=2.0, theta_v=1.0, angle=20.0)
    dx, dy = 1.0, 0.5
    centres = np.array([[0.5, 0.25], [1.5, 0.25], [0.5, 1.25], [3.5, 2.25]])
    x, w = np.polynomial.legendre.leggauss(10)
    qx, qy = np.meshgrid(x * dx / 2, x * dy / 2, indexing="ij")
    qw = np.outer(w, w).ravel()
    qp = centres[:, None, :] + np.column_stack([qx.ravel(), qy.ravel()])[None]
    C = cell_average_covariance(m, qp, np.tile(qw, (4, 1)))
    off = centres[:, None, :] - centres[None, :, :]
    ref = grid_cell_covariance(m, dx, dy, off[..., 0], off[..., 1])
    assert np.allclose(C, ref, rtol=1e-7)
    with pytest.raises(InputError):
        cell_average_covariance(m, qp, np.ones((4, 3)))


def test_simulated_line_average_variance_matches_gamma():
    # Monte Carlo check of Var[average over T] = γ(T) (Vanmarcke 1983) with
    # the exact circulant generator on a fine line (dx = θ/32, discretisation
    # bias of the midpoint average ≈ (dx/θ)² ~ 1e-3, far below the band).
    # n independent realisations: (n−1)s²/γ ~ χ²(n−1); two-sided band at
    # p = 1e-5 per check.
    th = 1.0
    m = get_model("exponential", theta_h=th)
    dx = th / 32
    grid = RegularGrid(0, 0, 32 * 4, 1, dx, 1.0)
    gen = make_generator("fft", m, grid=grid)
    n = 6000
    z = gen.sample(11, range(n))
    for T_over_theta in (0.5, 1.0, 4.0):
        k = int(round(T_over_theta * th / dx))
        avg = z[:, :k].mean(axis=1)
        g = float(variance_function(m, T_over_theta * th))
        lo, hi = stats.chi2.ppf([0.5e-5, 1 - 0.5e-5], n - 1) / (n - 1) * g
        assert lo < avg.var(ddof=1) < hi


def test_cell_averaged_generator_variance():
    # fields of cell averages (average_cells=True) with cells larger than θ:
    # point variance must equal γ(dx, dy), here the separable squared-exponential
    # product of closed forms; χ² band from n realisations (p = 1e-5)
    m = get_model("gaussian", theta_h=1.0, theta_v=0.5)
    grid = RegularGrid(0, 0, 12, 6, 2.0, 1.0)
    g = float(variance_function(m, 2.0, axis="x") * variance_function(m, 1.0, axis="y"))
    n = 4000
    for method in ("fft", "cholesky"):
        gen = make_generator(method, m, grid=grid, average_cells=True)
        z = gen.sample(5, range(n))
        lo, hi = stats.chi2.ppf([0.5e-5, 1 - 0.5e-5], n - 1) / (n - 1) * g
        assert lo < z[:, 0].var(ddof=1) < hi
        assert lo < z[:, 40].var(ddof=1) < hi


def test_bad_inputs():
    m = get_model("exponential", theta_h=1.0)
    with pytest.raises(InputError):
        variance_function(m, -1.0)
    with pytest.raises(InputError):
        variance_function(m, 1.0, axis="z")
    with pytest.raises(InputError):
        variance_function("exponential", 1.0)
    with pytest.raises(InputError):
        variance_function_2d(m, 1.0, -2.0)
    with pytest.raises(InputError):
        grid_cell_covariance(m, 0.0, 1.0, 0.0, 0.0)
