"""Figures of the report layer, driven by synthetic inputs.

Each figure must render to a non-empty image and carry the artists it
promises; fitted densities are checked against the closed-form maximum-
likelihood estimators and against scipy.stats itself.
"""
import io

import matplotlib.image as mpimg
import numpy as np
import pytest
from matplotlib.collections import PolyCollection, QuadMesh
from matplotlib.patches import Polygon, Rectangle
from scipy import stats

from slipfield.slope.errors import InputError
from slipfield.slope.report import (
    figure_png_bytes,
    fit_fs_distributions,
    plot_failure_map,
    plot_field_realisation,
    plot_fs_distribution,
    plot_pf_convergence,
    plot_pf_vs_theta,
    plot_section,
    plot_tornado,
    plot_variance_reduction,
)
from slipfield.slope.report.style import CYCLE, PALETTE

GROUND = np.array([[0.0, 10.0], [10.0, 10.0], [30.0, 0.0], [50.0, 0.0]])
CIRCLE = np.array([[5.0, 10.0], [15.0, 3.0], [25.0, 0.8], [32.0, 0.0]])


def _assert_nonblank(fig):
    """The figure renders to a PNG that is not a single colour."""
    png = figure_png_bytes(fig, dpi=60)
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    img = mpimg.imread(io.BytesIO(png), format="png")
    assert img.shape[0] > 50 and img.shape[1] > 50
    # A blank canvas has zero spread; drawn axes, text and data give a large one.
    assert float(img[..., :3].std()) > 0.02


def _gid(ax, gid):
    found = [a for a in ax.get_children() + list(ax.lines) + list(ax.texts) if a.get_gid() == gid]
    assert found, f"no artist with gid {gid!r}"
    return found[0]


# --------------------------------------------------------------------------- section
def test_section_draws_zones_water_and_labelled_surfaces():
    zones = [
        {"name": "embankment", "polygon_xy": [[0, 10], [10, 10], [30, 0], [0, 0]], "material": "sandy fill"},
        {"name": "foundation", "polygon_xy": [[0, 0], [50, 0], [50, -8], [0, -8]], "material": "soft clay"},
    ]
    surfaces = [{"xy": CIRCLE, "fs": 1.2345, "label": "Bishop"}, {"xy": CIRCLE * [1, 0.9], "fs": 1.31, "label": "Spencer",
                                                                   "converged": False}]
    fig = plot_section(None, GROUND, zones=zones, water_xy=[[0, 6], [50, -1]], surfaces=surfaces)
    ax = fig.axes[0]
    polys = [p for p in ax.patches if isinstance(p, Polygon)]
    assert len(polys) == 2
    np.testing.assert_allclose(polys[1].get_xy()[:4], zones[1]["polygon_xy"])
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert "embankment (sandy fill)" in legend and "foundation (soft clay)" in legend
    assert "Bishop: FS = 1.234" in legend  # 3 decimals, as documented
    assert "Spencer: FS = 1.310 (not converged)" in legend
    # ground, water, water symbol, two surfaces
    assert len(ax.lines) == 5
    np.testing.assert_allclose(ax.lines[3].get_xydata(), CIRCLE)
    assert ax.lines[4].get_linestyle() == ":"  # non-converged surface drawn dotted
    _assert_nonblank(fig)
    # FS labels never overlap (the cut demo once printed "FS =1.16751.364"): each is its own legend
    # line, and the legend lies outside the axes, so no label sits on the section either.
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    texts = [t for t in fig.legends[0].get_texts() if "FS =" in t.get_text()]
    boxes = [t.get_window_extent(renderer) for t in texts]
    assert len(boxes) == 2 and not boxes[0].overlaps(boxes[1])
    assert not fig.legends[0].get_window_extent(renderer).overlaps(ax.get_window_extent(renderer))


def test_section_names_every_water_line_and_shows_loads_and_search():
    piezo = [{"xy": [[0, 4], [50, 2]], "label": "piezometric line, zone foundation"}]
    fig = plot_section(None, GROUND, water_xy=[[0, 6], [50, -1]], water_label="phreatic surface", water_lines=piezo,
                       surcharges=[{"x1": 1.0, "x2": 8.0, "q1": 12.0, "q2": 12.0}], kh=0.1,
                       crack={"depth": 2.0, "water_filled": True},
                       search={"kind": "window", "entry": [0.0, 9.0], "exit": [31.0, 45.0]},
                       surfaces=[{"xy": CIRCLE, "fs": 1.1, "label": "drained, bishop"}])
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    for name in ("phreatic surface", "piezometric line, zone foundation", "surcharge 1: q = 12 kPa",
                 "entry window searched", "exit window searched", "drained, bishop: FS = 1.100"):
        assert name in legend
    notes = [t.get_text() for t in fig.axes[0].texts if t.get_gid() == "load-notes"][0]
    assert "kh = 0.1" in notes and "tension crack 2 m" in notes
    # the crack is drawn at the upslope (higher) end of the surface, 2 m deep below the ground
    crack = [ln for ln in fig.axes[0].lines if len(ln.get_xdata()) == 2 and ln.get_xdata()[0] == ln.get_xdata()[1]]
    assert crack and np.allclose(crack[0].get_ydata(), [10.0, 8.0])


def test_section_reuses_given_axes_and_rejects_bad_ground():
    from slipfield.slope.report.style import new_figure

    fig, ax = new_figure()
    assert plot_section(ax, GROUND) is fig
    with pytest.raises(InputError, match="ground_xy"):
        plot_section(None, [1.0, 2.0, 3.0])
    with pytest.raises(InputError, match=r"zones\[0\]"):
        plot_section(None, GROUND, zones=[{"name": "a"}])


# --------------------------------------------------------------------------- realisation
def test_field_realisation_mesh_matches_values_and_cell_edges():
    rng = np.random.default_rng(7)
    nx, ny, dx, dy = 40, 12, 1.25, 0.5
    # RegularGrid convention (DEVELOPERS.md): centres at x0 + (i + 0.5) dx.
    xc = -2.0 + (np.arange(nx) + 0.5) * dx
    yc = -6.0 + (np.arange(ny) + 0.5) * dy
    vals = rng.lognormal(np.log(30.0), 0.3, (nx, ny))
    vals[0, -1] = np.nan  # a cell above the ground
    fig = plot_field_realisation(None, xc, yc, vals, CIRCLE, 0.97, "su", units="kPa", ground_xy=GROUND)
    ax = fig.axes[0]
    mesh = [c for c in ax.collections if isinstance(c, QuadMesh)][0]
    arr = mesh.get_array()
    # pcolormesh stores C = values.T (rows are y); the NaN cell is masked.
    np.testing.assert_allclose(np.ma.filled(arr, -1.0).reshape(ny, nx), np.nan_to_num(vals.T, nan=-1.0))
    assert np.ma.getmaskarray(arr).reshape(ny, nx)[-1, 0]
    # Edges from centres: exactly the grid's cell boundaries x0 + i dx.
    coords = mesh.get_coordinates()
    np.testing.assert_allclose(coords[0, :, 0], -2.0 + np.arange(nx + 1) * dx)
    np.testing.assert_allclose(coords[:, 0, 1], -6.0 + np.arange(ny + 1) * dy)
    cbar_labels = [a.get_xlabel() for a in fig.axes[1:]] + [a.get_ylabel() for a in fig.axes[1:]]
    assert "su (kPa)" in cbar_labels
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "critical surface, FS = 0.970" in legend
    _assert_nonblank(fig)


def test_field_realisation_rejects_mismatched_grid():
    with pytest.raises(InputError, match="grid_x"):
        plot_field_realisation(None, np.arange(7.0), np.arange(3.0), np.ones((4, 3)))


# --------------------------------------------------------------------------- FS distribution
def test_fits_match_closed_form_mle_and_recover_parameters():
    rng = np.random.default_rng(2024)
    n = 20_000
    s_true, median_true = 0.18, 1.35
    fs = median_true * np.exp(s_true * rng.standard_normal(n))
    fits = fit_fs_distributions(fs)
    # Closed-form MLEs: normal mean / ddof=0 std; two-parameter lognormal
    # s = std(ln x), scale = exp(mean ln x) (Johnson, Kotz & Balakrishnan 1994,
    # Continuous Univariate Distributions vol. 1, ch. 14).
    assert fits["normal"]["mean"] == pytest.approx(fs.mean(), rel=1e-12)
    assert fits["normal"]["std"] == pytest.approx(fs.std(ddof=0), rel=1e-12)
    assert fits["lognormal"]["s"] == pytest.approx(np.log(fs).std(ddof=0), rel=1e-6)
    assert fits["lognormal"]["scale"] == pytest.approx(np.exp(np.log(fs).mean()), rel=1e-6)
    # Against the generating values: SE(s_hat) = s/sqrt(2n), SE(ln median_hat) = s/sqrt(n)
    # (asymptotic MLE variances); 4 standard errors leaves a 6e-5 chance of a false alarm.
    assert abs(fits["lognormal"]["s"] - s_true) < 4 * s_true / np.sqrt(2 * n)
    assert abs(np.log(fits["lognormal"]["scale"]) - np.log(median_true)) < 4 * s_true / np.sqrt(n)
    # Fitted pf is the fitted CDF at FS = 1 (scipy.stats as reference).
    assert fits["lognormal"]["pf"] == pytest.approx(stats.norm.cdf(np.log(1 / fits["lognormal"]["scale"]) / fits["lognormal"]["s"]), rel=1e-9)


def test_fits_are_scipy_stats_fits_to_the_last_bit():
    # The closed forms are written out (drawing must not import scipy.stats, below); they must stay the
    # numbers scipy.stats.norm.fit / lognorm.fit(floc=0) and their CDFs at FS = 1 give (scipy as the
    # reference library), for lognormal-like FS and for samples with FS <= 0 (normal fit only).
    rng = np.random.default_rng(17)
    for k in range(40):
        fs = np.exp(rng.normal(0.2, rng.uniform(0.02, 0.5), int(rng.integers(2, 2000))))
        if k % 4 == 0:
            fs = fs - 0.9   # some FS <= 0
        fits = fit_fs_distributions(fs)
        mu, sd = stats.norm.fit(fs)
        assert fits["normal"] == {"mean": float(mu), "std": float(sd), "pf": float(stats.norm.cdf(1.0, mu, sd))}
        if np.all(fs > 0):
            s, _, scale = stats.lognorm.fit(fs, floc=0.0)
            assert fits["lognormal"] == {"s": float(s), "scale": float(scale), "median": float(scale),
                                         "pf": float(stats.lognorm.cdf(1.0, s, 0.0, scale))}
        else:
            assert fits["lognormal"] is None


def test_drawing_the_fs_distribution_does_not_import_scipy_stats():
    # each worker that draws a run's figures imported scipy.stats for these fits alone (issue 17)
    import subprocess
    import sys

    code = ("import sys, numpy as np; from slipfield.slope.report.figures.distributions import plot_fs_distribution; "
            "plot_fs_distribution(np.random.default_rng(3).lognormal(0.2, 0.1, 500)); "
            "print('scipy.stats' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_fs_distribution_curves_are_scipy_densities_and_ecdf():
    rng = np.random.default_rng(11)
    fs = rng.lognormal(np.log(1.25), 0.2, 1500)
    fig = plot_fs_distribution(fs, n_excluded=4, pf_interval=(0.1, 0.15))
    ax_h, ax_c = fig.axes[:2]
    nrm = _gid(ax_h, "fit-normal")
    lgn = _gid(ax_h, "fit-lognormal")
    x = nrm.get_xdata()
    mu, sd = stats.norm.fit(fs)
    s, loc, scale = stats.lognorm.fit(fs, floc=0)
    np.testing.assert_allclose(nrm.get_ydata(), stats.norm.pdf(x, mu, sd), rtol=1e-10)
    np.testing.assert_allclose(lgn.get_ydata(), stats.lognorm.pdf(lgn.get_xdata(), s, loc, scale), rtol=1e-6)
    # Histogram is a density: bar areas sum to 1.
    bars = [p for p in ax_h.patches if isinstance(p, Rectangle)]
    assert sum(b.get_width() * b.get_height() for b in bars) == pytest.approx(1.0, rel=1e-9)
    # Empirical CDF steps i/n at the sorted samples.
    ecdf = _gid(ax_c, "ecdf")
    np.testing.assert_allclose(ecdf.get_xdata(), np.sort(fs))
    np.testing.assert_allclose(ecdf.get_ydata(), np.arange(1, fs.size + 1) / fs.size)
    # FS = 1 marked on both panels.
    for ax in (ax_h, ax_c):
        assert any(np.allclose(ln.get_xdata(), 1.0) for ln in ax.lines if len(ln.get_xdata()) == 2)
    note = _gid(ax_c, "pf-note").get_text()
    assert f"pf = P(FS < 1) = {np.mean(fs < 1):.3g}" in note
    assert "4 not converged/inadmissible" in note and "[0.1, 0.15]" in note
    _assert_nonblank(fig)


def test_fs_distribution_without_lognormal_when_fs_not_positive():
    fs = np.array([-0.1, 0.5, 1.2, 1.4, 1.6, 2.0])
    assert fit_fs_distributions(fs)["lognormal"] is None
    fig = plot_fs_distribution(fs)
    assert not [ln for ln in fig.axes[0].lines if ln.get_gid() == "fit-lognormal"]
    with pytest.raises(InputError, match="fs_samples"):
        fit_fs_distributions([1.0, np.nan, 2.0])


# --------------------------------------------------------------------------- convergence
def test_pf_convergence_band_and_line():
    n = np.array([100, 200, 400, 800, 1600])
    pf = np.array([0.05, 0.045, 0.05, 0.048, 0.049])
    half = 1.96 * np.sqrt(pf * (1 - pf) / n)  # normal-approximation band as an example input
    fig = plot_pf_convergence(n, pf, pf - half, pf + half)
    ax = fig.axes[0]
    assert ax.get_xscale() == "log"
    assert len([c for c in ax.collections if isinstance(c, PolyCollection)]) == 1
    np.testing.assert_allclose(ax.lines[0].get_xydata(), np.column_stack([n, pf]))
    assert "95 % confidence band" in [t.get_text() for t in ax.get_legend().get_texts()]
    _assert_nonblank(fig)
    with pytest.raises(InputError, match="band must contain"):
        plot_pf_convergence(n, pf, pf + 0.01, pf + 0.02)
    with pytest.raises(InputError, match="increasing"):
        plot_pf_convergence(n[::-1], pf, pf - half, pf + half)


# --------------------------------------------------------------------------- tornado
def test_tornado_sorted_by_swing_with_bars_from_base():
    names = ["γ fill", "c' clay", "φ' clay"]
    low = np.array([1.28, 1.10, 0.95])
    high = np.array([1.32, 1.45, 1.60])
    fig = plot_tornado(names, low, high, 1.30, k=1)
    ax = fig.axes[0]
    bars = [p for p in ax.patches if isinstance(p, Rectangle)]
    assert len(bars) == 2 * len(names)
    # Largest swing on top: φ' (0.65), c' (0.35), γ (0.04).
    labels = [t.get_text() for t in ax.get_yticklabels()]
    ticks = ax.get_yticks()
    assert [labels[i] for i in np.argsort(-ticks)] == ["φ' clay", "c' clay", "γ fill"]
    lows = sorted(bars[:3], key=lambda b: -b.get_y())
    assert [b.get_x() for b in lows] == pytest.approx([1.30] * 3)
    assert [b.get_width() for b in lows] == pytest.approx([0.95 - 1.30, 1.10 - 1.30, 1.28 - 1.30])
    _assert_nonblank(fig)
    with pytest.raises(InputError, match="one entry per variable"):
        plot_tornado(names, low[:2], high, 1.3)


# --------------------------------------------------------------------------- theta sweep
def test_pf_vs_theta_infinite_theta_is_a_separate_marker_at_right():
    theta = [2.0, 5.0, 10.0, 20.0, 40.0, np.inf]
    pf = np.array([[0.010, 0.020, 0.030, 0.040, 0.050, 0.080], [0.015, 0.025, 0.035, 0.045, 0.055, 0.080]])
    fig = plot_pf_vs_theta(theta, pf, pf * 0.8, pf * 1.2, labels=["θv = 1 m", "θv = 2 m"])
    ax = fig.axes[0]
    assert ax.get_xscale() == "log"
    finite_lines = [ln for ln in ax.lines if ln.get_gid() in ("series-0", "series-1")]
    inf_lines = [ln for ln in ax.lines if ln.get_gid() in ("series-0-inf", "series-1-inf")]
    assert len(finite_lines) == 2 and len(inf_lines) == 2
    np.testing.assert_allclose(finite_lines[0].get_xdata(), theta[:-1])
    np.testing.assert_allclose(finite_lines[1].get_ydata(), pf[1, :-1])
    for ln in inf_lines:
        assert ln.get_linestyle() == "None"  # not joined to the finite curve
        assert ln.get_xdata()[0] > 40.0 * 1.5
        assert ln.get_ydata()[0] == pytest.approx(0.08)
    assert any(t.get_text().startswith("∞") for t in ax.get_xticklabels())
    assert [t.get_text() for t in ax.get_legend().get_texts()] == ["θv = 1 m", "θv = 2 m"]
    _assert_nonblank(fig)
    with pytest.raises(InputError, match="theta_values"):
        plot_pf_vs_theta([0.0, 1.0], [0.1, 0.2])


# --------------------------------------------------------------------------- variance function
def test_variance_reduction_curves_and_asymptote():
    t = np.logspace(-2, 2, 60)
    a = 2 * t
    # Markov closed form (Vanmarcke 1983): γ = 2(a + e^-a - 1)/a², a = 2T/θ.
    markov = 2 * (a + np.exp(-a) - 1) / a**2
    # Squared exponential closed form (same sources).
    from scipy.special import erf

    sqexp = (1 / (np.pi * t**2)) * (np.pi * t * erf(np.sqrt(np.pi) * t) + np.exp(-np.pi * t**2) - 1)
    fig = plot_variance_reduction(t, {"Markov": markov, "squared exponential": sqexp})
    ax = fig.axes[0]
    g0, g1 = _gid(ax, "gamma-0"), _gid(ax, "gamma-1")
    np.testing.assert_allclose(g0.get_ydata(), markov)
    np.testing.assert_allclose(g1.get_ydata(), sqexp)
    asym = _gid(ax, "asymptote")
    np.testing.assert_allclose(asym.get_ydata(), 1 / asym.get_xdata())
    assert g0.get_color() == CYCLE[0] and g1.get_color() == CYCLE[1]
    _assert_nonblank(fig)
    with pytest.raises(InputError, match=r"\[0, 1\]"):
        plot_variance_reduction(t, {"bad": markov + 0.5})


# --------------------------------------------------------------------------- failure map
def test_failure_map_masks_empty_cells_and_notes_counts():
    xe = np.linspace(0, 50, 26)
    ye = np.linspace(-5, 10, 16)
    dens = np.zeros((25, 15))
    dens[5:15, 6:12] = np.linspace(0.05, 0.6, 10)[:, None]
    fig = plot_failure_map(xe, ye, dens, GROUND, n_failed=37, n_total=1000, surfaces=[CIRCLE])
    ax = fig.axes[0]
    mesh = [c for c in ax.collections if isinstance(c, QuadMesh)][0]
    mask = np.ma.getmaskarray(mesh.get_array()).reshape(15, 25)
    np.testing.assert_array_equal(mask, (dens <= 0).T)
    assert _gid(ax, "failed-note").get_text() == "37 failed realisations of 1000"
    assert len(ax.lines) == 2  # ground + one example surface
    _assert_nonblank(fig)
    with pytest.raises(InputError, match="density"):
        plot_failure_map(xe, ye, -dens - 1, GROUND)


def test_palette_is_okabe_ito():
    # Hex values recalled from Okabe & Ito (2008) as reproduced by Wong (2011, Nat. Methods 8:441).
    assert set(PALETTE.values()) == {"#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2",
                                     "#D55E00", "#CC79A7"}


# --------------------------------------------------------------------------- added figures
def test_fs_vs_theta_two_panels_with_infinite_marker():
    from slipfield.slope.report import plot_fs_vs_theta

    theta = [1.0, 4.0, 16.0, np.inf]
    mean = [1.40, 1.38, 1.37, 1.36]
    std = [0.05, 0.09, 0.14, 0.20]
    fig = plot_fs_vs_theta(theta, mean, std)
    ax_m, ax_s = fig.axes[:2]
    np.testing.assert_allclose(_gid(ax_m, "mean-0").get_ydata(), mean[:-1])
    np.testing.assert_allclose(_gid(ax_s, "std-0").get_ydata(), std[:-1])
    assert _gid(ax_s, "std-0-inf").get_ydata()[0] == pytest.approx(0.20)
    assert ax_m.get_ylabel() == "mean FS" and ax_s.get_ylabel() == "standard deviation of FS"
    _assert_nonblank(fig)
    with pytest.raises(InputError, match="std_fs"):
        plot_fs_vs_theta(theta, mean, [0.1, -0.1, 0.1, 0.1])


def test_pf_vs_theta_log_axis_reports_zero_values():
    fig = plot_pf_vs_theta([1.0, 10.0, np.inf], [[0.0, 0.01, 0.05]], labels=["θv = 1 m"], log_pf=True)
    ax = fig.axes[0]
    assert ax.get_yscale() == "log"
    assert "θv = 1 m" in _gid(ax, "series-zero-note").get_text()


def test_realisations_share_one_colour_scale():
    from slipfield.slope.report import plot_realisations

    rng = np.random.default_rng(3)
    xc, yc = np.arange(0.5, 20, 1.0), np.arange(0.5, 8, 1.0)
    reals = [{"values": rng.normal(30 + 10 * k, 5, (xc.size, yc.size)), "surface_xy": CIRCLE * 0.4, "fs": 1.0 + 0.1 * k,
              "label": f"realisation {k}"} for k in range(3)]
    fig = plot_realisations(xc, yc, reals, "su", ground_xy=GROUND * 0.4)
    panels = [ax for ax in fig.axes if ax.get_label() != "<colorbar>"]
    meshes = [c for ax in panels for c in ax.collections if isinstance(c, QuadMesh)]
    assert len(meshes) == 3
    lo = min(r["values"].min() for r in reals)
    hi = max(r["values"].max() for r in reals)
    for m in meshes:
        assert m.norm.vmin == pytest.approx(lo) and m.norm.vmax == pytest.approx(hi)
    titles = [ax.get_title() for ax in panels if ax.get_visible() and ax.get_title()]
    assert titles == ["realisation 0, FS = 1.000", "realisation 1, FS = 1.100", "realisation 2, FS = 1.200"]
    assert sum(1 for ax in panels if not ax.get_visible()) == 1  # 3 panels on a 2x2 grid
    _assert_nonblank(fig)


def test_failure_geometry_histograms_count_every_failure():
    from slipfield.slope.report import plot_failure_geometry

    rng = np.random.default_rng(9)
    area = rng.gamma(4.0, 10.0, 250)
    depth = rng.gamma(3.0, 1.0, 250)
    fig = plot_failure_geometry(area, depth, bins=20)
    ax_a, ax_d = fig.axes[:2]
    heights = [p.get_height() for p in ax_a.patches if isinstance(p, Rectangle)]
    assert sum(heights) == 250  # no failed realisation dropped from the histogram
    assert f"median {np.median(depth):.3g}" in [t.get_text() for t in ax_d.get_legend().get_texts()]
    _assert_nonblank(fig)


def test_tornado_marks_clipped_variables():
    fig = plot_tornado(["c'", "φ'"], [1.0, 0.9], [1.4, 1.6], 1.2, k=2, clipped=["c'"])
    ax = fig.axes[0]
    assert "c' *" in [t.get_text() for t in ax.get_yticklabels()]
    assert "clipped to the variable's support" in ax.get_xlabel()
    with pytest.raises(InputError, match="clipped"):
        plot_tornado(["c'"], [1.0], [1.4], 1.2, clipped=["γ"])


def test_pf_comparison_points_and_intervals():
    from slipfield.slope.report import plot_pf_comparison

    labels = ["spatial field (θh = 20 m, θv = 2 m)", "single random variable", "variance-function estimate"]
    pf = np.array([0.012, 0.048, 0.010])
    lo = np.array([0.009, 0.042, np.nan])  # the analytic estimate has no sampling interval
    hi = np.array([0.016, 0.055, np.nan])
    fig = plot_pf_comparison(labels, pf, lo, hi)
    ax = fig.axes[0]
    pts = _gid(ax, "estimates").get_xydata()
    np.testing.assert_allclose(pts[:, 0], pf)
    tick = dict(zip(ax.get_yticks(), [t.get_text() for t in ax.get_yticklabels()]))
    assert [tick[y] for y in pts[:, 1]] == labels  # each point on its own label's row
    _assert_nonblank(fig)
    fig = plot_pf_comparison(["a", "b"], [0.0, 0.01], log_pf=True)
    assert "a" in _gid(fig.axes[0], "zero-note").get_text()
    with pytest.raises(InputError, match="contain"):
        plot_pf_comparison(["a"], [0.1], [0.2], [0.3])


def test_constant_fs_draws_no_density_curves():
    fig = plot_fs_distribution(np.full(10, 1.3))
    assert not [ln for ln in fig.axes[0].lines if ln.get_gid() in ("fit-normal", "fit-lognormal")]
    _assert_nonblank(fig)


def test_public_api_star_import():
    import slipfield.slope.report as rep

    ns = {}
    exec("from slope.report import *", ns)
    assert set(rep.__all__) <= set(ns) and all(callable(getattr(rep, n)) or n.isupper() for n in rep.__all__)
