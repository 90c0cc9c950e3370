"""Same seed -> identical numbers for any n_jobs and batch size (issue 4, item 5)."""
import numpy as np
import pytest

from slipfield.slope.reliability import (InfiniteSlope, form, importance_sampling, latin_hypercube,
                               monte_carlo, random_vector, sample_variables, subset_simulation)


def _case():
    v = random_vector([
        dict(name="c", dist="lognormal", mean=10.0, cov=0.35),
        dict(name="tan_phi", dist="beta", mean=0.6, cov=0.12, lower=0.3, upper=0.9),
        dict(name="gamma", dist="deterministic", mean=19.0),
    ], correlation={("c", "tan_phi"): -0.4})
    g = InfiniteSlope(30.0, 3.0, columns={"c": 0, "tan_phi": 1, "unit_weight": 2})
    return g, v


@pytest.mark.parametrize("run", [monte_carlo, latin_hypercube])
def test_sampling_independent_of_batch_and_jobs(run):
    g, v = _case()
    n = 5_000
    ref = run(g, v, n, seed=42, n_jobs=1, batch_size=n)
    for n_jobs, bs in ((1, 777), (2, 1000), (2, 2048)):
        r = run(g, v, n, seed=42, n_jobs=n_jobs, batch_size=bs)
        assert np.array_equal(r.X, ref.X)
        assert np.array_equal(r.fs, ref.fs)
        assert r.pf == ref.pf
    # A sub-range of the design is the same rows of the whole design.
    part = sample_variables(v, n, seed=42, design=run.__name__.replace("_", "-"),
                            start=1500, stop=2600)
    assert np.array_equal(part, ref.X[1500:2600])
    other = run(g, v, n, seed=43)
    assert not np.array_equal(other.X, ref.X)


def test_lhs_design_is_latin():
    # Each variable's n strata are hit exactly once (McKay et al. 1979): for the
    # first variable, whose stratification survives the Cholesky mixing.
    g, v = _case()
    n = 3_000
    r = latin_hypercube(g, v, n, seed=5)
    u = v.to_standard(r.X)
    from scipy import special

    strata = np.floor(special.ndtr(u[:, 0]) * n).astype(int)
    assert np.array_equal(np.sort(strata), np.arange(n))


def test_importance_and_subset_independent_of_jobs():
    g, v = _case()
    f = form(g, v)
    a = importance_sampling(g, v, 3_000, seed=1, form_result=f, n_jobs=1, batch_size=3_000)
    b = importance_sampling(g, v, 3_000, seed=1, form_result=f, n_jobs=2, batch_size=500)
    assert a.pf == b.pf and a.cov_pf == b.cov_pf
    s1 = subset_simulation(g, v, seed=3, n_per_level=500, n_jobs=1)
    s2 = subset_simulation(g, v, seed=3, n_per_level=500, n_jobs=2, batch_size=128)
    assert s1.pf == s2.pf and s1.thresholds == s2.thresholds
