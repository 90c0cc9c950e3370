"""Generators: sample statistics against the model, reproducibility, anisotropy
and rotation metamorphic tests, embedding and set-up reports.

Statistical tolerances come from the sample size n of independent
realisations (each realisation is drawn from its own SeedSequence child):
- mean at a point: N(0, 1/n);
- variance: (n−1)s² ~ χ²(n−1) for unit variance;
- correlation of two points: Fisher's z = atanh(r) ~ N(atanh ρ, 1/(n−3))
  (Fisher 1921), for bivariate normal pairs.
When many entries are tested at once the two-sided level is Bonferroni-
corrected so that the family-wise false-alarm probability is 1e-4.
"""
import math

import gstools as gs
import numpy as np
import pytest
from scipy import stats

from slipfield.fields import InputError, RegularGrid, get_model, make_generator
from slipfield.fields.seeding import field_noise_rng
from slipfield.fields.generators import gstools_seed

FAMILY_P = 1e-4


def z_crit(n_tests):
    """Two-sided normal critical value with Bonferroni correction."""
    return stats.norm.isf(FAMILY_P / (2 * n_tests))


def check_moments(z, target_cov, n_tests_hint=None):
    """Mean, variance and correlation of all points against target covariance."""
    n, p = z.shape
    iu = np.triu_indices(p, 1)
    n_tests = p + p + iu[0].size if n_tests_hint is None else n_tests_hint
    zc = z_crit(n_tests)
    # means
    assert np.max(np.abs(z.mean(axis=0))) < zc / math.sqrt(n)
    # variances, χ² band (target variance on the diagonal)
    s2 = z.var(axis=0, ddof=1) / np.diag(target_cov)
    pa = FAMILY_P / (2 * n_tests)
    lo, hi = stats.chi2.ppf([pa, 1 - pa], n - 1) / (n - 1)
    assert s2.min() > lo and s2.max() < hi, (s2.min(), s2.max(), lo, hi)
    # correlations, Fisher z
    r = np.corrcoef(z, rowvar=False)[iu]
    d = np.sqrt(np.diag(target_cov))
    rho = (target_cov / np.outer(d, d))[iu]
    dev = np.abs(np.arctanh(np.clip(r, -0.999999, 0.999999)) - np.arctanh(rho)) * math.sqrt(n - 3)
    assert dev.max() < zc, (dev.max(), zc)


MODEL = get_model("exponential", theta_h=4.0, theta_v=1.0, angle=-20.0)
GRID = RegularGrid(0.0, 0.0, 14, 10, 0.5, 0.25)


@pytest.mark.parametrize("method,opts,n", [
    ("cholesky", {}, 20000),
    ("fft", {}, 20000),
    ("kl", {"energy": 0.9999}, 20000),
])
def test_dense_and_fft_match_model_everywhere(method, opts, n):
    # every point pair of the grid (horizontal, vertical and oblique lags,
    # rotated model) against model.correlation
    gen = make_generator(method, MODEL, grid=GRID, **opts)
    z = gen.sample(2024, range(n))
    assert z.shape == (n, GRID.n_points)
    check_moments(z, MODEL.covariance_matrix(GRID.points()))


@pytest.mark.parametrize("name,kw", [("gaussian", {}), ("second-order-markov", {}),
                                     ("spherical", {}), ("matern", {"nu": 0.8})])
def test_fft_other_models(name, kw):
    m = get_model(name, theta_h=3.0, theta_v=0.8, angle=25.0, **kw)
    grid = RegularGrid(0.0, 0.0, 10, 8, 0.5, 0.25)
    gen = make_generator("fft", m, grid=grid)
    assert gen.info["clipped_fraction"] == 0.0
    check_moments(gen.sample(7, range(8000)), m.covariance_matrix(grid.points()))


@pytest.mark.slow
def test_spectral_matches_model_at_chosen_lags():
    # GSTools randomisation method at a few points: lag 0, horizontal, vertical,
    # along and across the rotated major axis. Conditional on its random modes
    # the field is Gaussian with unit variance, and the mixture over modes adds
    # at most 1/mode_no to Var(uv): negligible against the Fisher-z band.
    a = math.radians(MODEL.angle)
    base = np.array([1.0, 1.0])
    pts = np.array([base, base + [2.0, 0.0], base + [0.0, 0.6], base + [0.0, -0.3],
                    base + 3.0 * np.array([math.cos(a), math.sin(a)]),
                    base + 0.7 * np.array([-math.sin(a), math.cos(a)])])
    gen = make_generator("spectral", MODEL, points=pts)
    n = 3000
    z = gen.sample(99, range(n))
    check_moments(z, MODEL.covariance_matrix(pts))


def test_spectral_on_grid_layout():
    # grid output is in C order over (i, j): the structured GSTools call and an
    # unstructured call at the grid points, with the same GSTools seed, agree
    grid = RegularGrid(2.0, -1.0, 6, 4, 0.5, 0.25)
    gen = make_generator("spectral", MODEL, grid=grid)
    z = gen.sample(3, [5])
    srf = gs.SRF(MODEL.to_gstools(), generator="RandMeth")
    p = grid.points()
    ref = srf((p[:, 0], p[:, 1]), seed=gstools_seed(3, 5))
    assert np.allclose(z[0], ref)


def test_fft_variogram_against_gstools_estimator():
    # outside reference: GSTools' vario_estimate_axis on each realisation and
    # GSTools' own variogram of the converted model. The per-realisation
    # estimates are independent, so the mean over n realisations has a
    # standard error s/√n (CLT); Bonferroni over the tested lags.
    m = get_model("exponential", theta_h=8.0, theta_v=1.0)
    grid = RegularGrid(0.0, 0.0, 96, 24, 0.5, 0.25)
    gen = make_generator("fft", m, grid=grid)
    n = 200
    f = gen.sample_grid(8, range(n))
    lags = np.arange(1, 17)
    for direction, spacing, axis in (("x", grid.dx, 0), ("y", grid.dy, 1)):
        est = np.array([gs.vario_estimate_axis(f[k], direction=direction)[lags]
                        for k in range(n)])
        ref = m.to_gstools().vario_axis(lags * spacing, axis=axis)
        se = est.std(axis=0, ddof=1) / math.sqrt(n)
        assert np.all(np.abs(est.mean(axis=0) - ref) < z_crit(2 * lags.size) * se)


def test_reproducible_across_batches_and_instances():
    for method in ("cholesky", "kl", "fft", "spectral"):
        gen = make_generator(method, MODEL, grid=GRID)
        full = gen.sample(42, range(40))  # crosses the internal block size (16 for fft)
        part = gen.sample(42, [37, 3, 17])
        assert np.array_equal(part, full[[37, 3, 17]])
        single = gen.sample(42, [20])
        assert np.array_equal(single[0], full[20])
        again = make_generator(method, MODEL, grid=GRID).sample(42, range(40))
        assert np.array_equal(again, full)
        batches = np.concatenate([v for _, v in gen.iter_batches(42, range(40), batch_size=7)])
        assert np.array_equal(batches, full)
        # another stream or seed gives other noise
        assert not np.allclose(gen.sample(42, [3], stream=(1,)), full[3])
        assert not np.allclose(gen.sample(43, [3]), full[3])


def test_noise_comes_from_field_noise_rng():
    # Cholesky realisation k is L z_k with z_k the first normals of
    # field_noise_rng(seed, k, *stream) (DEVELOPERS.md seeding contract)
    gen = make_generator("cholesky", MODEL, grid=GRID)
    zk = field_noise_rng(5, 9, 2, 1).standard_normal(GRID.n_points)
    L = np.linalg.cholesky(MODEL.covariance_matrix(GRID.points()))
    assert np.allclose(gen.sample(5, [9], stream=(2, 1))[0], L @ zk)


@pytest.mark.parametrize("method", ["cholesky", "fft", "kl"])
def test_anisotropy_metamorphic(method):
    # θv/θh = 0.5 on a grid of spacing dy equals the isotropic field on spacing
    # 2·dy: the covariance matrices are equal, so with the same seed the
    # realisations must coincide (index j of one is y·2 of the other)
    iso = get_model("exponential", theta_h=3.0)
    aniso = get_model("exponential", theta_h=3.0, theta_v=1.5)
    g1 = RegularGrid(0.0, 0.0, 12, 9, 0.5, 0.25)
    g2 = RegularGrid(0.0, 0.0, 12, 9, 0.5, 0.5)
    a = make_generator(method, aniso, grid=g1).sample(1, range(5))
    b = make_generator(method, iso, grid=g2).sample(1, range(5))
    assert np.allclose(a, b, atol=1e-9)


def test_rotation_metamorphic_fft():
    # angle = 90° swaps θh and θv (DEVELOPERS.md sign convention): on the same
    # square grid the two models give the same eigenvalues and hence the same
    # realisations for the same seed
    g = RegularGrid(0.0, 0.0, 16, 16, 0.5, 0.5)
    a = make_generator("fft", get_model("gaussian", theta_h=4.0, theta_v=1.0, angle=90.0),
                       grid=g).sample(3, range(4))
    b = make_generator("fft", get_model("gaussian", theta_h=1.0, theta_v=4.0),
                       grid=g).sample(3, range(4))
    assert np.allclose(a, b, atol=1e-9)


@pytest.mark.parametrize("average_cells", [False, True])
def test_circulant_embedding_is_exact(average_cells):
    # the torus covariance restricted to the grid lags must equal the model's
    # correlation (or cell-average covariance): exactness of the embedding
    # (Dietrich & Newsam 1997), checked without sampling
    from slipfield.fields import grid_cell_covariance
    from scipy import fft as sfft

    m = get_model("spherical", theta_h=5.0, theta_v=1.0, angle=30.0)
    g = RegularGrid(0.0, 0.0, 9, 7, 0.5, 0.25)
    gen = make_generator("fft", m, grid=g, average_cells=average_cells)
    Nx, Ny = gen.info["embedding"]
    c = sfft.irfft2(gen._sqrt_lam ** 2, s=(Nx, Ny))
    ii = np.r_[0:g.nx, -(g.nx - 1):0]
    jj = np.r_[0:g.ny, -(g.ny - 1):0]
    got = c[np.ix_(ii % Nx, jj % Ny)]
    lx, ly = ii[:, None] * g.dx, jj[None, :] * g.dy
    ref = (grid_cell_covariance(m, g.dx, g.dy, lx, ly) if average_cells
           else m.correlation(lx, ly))
    assert np.allclose(got, ref, atol=1e-12)


@pytest.mark.parametrize("shape", [(9, 7), (8, 6), (5, 1)])
def test_circulant_sampling_map_has_model_covariance(shape):
    # the sampler is a linear map A of the white noise it draws; its exact
    # covariance A Aᵀ (built from unit noise vectors, no sampling) must equal
    # the model's correlation matrix: this checks the frequency-domain noise
    # (Hermitian pairs, self-conjugate entries) for even and odd torus sizes
    m = get_model("exponential", theta_h=3.0, theta_v=0.7, angle=-35.0)
    g = RegularGrid(0.0, 0.0, shape[0], shape[1], 0.5, 0.25)
    gen = make_generator("fft", m, grid=g)
    Nx, Ny = gen.info["embedding"]
    d = Nx * (Ny // 2 + 1) * 2
    A = gen._from_noise(np.eye(d).reshape(d, Nx, Ny // 2 + 1, 2))
    assert np.allclose(A.T @ A, m.covariance_matrix(g.points()), atol=1e-12)


def test_embedding_grows_then_clips_and_reports():
    # squared exponential with θ comparable to the grid needs a larger torus;
    # the grown embedding is exact, a capped one reports the clipped share
    g = RegularGrid(0.0, 0.0, 64, 64, 1.0, 1.0)
    m = get_model("gaussian", theta_h=40.0)
    grown = make_generator("fft", m, grid=g)
    assert grown.info["growth_steps"] >= 1 and grown.info["clipped_fraction"] == 0.0
    capped = make_generator("fft", m, grid=g, max_embedding=128 * 128)
    assert capped.info["embedding"] == (128, 128)
    assert capped.info["clipped_fraction"] > 0.0
    assert capped.info["min_eigenvalue"] < 0.0
    assert capped.info["variance_after_clipping"] > 1.0


def test_kl_reports_truncation():
    gen = make_generator("kl", get_model("gaussian", theta_h=2.0), grid=GRID, energy=0.95)
    info = gen.info
    assert info["energy_fraction"] >= 0.95
    assert info["truncation_error"] == pytest.approx(1 - info["energy_fraction"])
    # mean variance actually produced equals 1 − truncation error
    assert np.mean(np.sum(gen._phi ** 2, axis=1)) == pytest.approx(1 - info["truncation_error"])
    fewer = make_generator("kl", get_model("gaussian", theta_h=2.0), grid=GRID, n_modes=5)
    assert fewer.info["n_modes"] == 5 and fewer.info["energy_fraction"] < info["energy_fraction"]


def test_cholesky_jitter_reported_for_smooth_model():
    # dense points and a squared exponential give a numerically singular matrix
    pts = np.column_stack([np.linspace(0, 1, 200), np.zeros(200)])
    gen = make_generator("cholesky", get_model("gaussian", theta_h=5.0), points=pts)
    assert gen.info["jitter"] > 0
    ok = make_generator("cholesky", MODEL, grid=GRID)
    assert ok.info["jitter"] == 0.0


def test_bad_inputs():
    big = RegularGrid(0, 0, 256, 64, 0.5, 0.5)
    for method in ("cholesky", "kl"):
        with pytest.raises(InputError, match="fft.*spectral"):
            make_generator(method, MODEL, grid=big)
    with pytest.raises(InputError, match="unknown generator"):
        make_generator("turning-bands", MODEL, grid=GRID)
    with pytest.raises(InputError, match="energi"):
        make_generator("kl", MODEL, grid=GRID, energi=0.9)
    with pytest.raises(InputError):
        make_generator("fft", MODEL, points=np.zeros((4, 2)))
    with pytest.raises(InputError):
        make_generator("cholesky", MODEL)
    with pytest.raises(InputError):
        make_generator("cholesky", MODEL, points=np.zeros((4, 3)))
    with pytest.raises(InputError):
        make_generator("cholesky", "exponential", grid=GRID)
    with pytest.raises(InputError):
        make_generator("kl", MODEL, grid=GRID, energy=1.5)
    gen = make_generator("fft", MODEL, grid=GRID)
    with pytest.raises(InputError):
        gen.sample(-1, range(2))
    with pytest.raises(InputError):
        gen.sample(1, 5)
    with pytest.raises(InputError):
        gen.sample(1, [1.5])
    with pytest.raises(InputError):
        RegularGrid(0, 0, 0, 4, 1.0, 1.0)
    with pytest.raises(InputError):
        RegularGrid(0, 0, 4, 4, -1.0, 1.0)


def test_method_index_matches_what_the_modules_register():
    # the command line lists methods from the index without importing the modules
    from slipfield.fields.generators import base, generator_names

    for name in generator_names():
        base._generator_class(name)
    assert set(base._REGISTRY) == set(base.METHOD_MODULES)
