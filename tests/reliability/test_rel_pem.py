"""Point estimate methods: exactness for low-order polynomials.

Sources: Rosenblueth (1975, PNAS 72:3812-3814), two points per variable at
mu +/- sigma, weights (1 +/- rho)/4 for two correlated variables; Hong (1998,
Reliab. Eng. Syst. Saf. 59:261-267), 2n+1 scheme. Recalled from memory: the
Hong weights for normal inputs (mu +/- sqrt(3) sigma, 1/6, centre 1 - 2n/6)
which is why here they are re-derived from the moment equations
with a generic root finder and compared with the library's.
"""
import math

import numpy as np
import pytest
from scipy import optimize, stats

from slipfield.slope.errors import InputError
from slipfield.slope.reliability import hong, hong_points, random_vector, rosenblueth


def _solve_three_point_rule(skew, kurt):
    """Solve sum w_i xi_i^m = E[xi^m], m = 0..4, with xi_3 = 0 (standardised variable)."""
    target = np.array([1.0, 0.0, 1.0, skew, kurt])

    def eqs(p):
        x1, x2, w1, w2, w0 = p
        return [w1 * x1**m + w2 * x2**m + (w0 if m == 0 else 0.0) - target[m] for m in range(5)]

    sol = optimize.fsolve(eqs, [1.5, -1.5, 0.2, 0.2, 0.6], xtol=1e-13)
    assert np.max(np.abs(eqs(sol))) < 1e-10
    return sol


@pytest.mark.parametrize("skew,kurt", [(0.0, 3.0), (0.0, 1.8), (0.9, 4.3), (-0.5, 3.5)])
def test_hong_points_solve_the_moment_equations(skew, kurt):
    x1, x2, w1, w2, w0 = _solve_three_point_rule(skew, kurt)
    xi, p = hong_points(skew, kurt, n=1)
    assert sorted([x1, x2]) == pytest.approx(sorted(xi[:2]), rel=1e-9)
    assert {round(w1, 10), round(w2, 10)} == {round(p[0], 10), round(p[1], 10)}
    assert p[2] == pytest.approx(w0, rel=1e-9)  # n = 1: the centre weight is w0
    # In an n-variable scheme the centre weight per variable is 1/n - (w1 + w2).
    for n in (2, 5):
        assert hong_points(skew, kurt, n)[1][2] == pytest.approx(1 / n - (w1 + w2))


def test_hong_normal_weights_recalled_in_references():
    xi, p = hong_points(0.0, 3.0, n=4)
    assert xi[:2] == pytest.approx([math.sqrt(3), -math.sqrt(3)])
    assert p[:2] == pytest.approx([1 / 6, 1 / 6])
    assert 4 * p[2] == pytest.approx(1 - 2 * 4 / 6)


def _normals(n, means, stds):
    return random_vector([dict(name=f"x{i}", dist="normal", mean=m, std=s)
                          for i, (m, s) in enumerate(zip(means, stds))])


def test_hong_exact_mean_of_additive_quintic_normals():
    # E[x^k] of N(mu, s^2) from scipy.stats.norm.moment; g additive, degree 5 each.
    mu, sd = [1.0, -0.5, 2.0], [0.3, 0.2, 0.5]
    v = _normals(3, mu, sd)
    c = np.array([0.3, -0.2, 0.1, 0.05, -0.01])

    def poly(x):
        return sum(c[k] * x ** (k + 1) for k in range(5))

    def g(X):
        return 2.0 + sum(poly(X[:, i]) for i in range(3))

    exact = 2.0 + sum(sum(c[k] * stats.norm(m, s).moment(k + 1) for k in range(5))
                      for m, s in zip(mu, sd))
    r = hong(g, v)
    assert r.n_evaluations == 7
    assert r.mean_fs == pytest.approx(exact, rel=1e-12)


def test_hong_exact_mean_and_variance_single_variable_quadratic():
    # One variable, g = a + b x + c x^2: mean and variance need moments up to 4,
    # which the three-point rule matches for any marginal (skewed ones too).
    for spec in (dict(dist="normal", mean=1.0, std=0.3),
                 dict(dist="lognormal", mean=1.0, cov=0.3),
                 dict(dist="uniform", lower=0.5, upper=2.0)):
        v = random_vector([dict(name="x", **spec)])
        d = v.variables[0].marginal._dist

        def g(X):
            return 0.5 + 0.8 * X[:, 0] - 0.3 * X[:, 0] ** 2

        m = [d.moment(k) for k in range(1, 5)]
        mean = 0.5 + 0.8 * m[0] - 0.3 * m[1]
        eg2 = (0.25 + 0.64 * m[1] + 0.09 * m[3] + 2 * 0.5 * 0.8 * m[0]
               - 2 * 0.5 * 0.3 * m[1] - 2 * 0.8 * 0.3 * m[2])
        r = hong(g, v)
        assert r.mean_fs == pytest.approx(mean, rel=1e-10), spec
        assert r.std_fs == pytest.approx(math.sqrt(eg2 - mean**2), rel=1e-8), spec


def test_rosenblueth_exact_for_product_of_symmetric_variables():
    # g = x1 x2, independent symmetric: E = m1 m2,
    # Var = m1^2 s2^2 + m2^2 s1^2 + s1^2 s2^2 (closed form); two-point rule exact.
    for d in ("normal", "uniform"):
        v = random_vector([dict(name="a", dist=d, mean=2.0, std=0.4),
                           dict(name="b", dist=d, mean=1.5, std=0.3)])
        r = rosenblueth(lambda X: X[:, 0] * X[:, 1], v)
        assert r.n_evaluations == 4
        assert r.mean_fs == pytest.approx(3.0, rel=1e-12)
        assert r.std_fs**2 == pytest.approx(4 * 0.09 + 2.25 * 0.16 + 0.16 * 0.09, rel=1e-12)


def test_rosenblueth_correlated_weights():
    v = random_vector([dict(name="a", dist="normal", mean=2.0, std=0.4),
                       dict(name="b", dist="normal", mean=1.5, std=0.3)],
                      correlation={("a", "b"): 0.6})
    r = rosenblueth(lambda X: X[:, 0] + X[:, 1], v)
    w = sorted(r.weights)
    assert w == pytest.approx(sorted([(1 + 0.6) / 4] * 2 + [(1 - 0.6) / 4] * 2))
    assert r.std_fs**2 == pytest.approx(0.16 + 0.09 + 2 * 0.6 * 0.12, rel=1e-12)


def test_too_many_rosenblueth_runs_suggests_hong():
    v = _normals(12, [1.0] * 12, [0.1] * 12)
    with pytest.raises(InputError, match=r"2n\+1"):
        rosenblueth(lambda X: X.sum(axis=1), v)
    assert hong(lambda X: X.sum(axis=1), v).n_evaluations == 25
