"""Sensitivity outputs against closed forms for a linear limit state."""
import math

import numpy as np
import pytest
from scipy import special

from slipfield.slope.reliability import (first_order_indices, fosm, monte_carlo, random_vector,
                               rank_correlations, tornado)

A = np.array([0.05, 1.2, -0.02])


def _case():
    v = random_vector([dict(name="c", dist="normal", mean=10.0, std=3.0),
                       dict(name="tan_phi", dist="normal", mean=0.6, std=0.06),
                       dict(name="q", dist="normal", mean=5.0, std=4.0)])
    return (lambda X: 0.2 + X @ A), v


def test_tornado_linear():
    g, v = _case()
    t = tornado(g, v, k=2.0)
    # Linear g: swing = 2 k |a_i| sigma_i exactly; sorted by swing.
    swings = {n: 2 * 2.0 * abs(a) * s for n, a, s in zip(v.names, A, v.stds)}
    assert t.names == sorted(swings, key=lambda n: -swings[n])
    assert t.swing == pytest.approx([swings[n] for n in t.names], rel=1e-12)
    assert t.fs_mean == pytest.approx(0.2 + A @ v.means)
    t3 = tornado(g, v, k=1.0)
    assert t3.swing == pytest.approx(t.swing / 2)


def test_tornado_clips_to_support():
    v = random_vector([dict(name="c", dist="truncated-normal", mean=2.0, cov=0.6, lower=0.0)])
    t = tornado(lambda X: X[:, 0], v, k=2.0)
    assert t.clipped == ["c"] and t.low_value[0] == 0.0


def test_rank_correlations_and_first_order_indices_linear_normal():
    g, v = _case()
    n = 40_000
    r = monte_carlo(g, v, n, seed=8)
    sg = math.sqrt(np.sum((A * v.stds) ** 2))
    pearson = A * v.stds / sg
    # Bivariate normal: Spearman = (6/pi) arcsin(r/2) (Pearson 1907). Tolerance
    # 4 SE on Fisher's z scale with var(z) = (1 + r_s^2/2)/(n - 3) (Bonett &
    # Wright 2000, Psychometrika 65:23-28; recalled); Fieller, Hartley & Pearson's (1957)
    # 1.06/(n - 3) is for moderate correlations and is too small at r_s = 0.8.
    rs = rank_correlations(r.X, r.fs, r.names)
    for name, p in zip(v.names, pearson):
        exact = 6 / math.pi * math.asin(p / 2)
        se = math.sqrt((1 + exact**2 / 2) / (n - 3))
        assert abs(math.atanh(rs[name]) - math.atanh(exact)) < 4 * se
    # FOSM shares for linear g: (a_i s_i)^2 / s_g^2 exactly.
    sh = fosm(g, v).variance_share
    assert [sh[nm] for nm in v.names] == pytest.approx(pearson**2, rel=1e-10)


def test_first_order_indices_binned_estimator_unbiased():
    """S_i of a linear g with normal inputs, binned into B equiprobable bins:
    expected value a_i^2 s_i^2 Var(E[z | bin]) / s_g^2, with
    E[z | bin j] = B (phi(q_j) - phi(q_j+1)) (normal partial expectation).
    Checked over 20 independent sample sets: mean within 4 standard errors
    of the 20 estimates."""
    g, v = _case()
    sg2 = np.sum((A * v.stds) ** 2)
    B, n = 50, 20_000
    q = special.ndtri(np.linspace(0, 1, B + 1))
    phi = np.exp(-0.5 * np.nan_to_num(q, posinf=np.inf, neginf=np.inf) ** 2) / math.sqrt(2 * math.pi)
    cond = B * (phi[:-1] - phi[1:])
    var_cond = np.mean(cond**2)
    expected = (A * v.stds) ** 2 * var_cond / sg2
    est = []
    for k in range(20):
        r = monte_carlo(g, v, n, seed=300 + k)
        s = first_order_indices(r.X, r.fs, r.names, n_bins=B)
        est.append([s[nm] for nm in v.names])
    est = np.array(est)
    se = est.std(axis=0, ddof=1) / math.sqrt(20)
    assert np.all(np.abs(est.mean(axis=0) - expected) < 4 * se + 1e-12), (est.mean(0), expected)
