"""Conditional simulation by simple kriging (fields.conditioning).

Tolerances are 4 standard errors at the sample size used (fixed seeds):
mean SE = sqrt(var/n); sample-variance SE = var sqrt(2/(n-1)) (Gaussian);
sample-covariance SE_ij = sqrt((Σ_ij² + Σ_ii Σ_jj)/(n-1)) (variance of a
Wishart entry, Anderson 2003, An Introduction to Multivariate Statistical
Analysis, §7.2 (recalled from memory)).
"""
import math

import numpy as np
import pytest

from slipfield.fields import RegularGrid, get_model, make_generator
from slipfield.fields.conditioning import ConditionalGenerator, from_gaussian, to_gaussian
from slipfield.fields.errors import InputError
from slipfield.fields.marginals import make_marginal

MODEL = get_model("exponential", theta_h=8.0, theta_v=2.0, angle=-10.0)
DATA_P = np.array([[1.0, 1.0], [4.0, 2.0], [7.5, 0.5]])
DATA_V = np.array([0.8, -1.2, 0.3])
TARGETS = np.array([[2.0, 1.5], [3.0, 1.0], [5.0, 1.8], [9.0, 3.0]])


def test_honours_data_exactly_with_zero_nugget():
    pts = np.vstack([TARGETS, DATA_P])  # the data locations are targets too
    cg = ConditionalGenerator(MODEL, DATA_P, DATA_V, points=pts)
    z = cg.sample(4, range(50))
    np.testing.assert_allclose(z[:, 4:], np.broadcast_to(DATA_V, (50, 3)), atol=1e-9)
    np.testing.assert_allclose(cg.kriging_variance()[4:], 0.0, atol=1e-12)


def test_honours_data_on_an_fft_grid_when_data_at_cell_centres():
    g = RegularGrid(0.0, 0.0, 16, 8, 0.5, 0.5)
    gen = make_generator("fft", MODEL, grid=g)
    cells = g.points()[[5, 40, 100]]
    cg = ConditionalGenerator(gen, cells, DATA_V)
    z = cg.sample_grid(1, range(3))
    assert z.shape == (3, 16, 8)
    np.testing.assert_allclose(z.reshape(3, -1)[:, [5, 40, 100]], np.broadcast_to(DATA_V, (3, 3)),
                               atol=1e-9)


def test_mean_variance_and_conditional_covariance_off_data():
    n = 4000
    cg = ConditionalGenerator(MODEL, DATA_P, DATA_V, points=TARGETS)
    z = cg.sample(21, range(n))
    kv = cg.kriging_variance()
    assert np.all(np.abs(z.mean(axis=0) - cg.kriged_mean()) <= 4 * np.sqrt(kv / n))
    # closed form of the conditional covariance, computed here from the model
    C = MODEL.covariance_matrix
    S = C(TARGETS) - C(TARGETS, DATA_P) @ np.linalg.solve(C(DATA_P), C(DATA_P, TARGETS))
    np.testing.assert_allclose(cg.conditional_covariance(), S, atol=1e-12)
    np.testing.assert_allclose(np.diag(S), kv, atol=1e-12)
    Sh = np.cov(z, rowvar=False)
    se = np.sqrt((S ** 2 + np.outer(np.diag(S), np.diag(S))) / (n - 1))
    assert np.all(np.abs(Sh - S) <= 4 * se), np.abs(Sh - S) / se
    # and the covariance is not merely the kriging variance (off-diagonal > 0)
    assert S[0, 1] > 8 * se[0, 1]


def test_nugget_variance_at_data_points():
    # an isolated datum with measurement-error variance e: conditional variance
    # of the true field there is 1 - 1/(1 + e) = e/(1 + e) ≈ e for small e
    # (simple kriging with one datum, closed form)
    e = 0.1
    d = np.array([[0.0, 0.0]])
    pts = np.array([[0.0, 0.0], [500.0, 0.0]])
    cg = ConditionalGenerator(MODEL, d, np.array([1.5]), nugget=e, points=pts)
    n = 4000
    z = cg.sample(2, range(n))
    v_exp = e / (1 + e)
    assert cg.kriging_variance()[0] == pytest.approx(v_exp, rel=1e-12)
    assert abs(z[:, 0].var(ddof=1) - v_exp) <= 4 * v_exp * math.sqrt(2 / (n - 1))
    assert abs(z[:, 0].mean() - 1.5 / (1 + e)) <= 4 * math.sqrt(v_exp / n)
    # far away the datum has no influence: N(0, 1)
    assert abs(z[:, 1].var(ddof=1) - 1.0) <= 4 * math.sqrt(2 / (n - 1))


def test_kriged_mean_agrees_with_gstools_simple_kriging():
    gs = pytest.importorskip("gstools")
    # outside reference: GSTools' simple kriging with the equivalent model
    # (θ = 2 ℓ for the exponential, converted in CorrelationModel.to_gstools)
    gm = MODEL.to_gstools()
    assert gm.len_scale == pytest.approx(MODEL.theta_h / 2)
    krig = gs.krige.Simple(gm, cond_pos=[DATA_P[:, 0], DATA_P[:, 1]], cond_val=DATA_V, mean=0.0)
    field, var = krig((TARGETS[:, 0], TARGETS[:, 1]), mesh_type="unstructured")
    cg = ConditionalGenerator(MODEL, DATA_P, DATA_V, points=TARGETS)
    np.testing.assert_allclose(cg.kriged_mean(), field, atol=1e-8)
    np.testing.assert_allclose(cg.kriging_variance(), var, atol=1e-8)


def test_reproducible_whatever_batch():
    cg = ConditionalGenerator(MODEL, DATA_P, DATA_V, nugget=0.05, points=TARGETS)
    a = cg.sample(3, range(6))
    b = cg.sample(3, [4])
    np.testing.assert_array_equal(a[4], b[0])


def test_gaussian_transform_round_trip_lognormal():
    m = make_marginal("lognormal", mean=20.0, cov=0.25)
    x = np.array([12.0, 20.0, 31.0])
    z = to_gaussian(m, x)
    zeta = math.sqrt(math.log(1 + 0.25 ** 2))
    lam = math.log(20.0) - 0.5 * zeta ** 2  # lognormal closed form
    np.testing.assert_allclose(z, (np.log(x) - lam) / zeta, rtol=1e-12)
    np.testing.assert_allclose(from_gaussian(m, z), x, rtol=1e-12)


def test_errors_name_the_input():
    with pytest.raises(InputError, match="data_values must have shape"):
        ConditionalGenerator(MODEL, DATA_P, DATA_V[:2], points=TARGETS)
    with pytest.raises(InputError, match="data_values contain NaN"):
        ConditionalGenerator(MODEL, DATA_P, [0.0, np.nan, 1.0], points=TARGETS)
    with pytest.raises(InputError, match="nugget must be"):
        ConditionalGenerator(MODEL, DATA_P, DATA_V, nugget=-1, points=TARGETS)
    dup = np.vstack([DATA_P, DATA_P[:1]])
    with pytest.raises(InputError, match="data points 0 and 3 are 0 m apart"):
        ConditionalGenerator(MODEL, dup, np.r_[DATA_V, 0.1], points=TARGETS)
    # with measurement error, duplicate data are allowed
    ConditionalGenerator(MODEL, dup, np.r_[DATA_V, 0.1], nugget=0.1, points=TARGETS)
    gen = make_generator("fft", MODEL, grid=RegularGrid(0, 0, 8, 8, 1, 1))
    with pytest.raises(InputError, match="not at cell centres"):
        ConditionalGenerator(gen, DATA_P, DATA_V)
    tn = make_marginal("truncated-normal", mean=30.0, cov=0.1, lower=20.0, upper=40.0)
    with pytest.raises(InputError, match=r"data_values\[1\] = 45"):
        to_gaussian(tn, [25.0, 45.0])


def test_conditional_covariance_with_measurement_error_on_a_grid():
    # model + grid targets, data off the cell centres (joint Cholesky on
    # targets + data); closed form with the nugget on C_dd's diagonal
    g = RegularGrid(0.0, 0.0, 4, 2, 2.5, 1.0)
    e = 0.2
    cg = ConditionalGenerator(MODEL, DATA_P, DATA_V, nugget=e, grid=g)
    n = 4000
    z = cg.sample_grid(8, range(n)).reshape(n, -1)
    T = g.points()
    C = MODEL.covariance_matrix
    Cdd = C(DATA_P) + e * np.eye(3)
    S = C(T) - C(T, DATA_P) @ np.linalg.solve(Cdd, C(DATA_P, T))
    mean = C(T, DATA_P) @ np.linalg.solve(Cdd, DATA_V)
    np.testing.assert_allclose(cg.kriged_mean(), mean, atol=1e-12)
    assert np.all(np.abs(z.mean(axis=0) - mean) <= 4 * np.sqrt(np.diag(S) / n))
    se = np.sqrt((S ** 2 + np.outer(np.diag(S), np.diag(S))) / (n - 1))
    assert np.all(np.abs(np.cov(z, rowvar=False) - S) <= 4 * se)


def test_data_covariance_with_errors_per_datum_agrees_with_gstools():
    gs = pytest.importorskip("gstools")
    # outside reference: GSTools' simple kriging with a measurement-error
    # variance per datum (cond_err, exact=False) — the simulator's kriging step
    from slipfield.fields.conditioning import DataCovariance

    err = np.array([0.0, 0.1, 0.3])
    krig = gs.krige.Simple(MODEL.to_gstools(), cond_pos=[DATA_P[:, 0], DATA_P[:, 1]], cond_val=DATA_V,
                           mean=0.0, cond_err=list(err), exact=False)
    field, var = krig((TARGETS[:, 0], TARGETS[:, 1]), mesh_type="unstructured")
    dc = DataCovariance(MODEL, DATA_P, err)
    W = dc.weights(TARGETS)
    np.testing.assert_allclose(W @ DATA_V, field, atol=1e-8)
    C = MODEL.covariance_matrix(TARGETS, DATA_P)
    np.testing.assert_allclose(1.0 - np.einsum("td,td->t", W, C), var, atol=1e-8)
