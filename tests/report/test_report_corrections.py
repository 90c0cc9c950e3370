"""Corrections found by reading the demo reports as a reviewer would (issue 13, screenshots of each section).

Each test builds the few typed-result fields a figure or sentence reads
(invented numbers) and checks what the reader is shown.
"""
from types import SimpleNamespace as NS

import numpy as np

from slipfield.slope.report import plot_risk_chart
from slipfield.slope.report.figures.catalogue import _averaging, _comparison
from slipfield.slope.report.figures.section import WATER_STYLES
from slipfield.slope.report.findings import _exclusions
from slipfield.slope.report.style import HYPOTHESIS_COLOURS, METHOD_LINESTYLES


def test_findings_name_only_exclusions_that_could_hide_a_lower_fs():
    # 117 + 206 + 62 trial circles are no slip surface of the case (no driving moment, no sliding mass,
    # shallower than min_depth): leaving them out hides nothing. 22 did not converge: they could.
    geometric = {"no driving moment: the loads balance about the circle centre": 117,
                 "does not cut the ground line twice": 206, "shallower than search.min_depth": 62}
    ms = {m: NS(n_trials=1210, n_counted=1210 - 385, not_counted=dict(geometric)) for m in ("bishop", "spencer")}
    assert _exclusions("drained", ms, None, None) == ""
    for d in ms.values():
        d.not_counted["not converged"] = 22
        d.n_counted -= 22
    text = _exclusions("drained", ms, None, None)
    assert "22 of 1210 by bishop and spencer (not converged: 22)" in text
    assert "407" not in text and "385" not in text


def _pf(p, hi):
    return NS(pf=p, interval=(0.0 if p == 0 else p / 2, hi))


def test_pf_comparison_with_no_failure_is_a_sentence():
    sp = NS(spatial=NS(searched=_pf(0.0, 0.0038)), single=NS(searched=_pf(0.0, 0.0038)),
            quick=NS(estimate=_pf(0.0, 0.0041)))
    (d,) = _comparison(None, NS(spatial={"drained": sp}))
    assert d.figure is None and "No realisation failed" in d.text and "0.0041" in d.text
    sp.spatial.searched = _pf(0.01, 0.02)
    (d,) = _comparison(None, NS(spatial={"drained": sp}))
    assert d.figure is not None


def test_identical_variance_curves_are_drawn_once_with_both_names():
    # Two properties of one zone with the same θh and model along the same surface have the same curve;
    # drawn twice, the second hid the first (and its markers).
    randoms = [{"material": "clay", "property": p, "theta_h": 30.0, "model": "exponential"} for p in ("phi", "c")]
    rows = [{"property": f"clay.{p}", "length_m": 17.0, "gamma": 0.42, "gamma_1d_theta_h": 0.71} for p in ("phi", "c")]
    sp = NS(quick=NS(properties=rows))
    (d,) = _averaging(NS(randoms=randoms), NS(spatial={"drained": sp}))
    ax = d.figure.axes[0]
    curves = [ln for ln in ax.lines if (ln.get_gid() or "").startswith("gamma-curve")]
    assert len(curves) == 1 and curves[0].get_label() == "clay.phi, clay.c (θh = 30 m, exponential)"


def test_risk_points_of_one_consequence_are_side_by_side():
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    scen = [{"label": "undrained", "consequence": 3.0, "annual_probability": 3.8e-3,
             "annual_interval": (3.3e-3, 4.3e-3)},
            {"label": "drained", "consequence": 3.0, "pf": 0.0, "annual_exceedance": 1.0,
             "pf_interval": (0.0, 3.8e-3)}]
    fig = plot_risk_chart(scen)
    FigureCanvasAgg(fig).draw()
    ax = fig.axes[0]
    pts = [next(a for a in ax.lines if a.get_gid() == f"scenario-{k}") for k in range(2)]
    assert [p.get_xdata()[0] for p in pts] == [3.0, 3.0]  # the data stay at the consequence
    xs = [p.get_transform().transform(p.get_xydata())[0, 0] for p in pts]
    assert abs(xs[0] - xs[1]) > 5  # pixels apart on the page: the triangle no longer hides the circle


def test_water_lines_never_look_like_a_critical_surface():
    # A drained Spencer surface (dashed) was drawn in the phreatic line's blue and dash.
    water = {(c, str(d)) for c, d in WATER_STYLES}
    for colour in HYPOTHESIS_COLOURS.values():
        for dash in METHOD_LINESTYLES.values():
            assert (colour, str(dash)) not in water
    assert not set(HYPOTHESIS_COLOURS.values()) & {c for c, _ in WATER_STYLES}
    assert np.unique(list(HYPOTHESIS_COLOURS.values())).size == len(HYPOTHESIS_COLOURS)


def test_no_failure_either_way_is_not_called_an_averaging_result():
    # With no failure in either simulation the old sentence read "Spatial averaging left pf unchanged at 0":
    # nothing was measured. The sentence must say so and give the 95 % upper bounds instead (the bound of
    # 0 failures in n is 1 - 0.025**(1/n), Clopper & Pearson 1934; here invented bounds for 1000 and 300).
    from slipfield.slope.report.findings import _averaging as averaging_sentence
    sp = NS(spatial=NS(searched=_pf(0.0, 0.00368)), single=NS(searched=_pf(0.0, 0.0122)))
    text = averaging_sentence(sp)
    assert "unchanged" not in text and "No realisation failed" in text
    assert "0.00368" in text and "0.0122" in text
    sp.single.searched = _pf(0.02, 0.03)
    assert "No realisation failed" not in averaging_sentence(sp)
