"""Subset simulation over random fields against closed forms (issue 14).

Problem: a long block on a plane parallel to a 2H:1V face in φ = 0 soil, su
a normal random field with an anisotropic Markov (exponential) correlation.
FS = s̄u/(γ z sinβ cosβ) (infinite slope, Skempton & DeLory 1957), s̄u the
average of su along the plane: normal with variance γ(T)σ² (Vanmarcke 1983,
*Random Fields*, ch. 5), θ along the plane at angle β being
1/√(cos²β/θh² + sin²β/θv²) for the elliptical model (Vanmarcke 1983), so
pf = Φ((1 − μFS)/(√γ(T) σFS)). The mean su is set so that this is 1e-5 or
1e-6.

The simulated block departs from the idealisation by its two short ends and
by bilinear interpolation of 1 m cells; its FS is still a linear functional
of the Gaussian field, FS = Σ wᵢ (W z)ᵢ, whose exact variance wᵀ W C Wᵀ w
(C the cells' covariance from the correlation model, W the cells-to-bases
map, w the FS per unit su on each base) gives the exact pf of the simulated
model. The test checks that it is within 2 % in γ of the closed form (so the
closed form describes this block) and measures the estimator against it.

Statistical tolerances (derived, not tuned): one estimate within three of
its own standard deviations (Au & Beck's CoV with fully correlated levels,
cov_upper, as the standard deviation of ln pf); over R = 20 seeds the mean
within 3 standard errors (sample SD/√R) and the spread between the
χ²(R − 1) bounds at two-sided level 0.003 of the reported CoV's bracket
(normal approximation of the estimates).
"""
import math

import numpy as np
import pytest
from scipy.stats import chi2, norm

from slipfield.fields import get_model, variance_function
from slipfield.fields.marginals import make_marginal
from slipfield.slope.errors import InputError
from slipfield.slope.methods import factor_of_safety
from slipfield.slope.section import Section, Zone
from slipfield.slope.simulate import RandomProblem, RandomProperty, simulate
from slipfield.slope.simulate.engine import batch_fs, stencil
from slipfield.slope.simulate.rare import GivenNoise, NoiseLayout, SubsetSettings, subset_simulate
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Polyline

from support.geometry import interrupted_after_saves

TAN_B = 0.5     # 2H:1V face
Z = 1.5         # m, vertical depth of the plane
LF = 30.0       # m, horizontal length of the face
GAMMA = 20.0    # kN/m³
COV = 0.15      # normal su: a point value below 0 is 6.7 σ away
TH, TV = 40.0, 4.0
CELL = 1.0
R = 20


def _section(su=50.0):
    H = LF * TAN_B
    mat = Material("clay", unit_weight=GAMMA, su_model="constant", su=su)
    ground = np.array([[-4.0, 0.0], [0.0, 0.0], [LF, H], [LF + 4.0, H]])
    poly = np.vstack([ground, [[LF + 4.0, -3.0], [-4.0, -3.0], [-4.0, 0.0]]])
    return Section(ground, [Zone("clay", "clay", poly)], {"clay": mat}, base_y=-3.0)


SURFACE = Polyline(np.array([[-0.1, 0.01], [0.1, 0.1 * TAN_B - Z], [LF - 0.1, (LF - 0.1) * TAN_B - Z],
                             [LF + 0.1, LF * TAN_B + 0.01]]))


def _problem(mean, theta=(TH, TV), marginal="normal"):
    prop = RandomProperty("clay", "su", make_marginal(marginal, mean=mean, cov=COV), *theta)
    return RandomProblem(_section(), "undrained", "ordinary", [prop], [SURFACE], 0, n_slices=20, cell=CELL)


@pytest.fixture(scope="module")
def block():
    p = _problem(50.0)
    st = stencil(p)
    n = st.bank.n_slices
    # FS per unit su on each base: the Ordinary method with φ = 0 is linear in su
    w = np.array([factor_of_safety(st.terms, np.eye(n)[i][None], 0.0, method="ordinary").fs[0, 0]
                  for i in range(n)])
    fs1 = float(w.sum())
    bases, cells, W = st.zones[0]
    a = W.T @ w[bases % n]
    C = p.properties[0].correlation_model().covariance_matrix(p.grid.points()[cells])
    g_model = float(a @ C @ a) / fs1 ** 2
    T = float(st.bank.base_length.sum())
    beta = math.atan(TAN_B)
    th_line = 1.0 / math.sqrt(math.cos(beta) ** 2 / TH ** 2 + math.sin(beta) ** 2 / TV ** 2)
    g = float(variance_function(get_model("exponential", theta_h=th_line, theta_v=th_line), T))
    return {"fs1": fs1, "g": g, "g_model": g_model}


def _mean_for(block, pf):
    # μFS (1 − β √γ COV) = 1 with β = −Φ⁻¹(pf): the closed form solved for the mean su
    b = -norm.ppf(pf)
    return 1.0 / (block["fs1"] * (1.0 - b * COV * math.sqrt(block["g"])))


def _exact(block, mean, g):
    mu = block["fs1"] * mean
    return float(norm.cdf((1.0 - mu) / (mu * COV * math.sqrt(g))))


def test_block_follows_the_variance_function_along_the_plane(block):
    # the block's steep ends (sliced exactly since slice sides follow the polyline's vertices) and
    # the 1 m cells change γ by under 3 % (measured 2.5 %; 1.0 % when equal slices smeared the ends)
    assert block["g_model"] == pytest.approx(block["g"], rel=0.03)


@pytest.mark.parametrize("pf", [1e-5, 1e-6])
def test_one_estimate_within_three_of_its_sds(block, pf):
    mean = _mean_for(block, pf)
    exact = _exact(block, mean, block["g_model"])
    assert _exact(block, mean, block["g"]) == pytest.approx(pf, rel=1e-9)
    r = subset_simulate(_problem(mean), SubsetSettings(0.1, 300), seed=5, batch=64)
    assert r.status == "failure-level-reached"
    k = round(-math.log10(pf))          # pf = p0^k: k or k + 1 levels
    assert len(r.levels) in (k, k + 1)
    assert abs(math.log(r.pf / exact)) < 3 * r.cov_upper, (r.pf, exact, r.cov_upper)
    lo, hi = r.interval_95
    assert lo < r.pf < hi
    assert r.beta == pytest.approx(-norm.ppf(r.pf))
    assert r.counts["none"] == 0
    # the failure samples: critical surface is the only one, FS below 1
    assert r.failures["fs"].size >= 1 and np.all(r.failures["fs"] < 1) and np.all(r.failures["crit"] == 0)
    # the most typical failure rebuilt from its chain has the FS the chain recorded for it
    k = r.typical_failure()
    fs, _, _ = batch_fs(r.problem, GivenNoise(NoiseLayout(r.problem), r.failure_noise(k)[None], [0]), [0])
    assert fs[0, 0] == pytest.approx(r.failures["fs"][k], rel=1e-12)
    grid, fields = r.failure_fields()
    su = fields["clay.su"]
    assert su.shape == (grid.nx, grid.ny) and np.nanmean(su) < mean   # weaker than average where it failed


@pytest.mark.slow
def test_twenty_seeds_mean_and_spread(block):
    mean = _mean_for(block, 1e-5)
    exact = _exact(block, mean, block["g_model"])
    runs = [subset_simulate(_problem(mean), SubsetSettings(0.1, 200), seed=100 + k, batch=200) for k in range(R)]
    pf = np.array([r.pf for r in runs])
    m, sd = pf.mean(), pf.std(ddof=1)
    assert abs(m - exact) < 3 * sd / math.sqrt(R), (m, exact, sd)
    # sample CoV against the reported bracket [cov, cov_upper]
    cov_s = sd / m
    lo, hi = np.sqrt(chi2.ppf([0.0015, 0.9985], R - 1) / (R - 1))
    assert lo * np.mean([r.cov for r in runs]) < cov_s < hi * np.mean([r.cov_upper for r in runs]), \
        (cov_s, np.mean([r.cov for r in runs]), np.mean([r.cov_upper for r in runs]))


class _InlineClient:
    """The part of a dask.distributed Client the simulator uses, run in this process."""

    status = "running"

    class _Done:
        def __init__(self, v):
            self.v = v

        def result(self, timeout=None):
            return self.v

    def submit(self, fn, *args, pure=False):
        return self._Done(fn(*args))

    def map(self, fn, *lists, pure=False):
        return [self._Done(fn(*a)) for a in zip(*lists)]

    def cancel(self, futs):
        pass

    def scatter(self, obj, broadcast=False):
        return obj


def test_level_zero_is_monte_carlo_and_chains_are_reproducible(block):
    mean = _mean_for(block, 1e-3)
    p = _problem(mean)
    st = SubsetSettings(0.1, 100, max_levels=2)
    a = subset_simulate(p, st, seed=9, batch=100)
    # level 0 is the first N Monte Carlo realisations: same threshold
    mc = simulate(p, 100, seed=9)
    f = np.sort(mc.fs)
    assert a.levels[0]["threshold"] == 0.5 * (f[9] + f[10])
    # other batches and another grouping of the chains (one task per chain, as on a dask cluster)
    b = subset_simulate(_problem(mean), st, seed=9, batch=7, scheduler=_InlineClient())
    assert a.levels == b.levels and a.pf == b.pf
    np.testing.assert_array_equal(a.final_fs, b.final_fs)


def test_interrupted_run_resumes_between_levels(block, tmp_path, monkeypatch):
    mean = _mean_for(block, 1e-3)
    st = SubsetSettings(0.1, 100)
    whole = subset_simulate(_problem(mean), st, seed=4, batch=50)
    with interrupted_after_saves(monkeypatch, 2):
        subset_simulate(_problem(mean), st, seed=4, batch=50, store=tmp_path / "s")
    again = subset_simulate(_problem(mean), st, seed=4, batch=50, store=tmp_path / "s", resume=True)
    assert again.levels == whole.levels and again.pf == whole.pf and again.n_evaluations == whole.n_evaluations
    with pytest.raises(InputError, match="seed differs"):
        subset_simulate(_problem(mean), st, seed=5, store=tmp_path / "s", resume=True)
    with pytest.raises(InputError, match="already holds a run"):
        subset_simulate(_problem(mean), st, seed=4, store=tmp_path / "s")


def test_theta_infinite_is_the_single_variable_estimate(block):
    # θ → ∞: one su per sample, FS = fs1 su; lognormal su, pf = Φ((ln(1/fs1) − μln)/σln) (closed form)
    from slipfield.slope.reliability import random_vector, subset_simulation

    m = make_marginal("lognormal", mean=1.0, cov=COV)
    mu, sg = m.params["mu_ln"], m.params["sigma_ln"]
    mean = 1.0 / (block["fs1"] * math.exp(mu + norm.ppf(1e-5) * sg))   # pf = 1e-5 exactly
    r = subset_simulate(_problem(mean, (math.inf, math.inf), "lognormal"), SubsetSettings(0.1, 500), seed=3,
                        batch=500)
    assert abs(math.log(r.pf / 1e-5)) < 3 * r.cov_upper, (r.pf, r.cov_upper)
    v = random_vector([dict(name="su", dist="lognormal", mean=mean, cov=COV)])
    s = subset_simulation(lambda X: block["fs1"] * X[:, 0], v, seed=3, n_per_level=500)
    assert abs(math.log(s.pf / 1e-5)) < 3 * s.cov_pf_upper
    # the two estimators of one pf agree within their combined spread
    assert abs(math.log(r.pf / s.pf)) < 3 * math.hypot(r.cov_upper, s.cov_pf_upper)


def test_constant_fs_stops_with_what_was_reached():
    # su random in a zone the surface never crosses: FS is the same for every sample
    mat = {"clay": Material("clay", unit_weight=GAMMA, su_model="constant", su=50.0),
           "crust": Material("crust", unit_weight=GAMMA, su_model="constant", su=50.0)}
    sec = _section()
    H = LF * TAN_B
    zones = [Zone("clay", "clay", np.array([[-1.0, 0.0], [0.0, 0.0], [LF, H], [LF + 4.0, H], [LF + 4.0, -3.0],
                                            [-1.0, -3.0], [-1.0, 0.0]])),
             Zone("crust", "crust", np.array([[-4.0, -3.0], [-1.0, -3.0], [-1.0, 0.0], [-4.0, 0.0], [-4.0, -3.0]]))]
    sec = Section(sec.ground, zones, mat, base_y=-3.0)
    prop = RandomProperty("crust", "su", make_marginal("normal", mean=50.0, cov=COV), math.inf, math.inf)
    p = RandomProblem(sec, "undrained", "ordinary", [prop], [SURFACE], 0, n_slices=20, cell=CELL)
    r = subset_simulate(p, SubsetSettings(0.1, 100), seed=1)
    assert r.status == "no-progress" and r.pf is None
    assert "all equal" in r.message and "level 0" in r.message


@pytest.mark.parametrize("p0,n,key", [(0.6, 1000, "level_probability"), (0.0, 1000, "level_probability"),
                                      (0.1, 50, "samples_per_level"), (0.1, 1005, "samples_per_level"),
                                      (0.3, 1000, "level_probability")])
def test_bad_settings_name_the_key(p0, n, key):
    with pytest.raises(InputError, match=key):
        SubsetSettings(p0, n)


def test_single_lognormal_variable_twenty_seeds():
    # FS = R/S with R lognormal (mean set so that pf = 1e-5 exactly, closed form) and S = 1:
    # the single-variable estimator (slope.reliability.subset_simulation) to the same standard
    from slipfield.slope.reliability import random_vector, subset_simulation

    m = make_marginal("lognormal", mean=1.0, cov=COV)
    mu, sg = m.params["mu_ln"], m.params["sigma_ln"]
    mean = 1.0 / math.exp(mu + norm.ppf(1e-5) * sg)
    v = random_vector([dict(name="R", dist="lognormal", mean=mean, cov=COV)])
    runs = [subset_simulation(lambda X: X[:, 0], v, seed=500 + k, n_per_level=500) for k in range(R)]
    pf = np.array([r.pf for r in runs])
    m_, sd = pf.mean(), pf.std(ddof=1)
    assert abs(m_ - 1e-5) < 3 * sd / math.sqrt(R), (m_, sd)
    lo, hi = np.sqrt(chi2.ppf([0.0015, 0.9985], R - 1) / (R - 1))
    assert lo * np.mean([r.cov_pf for r in runs]) < sd / m_ < hi * np.mean([r.cov_pf_upper for r in runs])


def test_site_data_with_measurement_errors_are_part_of_the_input(block):
    # conditioned fields with noisy data: the simulated errors are random input as well, so level 0
    # is still Monte Carlo's first N realisations and a rebuilt chain state has its recorded FS
    import dataclasses

    mean = _mean_for(block, 1e-3)
    data = {"clay.su": (np.array([[10.0, 2.0], [20.0, 7.0]]), np.array([-1.0, -0.5]), np.array([0.1, 0.2]))}
    p = dataclasses.replace(_problem(mean), site_data=data)
    r = subset_simulate(p, SubsetSettings(0.1, 100, max_levels=2), seed=6, batch=100)
    f = np.sort(simulate(dataclasses.replace(_problem(mean), site_data=data), 100, seed=6).fs)
    assert r.levels[0]["threshold"] == 0.5 * (f[9] + f[10])
    assert any(k[0] == "error" for k in NoiseLayout(p).blocks)
    k = int(np.argmin(r.final_fs))
    u = r._replay.state(r._layout, r.seed, len(r.levels) - 1, k)
    fs, _, _ = batch_fs(p, GivenNoise(NoiseLayout(p), u[None], [0]), [0])
    assert fs[0, 0] == pytest.approx(r.final_fs[k], rel=1e-12)
