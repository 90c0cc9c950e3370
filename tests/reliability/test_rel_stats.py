"""pf statistics against scipy and closed forms."""
import math

import numpy as np
import pytest
from scipy import stats

from slipfield.slope.errors import InputError
from slipfield.slope.reliability import (beta_from_pf, beta_lognormal, beta_normal, binomial_interval,
                               convergence_history, estimate_pf, fs_distribution)


@pytest.mark.parametrize("k,n", [(0, 50), (3, 100), (50, 100), (17, 10_000), (100, 100)])
@pytest.mark.parametrize("level", [0.9, 0.95, 0.99])
def test_binomial_intervals_match_scipy(k, n, level):
    # Reference: scipy.stats.binomtest(...).proportion_ci (Wilson score without
    # continuity correction; Clopper-Pearson 'exact').
    ref = stats.binomtest(k, n).proportion_ci(confidence_level=level, method="wilson")
    lo, hi = binomial_interval(k, n, level, "wilson")
    assert (lo, hi) == pytest.approx((ref.low, ref.high), rel=1e-10, abs=1e-14)
    ref = stats.binomtest(k, n).proportion_ci(confidence_level=level, method="exact")
    lo, hi = binomial_interval(k, n, level, "clopper-pearson")
    assert (lo, hi) == pytest.approx((ref.low, ref.high), rel=1e-9, abs=1e-14)


def test_beta_definitions():
    # Closed form of a lognormal FS: mu 1.5, V 0.2 -> beta 1.9483.
    assert beta_lognormal(1.5, 0.3) == pytest.approx(1.9483, abs=5e-5)
    assert beta_normal(1.5, 0.3) == pytest.approx(0.5 / 0.3)
    # -Phi^-1: USACE (1997) table, value recalled: beta = 3 <-> pf about 0.00135.
    assert beta_from_pf(0.0013499) == pytest.approx(3.0, abs=1e-4)


def test_estimate_and_history_consistent():
    rng = np.random.default_rng(0)
    fs = rng.normal(1.4, 0.25, 5000)
    e = estimate_pf(fs)
    assert e.n_fail == int((fs < 1).sum())
    assert e.pf == e.n_fail / 5000
    assert e.mean_fs == pytest.approx(fs.mean()) and e.std_fs == pytest.approx(fs.std(ddof=1))
    assert e.cov_pf == pytest.approx(math.sqrt((1 - e.pf) / (e.pf * 5000)))
    h = convergence_history(fs)
    assert h["n"][-1] == 5000 and h["pf"][-1] == e.pf
    for j in (0, len(h["n"]) // 2):
        m = h["n"][j]
        assert h["pf"][j] == np.mean(fs[:m] < 1)
        assert h["std_fs"][j] == pytest.approx(fs[:m].std(ddof=1), rel=1e-9)
    d = fs_distribution(fs, bins=40)
    assert np.sum(d["density"] * np.diff(d["edges"])) == pytest.approx(1.0)
    assert d["ecdf"][-1] == 1.0 and np.all(np.diff(d["fs_sorted"]) >= 0)


def test_bad_interval_input():
    with pytest.raises(InputError, match="interval method"):
        binomial_interval(1, 10, method="agresti")
    with pytest.raises(InputError, match="0 <= k <= n"):
        binomial_interval(11, 10)


@pytest.mark.parametrize("n", [3, 7, 35, 1000])
def test_wilson_bounds_are_exact_at_no_and_all_failures(n):
    # Wilson's lower bound is exactly 0 at k = 0 and its upper bound exactly 1 at k = n (the centre
    # equals the half-width); scipy.stats.binomtest's proportion_ci gives those exact values, where
    # the plain formula left 2e-19 in a report ("95 % interval 2.17e-19 - 0.00383").
    assert binomial_interval(0, n, 0.95, "wilson")[0] == stats.binomtest(0, n).proportion_ci(method="wilson").low == 0.0
    assert binomial_interval(n, n, 0.95, "wilson")[1] == stats.binomtest(n, n).proportion_ci(method="wilson").high == 1.0
