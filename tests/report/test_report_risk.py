"""Risk chart: points at (consequence, pf × annual exceedance) on log–log axes; no built-in criteria."""
import numpy as np
import pytest

from slipfield.slope.errors import InputError
from slipfield.slope.report import annual_probability, figure_png_bytes, plot_risk_chart, risk_points


def _gid(fig, gid):
    ax = fig.axes[0]
    found = [a for a in list(ax.lines) + fig.texts if a.get_gid() == gid]
    assert found, gid
    return found[0]


def test_annual_probability_is_the_product():
    # Total probability theorem with one governing loading event per year and
    # failure impossible without it: P(failure in a year) = P(F | load) × P(load
    # in a year) — an exact identity under those assumptions.
    assert annual_probability(0.05, 0.01) == pytest.approx(5e-4, rel=1e-15)
    np.testing.assert_allclose(annual_probability([0.1, 0.2], 1 / 100), [1e-3, 2e-3], rtol=1e-15)
    with pytest.raises(InputError, match="annual_exceedance"):
        annual_probability(0.1, 0.0)
    with pytest.raises(InputError, match="pf"):
        annual_probability(1.2, 0.1)


def test_point_lies_at_consequence_and_pf_times_exceedance():
    scen = [
        {"label": "levee, flood crest", "consequence": 12.0, "pf": 0.037, "annual_exceedance": 1 / 200,
         "pf_interval": (0.031, 0.044)},
        {"label": "cut slope", "consequence": 2.5e6, "annual_probability": 3.0e-5},
    ]
    lines = [{"label": "owner's limit (invented for this test)", "source": "Test fixture, no publication",
              "consequence": [1, 1e7], "annual_probability": [1e-2, 1e-9]}]
    fig = plot_risk_chart(scen, lines, consequence_label="consequence (lives or cost)")
    ax = fig.axes[0]
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    p0 = _gid(fig, "scenario-0")
    np.testing.assert_allclose(p0.get_xydata(), [[12.0, 0.037 / 200]], rtol=1e-14)
    np.testing.assert_allclose(_gid(fig, "scenario-1").get_xydata(), [[2.5e6, 3.0e-5]], rtol=1e-14)
    # The point is inside the visible axes (not clipped by autoscaling on log axes).
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    assert x0 < 12.0 < x1 and y0 < 0.037 / 200 < y1
    line = _gid(fig, "tolerability-0")
    np.testing.assert_allclose(line.get_xydata(), [[1, 1e-2], [1e7, 1e-9]])
    foot = _gid(fig, "risk-footnote").get_text()
    assert "[1] owner's limit (invented for this test): Test fixture, no publication" in foot
    legend = [t.get_text() for lg in fig.legends for t in lg.get_texts()]  # below the axes
    assert legend[0].startswith("[1] ")
    assert len(figure_png_bytes(fig, dpi=50)) > 5000


def test_interval_scaled_by_the_same_exceedance():
    pts = risk_points([{"label": "a", "consequence": 3, "pf": 0.2, "annual_exceedance": 0.01, "pf_interval": (0.1, 0.3)}])
    assert pts[0]["annual_interval"] == pytest.approx((1e-3, 3e-3))


def test_no_criteria_built_in_and_lines_need_a_source():
    fig = plot_risk_chart([{"consequence": 5, "annual_probability": 1e-4}])
    assert not [ln for ln in fig.axes[0].lines if (ln.get_gid() or "").startswith("tolerability")]
    assert "No tolerability criteria are built in" in _gid(fig, "risk-footnote").get_text()
    with pytest.raises(InputError, match="source"):
        plot_risk_chart([{"consequence": 5, "annual_probability": 1e-4}],
                        [{"label": "x", "consequence": [1, 10], "annual_probability": [1e-3, 1e-4]}])
    with pytest.raises(InputError, match="source"):
        plot_risk_chart([{"consequence": 5, "annual_probability": 1e-4}],
                        [{"label": "x", "source": "  ", "consequence": [1, 10], "annual_probability": [1e-3, 1e-4]}])


def test_scenario_needs_exactly_one_way_to_its_probability():
    with pytest.raises(InputError, match="not both"):
        risk_points([{"consequence": 1, "annual_probability": 1e-3, "pf": 0.1, "annual_exceedance": 0.01}])
    with pytest.raises(InputError, match="neither"):
        risk_points([{"consequence": 1}])
    with pytest.raises(InputError, match="annual_exceedance"):
        risk_points([{"consequence": 1, "pf": 0.1}])
    with pytest.raises(InputError, match="consequence"):
        risk_points([{"consequence": 0, "annual_probability": 1e-3}])


def test_zero_pf_shown_as_upper_bound_or_reported():
    # No failures in n realisations: the user passes an upper bound (e.g. the
    # "rule of three" 3/n for 95 %, recalled from Hanley & Lippman-Hand 1983,
    # JAMA 249(13):1743-1745; here only an example input).
    n = 1000
    fig = plot_risk_chart([{"label": "none failed", "consequence": 4, "pf": 0.0, "annual_exceedance": 0.1,
                            "pf_interval": (0.0, 3 / n)}])
    mark = _gid(fig, "scenario-0")
    assert mark.get_marker() == "v"
    np.testing.assert_allclose(mark.get_xydata(), [[4, 3 / n * 0.1]])
    fig = plot_risk_chart([{"label": "no bound", "consequence": 4, "annual_probability": 0.0}])
    assert "no bound: annual probability 0 without an upper bound" in _gid(fig, "risk-footnote").get_text()


def test_tolerability_line_is_a_power_law_through_its_anchor():
    from slipfield.slope.report import tolerability_line

    # log P = log P0 + b (log C - log C0): a straight line on log–log axes (closed form).
    ln = tolerability_line("example (invented)", "test fixture, no publication", 10.0, 1e-4, -1.0, (1.0, 1000.0))
    np.testing.assert_allclose(ln["consequence"], [1.0, 1000.0])
    np.testing.assert_allclose(ln["annual_probability"], [1e-3, 1e-6], rtol=1e-12)
    ln2 = tolerability_line("steep", "test fixture", 1.0, 1e-3, -2.0, (1.0, 100.0))
    np.testing.assert_allclose(ln2["annual_probability"], [1e-3, 1e-7], rtol=1e-12)
    fig = plot_risk_chart([{"consequence": 5, "annual_probability": 1e-4}], [ln, ln2])
    assert len([l for l in fig.axes[0].lines if (l.get_gid() or "").startswith("tolerability")]) == 2
    with pytest.raises(InputError, match="source"):
        tolerability_line("x", "", 1.0, 1e-3, -1.0, (1.0, 10.0))


def test_case_file_forms_are_accepted():
    # [[risk.tolerability]] tables carry 'points'; [risk] may give 'annual_pf' directly (slope/case_schema.py).
    line = {"label": "user line", "source": "test fixture", "points": [[1, 1e-3], [100, 1e-5]]}
    fig = plot_risk_chart([{"label": "cut", "consequence": 2e6, "annual_pf": 1e-3}], [line])
    np.testing.assert_allclose(_gid(fig, "tolerability-0").get_xydata(), [[1, 1e-3], [100, 1e-5]])
    np.testing.assert_allclose(_gid(fig, "scenario-0").get_xydata(), [[2e6, 1e-3]])
    with pytest.raises(InputError, match="points"):
        plot_risk_chart([{"consequence": 1, "annual_pf": 1e-3}], [{"label": "l", "source": "s", "points": [1, 2, 3]}])


def _extent(artist, fig):
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    return artist.get_window_extent(FigureCanvasAgg(fig).get_renderer())


def test_legend_below_keeps_the_plotting_area():
    # A long legend used to sit right of the axes, and the layout shrank the axes to make room for it.
    one = plot_risk_chart([{"label": "a", "consequence": 5, "annual_probability": 1e-4}])
    many = plot_risk_chart([{"label": f"hypothesis {k} · a rather long estimate name, spatial simulation",
                             "consequence": 5 * (k + 1), "annual_probability": 1e-4 * (k + 1),
                             "annual_interval": (0.5e-4 * (k + 1), 2e-4 * (k + 1))} for k in range(12)],
                           [{"label": f"line {k}", "source": "test fixture, no publication",
                             "consequence": [1, 1e3], "annual_probability": [1e-2, 1e-6]} for k in range(3)],
                           title="many entries")
    sizes = []
    for fig in (one, many):
        ax_box = _extent(fig.axes[0], fig)
        sizes.append((ax_box.width / fig.dpi, ax_box.height / fig.dpi))  # inches
        for lg in fig.legends:
            lg_box = _extent(lg, fig)
            assert lg_box.y1 < ax_box.y0  # wholly below the axes, no overlap
        foot = _extent(_gid(fig, "risk-footnote"), fig)
        assert foot.y1 <= min([_extent(lg, fig).y0 for lg in fig.legends] + [ax_box.y0]) + 1e-9
        assert foot.y0 >= -1e-6  # inside the figure, not cut at the bottom edge
    np.testing.assert_allclose(sizes[0], sizes[1], rtol=1e-9)
    assert sum(len(lg.get_texts()) for lg in many.legends) == 15
