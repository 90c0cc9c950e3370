"""Subset simulation against closed forms with pf about 1e-4.

Tolerance (derived, not tuned): with N samples per level and p0 = 0.1, Au &
Beck (2001, Probab. Eng. Mech. 16:263-277, eqs. 27-31) give the CoV of each
level's estimate, delta_i^2 = (1 - p_i)/(p_i N)(1 + gamma_i); for the product
of the levels the CoV is at most sum(delta_i) (fully correlated levels). A
single run is asked to lie within a factor exp(3 sum(delta_i)) of the exact
pf (three standard deviations of ln pf, small-CoV approximation).
"""
import math

import numpy as np
import pytest
from scipy import special, stats

from slipfield.slope.reliability import random_vector, subset_simulation

BETA = -special.ndtri(1e-4)  # 3.719: pf = 1e-4 exactly


def test_linear_ten_variables_pf_1e4():
    # FS = 1 + 0.1 (beta - sum(u_i)/sqrt(10)), u_i standard normal: P(FS < 1) = Phi(-beta).
    v = random_vector([dict(name=f"u{i}", dist="normal", mean=0.0, std=1.0) for i in range(10)])

    def g(X):
        return 1.0 + 0.1 * (BETA - X.sum(axis=1) / math.sqrt(10))

    r = subset_simulation(g, v, seed=2024, n_per_level=2000)
    assert len(r.thresholds) == 4  # 1e-4 = p0^4 with p0 = 0.1
    assert abs(math.log(r.pf / 1e-4)) < 3 * r.cov_pf_upper, (r.pf, r.cov_pf_upper)
    # Far fewer evaluations than crude MC at the same CoV: MC needs
    # (1 - pf)/(pf delta^2) samples, delta the Au-Beck CoV with uncorrelated
    # levels (checked against repeated runs below). Asked: at least 10x fewer.
    assert r.n_evaluations == 2000 + 3 * 1800
    assert r.mc_equivalent_evaluations > 10 * r.n_evaluations
    assert all(0.2 < a < 1 for a in r.acceptance)


def test_lognormal_r_over_s_pf_1e4():
    # R/S with R, S lognormal: beta = (lR - lS)/sqrt(zR^2 + zS^2) (a
    # closed form). Choose mean R so that beta = 3.719.
    zr, zs = math.sqrt(math.log1p(0.15**2)), math.sqrt(math.log1p(0.2**2))
    ls_ = math.log(100.0) - zs**2 / 2
    lr = ls_ + BETA * math.hypot(zr, zs)
    mean_r = math.exp(lr + zr**2 / 2)
    v = random_vector([dict(name="R", dist="lognormal", mean=mean_r, cov=0.15),
                       dict(name="S", dist="lognormal", mean=100.0, cov=0.2)])
    r = subset_simulation(lambda X: X[:, 0] / X[:, 1], v, seed=7, n_per_level=2000)
    assert abs(math.log(r.pf / 1e-4)) < 3 * r.cov_pf_upper, (r.pf, r.cov_pf_upper)


def test_repeated_runs_unbiased_and_cov_estimate_honest():
    """40 independent runs (N = 1000): the mean of pf lies within 4 standard
    errors (empirical spread / sqrt(40)) of the exact 1e-4, and the empirical
    CoV lies inside the bracket the runs report [cov_pf, cov_pf_upper],
    widened by the chi-square sampling range of a 40-run std (39 dof, 99.9 %;
    approximate, pf is not normal)."""
    v = random_vector([dict(name=f"u{i}", dist="normal", mean=0.0, std=1.0) for i in range(4)])

    def g(X):
        return 1.0 + 0.1 * (BETA - X.sum(axis=1) / 2.0)

    runs = [subset_simulation(g, v, seed=100 + k, n_per_level=1000) for k in range(40)]
    pf = np.array([r.pf for r in runs])
    se = pf.std(ddof=1) / math.sqrt(40)
    assert abs(pf.mean() - 1e-4) < 4 * se
    emp = pf.std(ddof=1) / pf.mean()
    f_lo, f_hi = (math.sqrt(stats.chi2.ppf(q, 39) / 39) for q in (0.0005, 0.9995))
    lo = np.mean([r.cov_pf for r in runs]) * f_lo
    hi = np.mean([r.cov_pf_upper for r in runs]) * f_hi
    assert lo < emp < hi, (lo, emp, hi)
