"""Cross-correlated properties, depth trends and zones (fields.properties).

Statistical tolerances: 4 standard errors of the estimator at the sample size
used (two-sided false-alarm probability ≈ 6e-5 per check; the seeds are fixed
so the tests are deterministic).  Points spaced 100 θ apart are independent
to within exp(-200) (exponential model), so each realisation contributes
several independent draws.
"""
import math

import numpy as np
import pytest
from scipy import stats

from slipfield.fields import get_model
from slipfield.fields.errors import InputError
from slipfield.fields.marginals import make_marginal, nataf_matrix
from slipfield.fields.properties import DepthTrend, PropertyField, correlated_properties

EXP = get_model("exponential", theta_h=1.0, theta_v=1.0)
FAR = np.column_stack([np.arange(5) * 100.0, np.zeros(5)])  # 5 independent points
C_LN = make_marginal("lognormal", mean=10.0, cov=0.3)
PHI_TN = make_marginal("truncated-normal", mean=30.0, cov=0.1, lower=20.0, upper=40.0)
PHI_BETA = make_marginal("beta", mean=30.0, cov=0.1, lower=15.0, upper=45.0)


def _fisher_ok(r, target, n, k=4.0):
    """|atanh r - atanh target| <= k/sqrt(n-3) (Fisher 1921 z transform)."""
    return abs(math.atanh(r) - math.atanh(target)) <= k / math.sqrt(n - 3)


@pytest.mark.parametrize("phi_marg", [PHI_TN, PHI_BETA], ids=["truncnorm", "beta"])
def test_output_correlation_c_phi_equals_target(phi_marg):
    # c'–φ' correlation -0.5 (common practice for a negative c'–φ' link); the
    # check is against the target itself, with the Fisher (1921) z standard
    # error 1/sqrt(n-3).
    specs = [PropertyField("c", C_LN, EXP), PropertyField("phi", phi_marg, EXP)]
    cp = correlated_properties(specs, [[1, -0.5], [-0.5, 1]], points=FAR)
    out = cp.sample(11, range(3000))
    n = out["c"].size
    r = np.corrcoef(out["c"].ravel(), out["phi"].ravel())[0, 1]
    assert _fisher_ok(r, -0.5, n), (r, n)
    # the Gaussian correlation used is the Nataf adjustment, not the target
    R0 = nataf_matrix([C_LN, phi_marg], [[1, -0.5], [-0.5, 1]])
    assert cp.zone_sampler().R0 == pytest.approx(R0)


def test_marginal_moments_match_scipy():
    # reference distributions built independently in scipy.stats
    cp = correlated_properties([PropertyField("c", C_LN, EXP),
                                PropertyField("phi", PHI_TN, EXP)],
                               [[1, -0.5], [-0.5, 1]], points=FAR)
    out = cp.sample(3, range(2000))
    zeta = math.sqrt(math.log(1 + 0.3 ** 2))
    ref_c = stats.lognorm(s=zeta, scale=10.0 / math.sqrt(1 + 0.3 ** 2))
    p = PHI_TN.params
    a, b = (20 - p["parent_mean"]) / p["parent_std"], (40 - p["parent_mean"]) / p["parent_std"]
    ref_phi = stats.truncnorm(a, b, loc=p["parent_mean"], scale=p["parent_std"])
    for x, ref in ((out["c"].ravel(), ref_c), (out["phi"].ravel(), ref_phi)):
        n = x.size
        m, v, _, kurt = ref.stats("mvsk")
        # SE of the mean sigma/sqrt(n); of the variance sigma^2 sqrt((kurt_excess + 2)/n)
        assert abs(x.mean() - m) <= 4 * math.sqrt(v / n)
        assert abs(x.var(ddof=1) - v) <= 4 * v * math.sqrt((kurt + 2) / n)
        assert stats.kstest(x, ref.cdf).pvalue > 1e-4


def test_gaussian_cross_correlation_at_a_lag_is_R0_times_rho():
    # intrinsic coregionalisation: corr(Z1(x), Z2(x+tau)) = R0 rho(tau)
    # (Wackernagel 2003, intrinsic correlation (recalled from memory)); normal
    # marginals so R0 = R.
    tau = 0.5
    pts = np.array([[0.0, 0.0], [tau, 0.0]])
    a = PropertyField("a", make_marginal("normal", mean=0.0, std=1.0), EXP)
    b = PropertyField("b", make_marginal("normal", mean=5.0, std=2.0), EXP)
    out = correlated_properties([a, b], [[1, 0.6], [0.6, 1]], points=pts).sample(5, range(4000))
    r = np.corrcoef(out["a"][:, 0], out["b"][:, 1])[0, 1]
    expected = 0.6 * math.exp(-2 * tau / 1.0)  # Markov rho = exp(-2|tau|/theta)
    assert _fisher_ok(r, expected, 4000), (r, expected)


def test_normal_trend_mean_profile_is_the_linear_law():
    y = np.linspace(-10.0, 0.0, 6)
    pts = np.column_stack([np.zeros_like(y), y])
    trend = DepthTrend(gradient=2.0, y_ref=0.0)  # +2 kPa per m of depth
    sp = PropertyField("su", make_marginal("normal", mean=20.0, std=4.0), "exponential",
                       theta_h=20.0, theta_v=2.0, trend=trend)
    out = correlated_properties([sp], points=pts).sample(7, range(3000))["su"]
    expected = 20.0 + 2.0 * (0.0 - y)
    se = 4.0 / math.sqrt(out.shape[0])
    assert np.all(np.abs(out.mean(axis=0) - expected) <= 4 * se)
    # constant standard deviation with depth (normal marginal)
    assert np.all(np.abs(out.std(axis=0, ddof=1) - 4.0) <= 4 * 4.0 / math.sqrt(2 * out.shape[0]))


def test_lognormal_trend_keeps_cov_constant():
    y = np.array([-8.0, -4.0, 0.0])
    pts = np.column_stack([np.zeros_like(y), y])
    sp = PropertyField("su", make_marginal("lognormal", mean=20.0, cov=0.2), EXP,
                       trend=(3.0, 0.0))
    out = correlated_properties([sp], points=pts).sample(8, range(4000))["su"]
    mean_y = 20.0 + 3.0 * (0.0 - y)
    n = out.shape[0]
    assert np.all(np.abs(out.mean(axis=0) - mean_y) <= 4 * 0.2 * mean_y / math.sqrt(n))
    # sample COV = s/m: relative SE ≈ rel. SE of s, sqrt((kurt+2)/(4n)), plus
    # rel. SE of m, V/sqrt(n) (delta method); kurtosis of the lognormal from scipy
    zeta = math.sqrt(math.log(1.04))
    kurt = float(stats.lognorm(s=zeta).stats("k"))
    cov = out.std(axis=0, ddof=1) / out.mean(axis=0)
    tol = 4 * 0.2 * (math.sqrt((kurt + 2) / (4 * n)) + 0.2 / math.sqrt(n))
    assert np.all(np.abs(cov - 0.2) <= tol)


def test_zones_are_independent_and_nan_outside():
    # 0.1 θ apart: strongly correlated if they were one field
    grid_pts = np.column_stack([np.arange(6) * 0.1, np.zeros(6)])
    labels = np.array([0, 0, 1, 1, 2, 2])
    c = PropertyField("c", C_LN, EXP)
    specs = {0: [c, PropertyField("phi", PHI_TN, EXP)], 1: [c]}
    cp = correlated_properties(specs, {0: [[1, -0.5], [-0.5, 1]]}, points=grid_pts, zones=labels)
    out = cp.sample(2, range(3000))
    assert np.all(np.isnan(out["c"][:, 4:]))          # zone 2 has no specs
    assert np.all(np.isnan(out["phi"][:, 2:]))        # phi only in zone 0
    assert not np.any(np.isnan(out["c"][:, :4]))
    # adjacent points 0.1 θ apart would have rho = exp(-0.2) = 0.82 in one field
    r_in = np.corrcoef(out["c"][:, 2], out["c"][:, 3])[0, 1]
    r_across = np.corrcoef(out["c"][:, 1], out["c"][:, 2])[0, 1]
    n = out["c"].shape[0]
    assert abs(r_across) <= 4 / math.sqrt(n)
    assert r_in > 0.5


def test_zone_masks_dict_and_overlap_error():
    pts = np.column_stack([np.arange(4) * 1.0, np.zeros(4)])
    c = PropertyField("c", C_LN, EXP)
    m_a = np.array([True, True, False, False])
    m_b = ~m_a
    out = correlated_properties({"clay": [c], "sand": [c]}, points=pts,
                                zones={"clay": m_a, "sand": m_b}).sample(0, range(3))
    assert not np.any(np.isnan(out["c"]))
    with pytest.raises(InputError, match="'clay' and 'sand' overlap"):
        correlated_properties({"clay": [c], "sand": [c]}, points=pts,
                              zones={"clay": m_a, "sand": np.ones(4, bool)})


def test_reproducible_whatever_batch_and_grid_shape():
    from slipfield.fields import RegularGrid
    g = RegularGrid(0.0, 0.0, 6, 4, 0.5, 0.5)
    specs = [PropertyField("c", C_LN, EXP), PropertyField("phi", PHI_BETA, EXP)]
    cp = correlated_properties(specs, [[1, -0.5], [-0.5, 1]], grid=g, method="fft")
    a = cp.sample(9, range(5))
    b = cp.sample(9, [3])
    assert a["c"].shape == (5, 6, 4)
    np.testing.assert_array_equal(a["c"][3], b["c"][0])
    np.testing.assert_array_equal(a["phi"][3], b["phi"][0])


def test_errors_name_the_input():
    c = PropertyField("c", C_LN, EXP)
    phi = PropertyField("phi", PHI_TN, EXP)
    g = PropertyField("gamma", make_marginal("normal", mean=19.0, std=1.0), EXP)
    R = [[1, 0.9, 0.9], [0.9, 1, -0.9], [0.9, -0.9, 1]]  # not positive definite
    with pytest.raises(InputError, match="not positive definite.*pair"):
        correlated_properties([c, phi, g], R, points=FAR)
    other = PropertyField("phi", PHI_TN, get_model("exponential", theta_h=5.0))
    with pytest.raises(InputError, match="different correlation models"):
        correlated_properties([c, other], [[1, -0.5], [-0.5, 1]], points=FAR)
    # uncorrelated properties may have their own models
    correlated_properties([c, other], None, points=FAR)
    with pytest.raises(InputError, match="depth trend is supported"):
        PropertyField("phi", PHI_BETA, EXP, trend=(1.0, 0.0))
    with pytest.raises(InputError, match="mean <= 0"):
        sp = PropertyField("c", C_LN, EXP, trend=(-5.0, 10.0))  # mean 10 - 5*(10 - y)
        correlated_properties([sp], points=FAR).sample(0, range(2))
    with pytest.raises(InputError, match="given twice"):
        correlated_properties([c, c], points=FAR)
    with pytest.raises(InputError, match="theta_h"):
        PropertyField("c", C_LN, "exponential")
    with pytest.raises(InputError, match="exactly one of grid"):
        correlated_properties([c])
    with pytest.raises(InputError, match="no points"):
        correlated_properties({5: [c]}, points=FAR, zones=np.zeros(5, int))
