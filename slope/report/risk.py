"""Risk chart: annual probability of failure against consequence.

The annual probability of failure of a scenario is either given directly or
obtained as

    P_annual = pf × P(loading in a year),

where pf is the conditional probability of failure given the loading (from
the reliability analysis or the simulator) and P(loading in a year) is the
user's annual exceedance probability of that loading (e.g. a flood level).
This product assumes the failure is governed by that one loading event and at
most one such event counts per year — a common simplification; the user owns
the choice.

Tolerability criteria
---------------------
**None are built in.** Limits on societal or individual risk differ between
countries, owners and industries, so the user supplies every line with the
source it comes from; the chart names each source in its footnote. A line
without a source is refused.

Input shapes
------------
scenario dict
    ``{"label": str, "consequence": float > 0,
    "pf": float in [0, 1], "annual_exceedance": float in (0, 1]}`` or
    ``{"label", "consequence", "annual_probability": float in [0, 1]}``
    (``annual_pf`` is accepted as another name for ``annual_probability``,
    as in the case file's ``[risk]`` table);
    optionally ``"pf_interval": (lo, hi)`` (the pf's confidence bounds,
    scaled by the same annual exceedance) or ``"annual_interval": (lo, hi)``;
    optionally ``"colour"``, ``"marker"`` and ``"filled"`` (drawing only).
tolerability line dict
    ``{"label": str, "source": str, "consequence": [..] > 0,
    "annual_probability": [..] in (0, 1]}``, or with ``"points":
    [[consequence, annual probability], ...]`` instead of the two lists (the
    case file's ``[[risk.tolerability]]`` form): a polyline on the chart (e.g.
    the end points of a straight line on log–log axes).
"""
from __future__ import annotations

import textwrap
from collections.abc import Mapping, Sequence

import matplotlib.transforms as mtransforms
import numpy as np
from matplotlib.figure import Figure

from ..errors import InputError
from .style import CYCLE, report_style

__all__ = ["annual_probability", "risk_points", "plot_risk_chart", "tolerability_line", "AXES_SIZE"]

_LINE_STYLES = ("--", "-.", ":", (0, (5, 1, 1, 1)))
_DODGE_PT = 11.0  # side-by-side spacing (points) of scenarios sharing one consequence


def annual_probability(pf, annual_exceedance):
    """Annual probability of failure, pf × annual exceedance probability of the loading.

    Parameters
    ----------
    pf : float or array_like
        Probability of failure given the loading, in [0, 1].
    annual_exceedance : float or array_like
        Annual exceedance probability of the loading, in (0, 1] (1/return
        period in years, for rare events).

    Returns
    -------
    float or ndarray
        Annual probability of failure (per year).
    """
    p = np.asarray(pf, dtype=float)
    a = np.asarray(annual_exceedance, dtype=float)
    if np.any(~np.isfinite(p)) or np.any(p < 0) or np.any(p > 1):
        raise InputError("pf: a probability of failure must lie in [0, 1].")
    if np.any(~np.isfinite(a)) or np.any(a <= 0) or np.any(a > 1):
        raise InputError(
            "annual_exceedance: the annual exceedance probability of the loading must lie in (0, 1]; "
            "for a return period of R years use 1/R."
        )
    out = p * a
    return float(out) if out.ndim == 0 else out


def tolerability_line(label: str, source: str, anchor_consequence: float, anchor_probability: float,
                      slope: float, consequence_range: tuple[float, float]) -> dict:
    """A straight tolerability line on log–log axes, as a line dict for :func:`plot_risk_chart`.

    The line is P(C) = P0 · (C / C0)^slope, the usual form of criteria
    stated as "P0 per year at C0, falling with slope ``slope``" (slope −1
    for risk-neutral lines, steeper for risk-averse ones). The numbers and
    the source are the user's; nothing is assumed here.

    Parameters
    ----------
    label : str
        Legend label.
    source : str
        Citation of the criterion (required, non-empty).
    anchor_consequence, anchor_probability : float
        A point (C0 > 0, P0 in (0, 1]) on the line.
    slope : float
        Slope of log P against log C.
    consequence_range : (float, float)
        Consequences (> 0) where the line starts and ends.

    Returns
    -------
    dict
        ``{"label", "source", "consequence", "annual_probability"}``.
    """
    if not isinstance(source, str) or not source.strip():
        raise InputError(f"tolerability line {label!r}: 'source' is required; cite where the criterion comes from.")
    c0, p0, b = float(anchor_consequence), float(anchor_probability), float(slope)
    c = np.asarray(consequence_range, dtype=float).ravel()
    if c.size != 2 or np.any(~np.isfinite(c)) or np.any(c <= 0) or c[0] >= c[1]:
        raise InputError(f"tolerability line {label!r}: consequence_range must be two increasing numbers > 0.")
    if not (np.isfinite(c0) and c0 > 0 and 0 < p0 <= 1 and np.isfinite(b)):
        raise InputError(f"tolerability line {label!r}: the anchor needs C0 > 0 and P0 in (0, 1], and a finite slope.")
    p = np.minimum(p0 * (c / c0) ** b, 1.0)
    return {"label": str(label), "source": source.strip(), "consequence": c.tolist(), "annual_probability": p.tolist()}


def _prob_pair(pair, name):
    try:
        lo, hi = (float(v) for v in pair)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected two numbers (lower, upper).") from None
    if not (0 <= lo <= hi <= 1):
        raise InputError(f"{name}: bounds must satisfy 0 <= lower <= upper <= 1, got ({lo}, {hi}).")
    return lo, hi


def risk_points(scenarios: Sequence[Mapping]) -> list[dict]:
    """Normalise scenarios to ``{label, consequence, annual_probability, annual_interval, pf, annual_exceedance}``.

    Parameters
    ----------
    scenarios : sequence of dict
        See the module docstring.

    Returns
    -------
    list of dict
        One dict per scenario with ``annual_probability`` (per year) and
        ``annual_interval`` (``(lo, hi)`` per year or ``None``) filled in,
        for tables and ``results.json``.
    """
    out = []
    for k, sc in enumerate(scenarios):
        where = f"risk scenario {k + 1}" + (f" ({sc['label']!r})" if "label" in sc else "")
        try:
            cons = float(sc["consequence"])
        except KeyError:
            raise InputError(f"{where}: missing 'consequence' (lives or cost, > 0).") from None
        if not np.isfinite(cons) or cons <= 0:
            raise InputError(f"{where}: 'consequence' must be a finite number > 0 to sit on a log axis.")
        if "annual_pf" in sc and "annual_probability" not in sc:
            # The case file's name for a directly given annual probability.
            sc = {**sc, "annual_probability": sc["annual_pf"]}
        direct = "annual_probability" in sc
        derived = "pf" in sc or "annual_exceedance" in sc
        if direct == derived:
            raise InputError(
                f"{where}: give either 'annual_probability' or both 'pf' and 'annual_exceedance', not "
                + ("both." if direct else "neither.")
            )
        interval = None
        if direct:
            p = float(sc["annual_probability"])
            if not (0 <= p <= 1):
                raise InputError(f"{where}: 'annual_probability' must lie in [0, 1].")
            if sc.get("annual_interval") is not None:
                interval = _prob_pair(sc["annual_interval"], f"{where}: 'annual_interval'")
            pf = aep = None
        else:
            if "pf" not in sc or "annual_exceedance" not in sc:
                raise InputError(f"{where}: 'pf' needs 'annual_exceedance' of its loading (and vice versa).")
            pf, aep = float(sc["pf"]), float(sc["annual_exceedance"])
            try:
                p = annual_probability(pf, aep)
            except InputError as exc:
                raise InputError(f"{where}: {exc}") from None
            if sc.get("pf_interval") is not None:
                lo, hi = _prob_pair(sc["pf_interval"], f"{where}: 'pf_interval'")
                interval = (lo * aep, hi * aep)
        if interval is not None and not (interval[0] - 1e-15 <= p <= interval[1] + 1e-15):
            raise InputError(f"{where}: the interval {interval} does not contain the annual probability {p:.3g}.")
        out.append({"label": str(sc.get("label", f"scenario {k + 1}")), "consequence": cons,
                    "annual_probability": p, "annual_interval": interval, "pf": pf, "annual_exceedance": aep,
                    "colour": sc.get("colour"), "marker": sc.get("marker", "o"),
                    "filled": bool(sc.get("filled", True))})
    return out


def _lines(lines: Sequence[Mapping]) -> list[dict]:
    out = []
    for k, ln in enumerate(lines):
        where = f"tolerability line {k + 1}" + (f" ({ln['label']!r})" if "label" in ln else "")
        src = ln.get("source")
        if not isinstance(src, str) or not src.strip():
            raise InputError(f"{where}: 'source' is required — cite the publication or standard the line comes "
                             "from; slipfield builds in no tolerability criteria.")
        if "points" in ln:
            pts = np.asarray(ln["points"], dtype=float)
            if pts.ndim != 2 or pts.shape[1] != 2:
                raise InputError(f"{where}: 'points' must be a list of [consequence, annual probability] pairs.")
            c, p = pts[:, 0], pts[:, 1]
        elif "consequence" in ln and "annual_probability" in ln:
            c = np.asarray(ln["consequence"], dtype=float).ravel()
            p = np.asarray(ln["annual_probability"], dtype=float).ravel()
        else:
            raise InputError(f"{where}: give 'points' ([consequence, annual probability] pairs) or the "
                             "'consequence' and 'annual_probability' lists of the line's points.")
        if c.size < 2 or c.size != p.size:
            raise InputError(f"{where}: need at least 2 points and as many consequences as probabilities.")
        if np.any(~np.isfinite(c)) or np.any(c <= 0) or np.any(~np.isfinite(p)) or np.any(p <= 0) or np.any(p > 1):
            raise InputError(f"{where}: consequences must be > 0 and probabilities in (0, 1] for log axes.")
        out.append({"label": str(ln.get("label", f"line {k + 1}")), "source": src.strip(), "consequence": c,
                    "annual_probability": p})
    return out


def plot_risk_chart(
    scenarios: Sequence[Mapping],
    lines: Sequence[Mapping] = (),
    *,
    consequence_label: str = "potential loss of life (lives)",
    ax=None,
    title: str | None = None,
):
    """Risk chart on log–log axes: annual probability of failure against consequence.

    Parameters
    ----------
    scenarios : sequence of dict
        Points to show (see the module docstring). A scenario whose annual
        probability is 0 (no failures observed) cannot sit on a log axis: it
        is drawn at the upper end of its interval as a downward triangle
        ("below this"), or, without an interval, listed in the footnote as
        not drawable. Nothing is dropped silently.
    lines : sequence of dict
        User-supplied tolerability lines, each with its ``source``; numbered
        in the legend and cited in the footnote.
    consequence_label : str
        x-axis label, with its unit (lives, or a currency).
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    pts = risk_points(scenarios)
    if not pts:
        raise InputError("scenarios: give at least one scenario (consequence and annual probability) to chart.")
    lns = _lines(lines)
    notes = []
    own = ax is None
    with report_style():
        fig, ax = _axes(ax)
        for k, ln in enumerate(lns):
            ax.plot(ln["consequence"], ln["annual_probability"], color="#555555",
                    linestyle=_LINE_STYLES[k % len(_LINE_STYLES)], linewidth=1.2,
                    label=f"[{k + 1}] {ln['label']}", gid=f"tolerability-{k}")
            notes.append(f"[{k + 1}] {ln['label']}: {ln['source']}")
        same = [sum(q["consequence"] == pt["consequence"] for q in pts[:k]) for k, pt in enumerate(pts)]
        n_same = [sum(q["consequence"] == pt["consequence"] for q in pts) for pt in pts]
        for k, pt in enumerate(pts):
            colour = pt["colour"] or CYCLE[k % len(CYCLE)]
            p, iv = pt["annual_probability"], pt["annual_interval"]
            # Points of one consequence are set side by side on the page (a few points apart), so that none
            # hides another; their data stay at the consequence itself.
            shift = mtransforms.ScaledTranslation((same[k] - (n_same[k] - 1) / 2) * _DODGE_PT / 72.0, 0.0,
                                                  fig.dpi_scale_trans)
            if p > 0:
                yerr = None if iv is None or iv[0] <= 0 else [[p - iv[0]], [iv[1] - p]]
                eb = ax.errorbar([pt["consequence"]], [p], yerr=yerr, color=colour, marker=pt["marker"], markersize=7,
                                 capsize=3, linestyle="none", label=f"{pt['label']}: {p:.2g} /yr",
                                 markerfacecolor=colour if pt["filled"] else "white")
                eb.lines[0].set_gid(f"scenario-{k}")
                for art in (eb.lines[0], *eb.lines[1], *eb.lines[2]):
                    art.set_transform(ax.transData + shift)
            elif iv is not None and iv[1] > 0:
                (tri,) = ax.plot([pt["consequence"]], [iv[1]], color=colour, marker="v", markersize=8,
                                 linestyle="none", label=f"{pt['label']}: < {iv[1]:.2g} /yr (no failures)",
                                 gid=f"scenario-{k}")
                tri.set_transform(ax.transData + shift)  # after plotting, so the axes' limits still include it
            else:
                notes.append(f"{pt['label']}: annual probability 0 without an upper bound, not drawable on log axes.")
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlabel(consequence_label)
        ax.set_ylabel("annual probability of failure (per year)")
        ax.grid(True, which="both", linewidth=0.4)
        if not lns:
            notes.append("No tolerability criteria are built in; supply lines with their sources in the case file.")
        if title:
            ax.set_title(title)
        if own:
            _legend_below(fig, ax, notes)
        else:
            if ax.get_legend_handles_labels()[0]:
                ax.legend(loc="upper left", bbox_to_anchor=(0.0, -0.18), borderaxespad=0.0)
            fig.text(0.01, 0.0, "\n".join(notes), ha="left", va="top", fontsize=7, wrap=True, gid="risk-footnote")
    return fig


#: Size of the risk chart's plotting area and its margins (inches): fixed, so that a long legend adds height
#: below the axes instead of squeezing them.
AXES_SIZE = (5.4, 3.2)
_MARGINS = {"left": 1.0, "right": 0.3, "top": 0.25, "title": 0.3, "below": 0.62, "gap": 0.12}


def _legend_below(fig, ax, notes):
    """Legend, then the footnote, under the axes; the figure grows to hold them, the axes keep :data:`AXES_SIZE`."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    m = _MARGINS
    width = m["left"] + AXES_SIZE[0] + m["right"]
    handles, labels = ax.get_legend_handles_labels()
    leg = fig.legend(handles, labels, loc="upper left", ncols=1, borderaxespad=0.0, frameon=False) if handles else None
    foot = fig.text(0.0, 0.0, "\n".join(textwrap.fill(n, 130) for n in notes), ha="left", va="top", fontsize=7,
                    gid="risk-footnote")
    renderer = FigureCanvasAgg(fig).get_renderer()
    leg_h = leg.get_window_extent(renderer).height / fig.dpi if leg is not None else 0.0
    foot_h = foot.get_window_extent(renderer).height / fig.dpi
    top = m["top"] + (m["title"] if ax.get_title() else 0.0)
    height = top + AXES_SIZE[1] + m["below"] + leg_h + m["gap"] + foot_h + m["gap"]
    fig.set_size_inches(width, height)
    ax.set_position([m["left"] / width, 1.0 - (top + AXES_SIZE[1]) / height, AXES_SIZE[0] / width,
                     AXES_SIZE[1] / height])
    y_leg = height - top - AXES_SIZE[1] - m["below"]  # inches from the bottom edge
    if leg is not None:
        leg.set_bbox_to_anchor((m["left"] / width, y_leg / height), transform=fig.transFigure)
    foot.set_position((m["left"] / width, (y_leg - leg_h - m["gap"]) / height))


def _axes(ax):
    if ax is None:
        # Placed by hand (_legend_below), not by the constrained layout, which would shrink the axes.
        fig = Figure(figsize=(7.0, 4.2))
        return fig, fig.add_subplot()
    return ax.figure, ax
