"""Figures of a slipfield analysis, drawn from plain arrays, lists and dicts.

Every function takes an optional ``ax`` (a matplotlib Axes to draw into); when
it is ``None`` a new figure is made in slipfield's style (see
:mod:`slope.report.style`). Every function returns the
:class:`matplotlib.figure.Figure` it drew on, ready for
:func:`slope.report.html.save_figure` or for embedding in the HTML report.

Input shapes
------------
``xy`` arrays
    ``(n, 2)`` arrays of ``(x, y)`` points in m, x to the right, y up.
zone dict
    ``{"name": str, "polygon_xy": (n, 2), "material": str (optional)}``.
surface dict
    ``{"xy": (n, 2), "fs": float, "label": str (optional),
    "converged": bool (optional, default True)}``.
Field arrays
    ``values[i, j]`` at cell ``(x_i, y_j)``, the ``fields.RegularGrid``
    convention; ``grid_x`` / ``grid_y`` are either cell centres (length
    ``nx`` / ``ny``) or cell edges (length ``nx + 1`` / ``ny + 1``). NaN
    marks cells outside the soil.

Nothing here computes a probability of failure that is reported elsewhere:
the simulator owns pf and its confidence interval; the figures show what
they are given and, where they must compute (empirical CDF, fitted
densities), they use the formulas stated in each docstring.
"""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib.patches import Polygon
from matplotlib.ticker import FuncFormatter, NullFormatter, NullLocator
from scipy import stats

from ..errors import InputError
from .style import CYCLE, DENSITY_CMAP, FIELD_CMAP, PALETTE, new_figure, report_style, zone_colour

__all__ = [
    "plot_section",
    "plot_field_realisation",
    "fit_fs_distributions",
    "plot_fs_distribution",
    "plot_pf_convergence",
    "plot_tornado",
    "plot_pf_comparison",
    "plot_pf_vs_theta",
    "plot_fs_vs_theta",
    "plot_variance_reduction",
    "plot_failure_map",
    "plot_failure_geometry",
    "plot_realisations",
]

# Colour of critical surfaces: vermillion stands out against the light zone
# fills and is not confused with the blue of water.
_SURFACE_COLOURS = (PALETTE["vermillion"], PALETTE["black"], PALETTE["reddish_purple"], PALETTE["blue"])
_WATER = PALETTE["blue"]


# --------------------------------------------------------------------------- helpers
def _xy(a, name: str, min_points: int = 2) -> np.ndarray:
    arr = np.asarray(a, dtype=float)
    if arr.ndim != 2 or arr.shape[1] != 2 or arr.shape[0] < min_points:
        raise InputError(
            f"{name}: expected an (n, 2) array of (x, y) points in m with n >= {min_points}, "
            f"got shape {arr.shape}; pass a list of [x, y] pairs."
        )
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}: contains NaN or infinite coordinates; give finite x, y in m.")
    return arr


def _vector(a, name: str, min_len: int = 1) -> np.ndarray:
    arr = np.asarray(a, dtype=float)
    if arr.ndim != 1 or arr.size < min_len:
        raise InputError(f"{name}: expected a 1-D array of at least {min_len} numbers, got shape {arr.shape}.")
    return arr


def _axes(ax, figsize=None):
    if ax is None:
        fig, ax = new_figure(figsize=figsize)
        return fig, ax
    return ax.figure, ax


def _edges(coords: np.ndarray, n: int, name: str) -> np.ndarray:
    """Cell edges from centres (length n) or edges (length n + 1)."""
    if coords.size == n + 1:
        return coords
    if coords.size == n:
        if n == 1:
            raise InputError(f"{name}: a single cell centre cannot define the cell size; pass the 2 cell edges instead.")
        mid = 0.5 * (coords[1:] + coords[:-1])
        return np.concatenate([[2 * coords[0] - mid[0]], mid, [2 * coords[-1] - mid[-1]]])
    raise InputError(
        f"{name}: length {coords.size} fits neither the {n} cell centres nor the {n + 1} cell edges "
        "of the values array (values[i, j] at x_i, y_j)."
    )


def _fs_text(fs) -> str:
    return "FS = n/a" if fs is None or not np.isfinite(fs) else f"FS = {fs:.3f}"


# --------------------------------------------------------------------------- section
def plot_section(
    ax=None,
    ground_xy=None,
    zones: Sequence[Mapping] = (),
    water_xy=None,
    surfaces: Sequence[Mapping] = (),
    *,
    units: str = "m",
    title: str | None = None,
):
    """Cross-section with soil zones, water and critical surface(s).

    Parameters
    ----------
    ax : matplotlib Axes, optional
        Axes to draw into; a new figure when ``None``.
    ground_xy : (n, 2) array_like
        Ground line, m.
    zones : sequence of dict
        ``{"name", "polygon_xy", "material"}``; each polygon is filled with a
        light palette colour and named in the legend.
    water_xy : (n, 2) array_like, optional
        Phreatic (or piezometric) line, m; drawn dashed blue with the
        customary inverted-triangle symbol.
    surfaces : sequence of dict
        ``{"xy", "fs", "label", "converged"}``; each surface is drawn and
        labelled with its FS (to 3 decimals). A surface whose FS did not
        converge is drawn dotted and says so.
    units : str
        Length unit for the axis labels (default ``"m"``).
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    if ground_xy is None:
        raise InputError("ground_xy: the ground line is required; pass an (n, 2) array of (x, y) in m.")
    ground = _xy(ground_xy, "ground_xy")
    with report_style():
        fig, ax = _axes(ax, figsize=(7.0, 4.0))
        for k, zone in enumerate(zones):
            if "polygon_xy" not in zone:
                raise InputError(f"zones[{k}]: missing 'polygon_xy' (the zone outline, (n, 2) in m).")
            poly = _xy(zone["polygon_xy"], f"zones[{k}].polygon_xy", min_points=3)
            name = str(zone.get("name", f"zone {k + 1}"))
            material = zone.get("material")
            label = name if not material or material == name else f"{name} ({material})"
            ax.add_patch(
                Polygon(poly, closed=True, facecolor=zone_colour(k), edgecolor="#555555", linewidth=0.6, label=label)
            )
        ax.plot(ground[:, 0], ground[:, 1], color=PALETTE["black"], linewidth=1.4, label="ground")
        if water_xy is not None:
            water = _xy(water_xy, "water_xy")
            ax.plot(water[:, 0], water[:, 1], color=_WATER, linestyle="--", linewidth=1.2, label="water")
            # The inverted triangle sits on the water line a quarter of the way along.
            xm = water[0, 0] + 0.25 * (water[-1, 0] - water[0, 0])
            ym = np.interp(xm, water[:, 0], water[:, 1]) if np.all(np.diff(water[:, 0]) > 0) else water[0, 1]
            ax.plot([xm], [ym], marker="v", color=_WATER, markersize=7, linestyle="none")
        for k, surf in enumerate(surfaces):
            if "xy" not in surf:
                raise InputError(f"surfaces[{k}]: missing 'xy' (the slip surface, (n, 2) in m).")
            sxy = _xy(surf["xy"], f"surfaces[{k}].xy")
            fs = surf.get("fs")
            fs = None if fs is None else float(fs)
            converged = bool(surf.get("converged", True))
            name = str(surf.get("label", "critical surface" if len(surfaces) == 1 else f"surface {k + 1}"))
            text = f"{name}: {_fs_text(fs)}" + ("" if converged else " (not converged)")
            colour = _SURFACE_COLOURS[k % len(_SURFACE_COLOURS)]
            ax.plot(sxy[:, 0], sxy[:, 1], color=colour, linewidth=2.0, linestyle="-" if converged else ":", label=text)
            # Label at the deepest point, where it is least likely to overlap the ground line.
            i = int(np.argmin(sxy[:, 1]))
            ax.annotate(
                _fs_text(fs), xy=(sxy[i, 0], sxy[i, 1]), xytext=(0, -12), textcoords="offset points",
                ha="center", va="top", fontsize=8, color=colour,
            )
        ax.set_aspect("equal", adjustable="box")
        ax.autoscale_view()
        ax.set_xlabel(f"x ({units})")
        ax.set_ylabel(f"elevation y ({units})")
        if title:
            ax.set_title(title)
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0)
    return fig


# --------------------------------------------------------------------------- one realisation
def plot_field_realisation(
    ax=None,
    grid_x=None,
    grid_y=None,
    values=None,
    surface_xy=None,
    fs: float | None = None,
    label: str = "property",
    *,
    units: str = "kPa",
    ground_xy=None,
    title: str | None = None,
):
    """One realisation of a random field with that realisation's critical surface.

    Parameters
    ----------
    ax : matplotlib Axes, optional
    grid_x, grid_y : 1-D array_like
        Cell centres (length ``nx``, ``ny``) or cell edges (``nx + 1``,
        ``ny + 1``), m.
    values : (nx, ny) array_like
        Property values, ``values[i, j]`` at ``(x_i, y_j)``; NaN outside the
        soil (left blank).
    surface_xy : (n, 2) array_like, optional
        Critical surface of this realisation, m.
    fs : float, optional
        Its factor of safety, shown in the legend.
    label : str
        Name of the property (e.g. ``"su"``), used on the colour bar.
    units : str
        Units of the property (default kPa), on the colour bar.
    ground_xy : (n, 2) array_like, optional
        Ground line drawn over the field.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    if values is None or grid_x is None or grid_y is None:
        raise InputError("plot_field_realisation: grid_x, grid_y and values are required (values[i, j] at x_i, y_j).")
    vals = np.asarray(values, dtype=float)
    if vals.ndim != 2:
        raise InputError(f"values: expected a 2-D (nx, ny) array, got shape {vals.shape}; pass one realisation.")
    if not np.any(np.isfinite(vals)):
        raise InputError("values: every cell is NaN; pass a realisation with values inside the soil.")
    xe = _edges(_vector(grid_x, "grid_x"), vals.shape[0], "grid_x")
    ye = _edges(_vector(grid_y, "grid_y"), vals.shape[1], "grid_y")
    with report_style():
        fig, ax = _axes(ax, figsize=(7.0, 3.6))
        mesh = ax.pcolormesh(xe, ye, np.ma.masked_invalid(vals).T, cmap=FIELD_CMAP, shading="flat",
                             rasterized=True)  # one image in SVG, not a path per cell
        # Sections are wide and shallow: a horizontal bar below keeps the field large.
        cbar = fig.colorbar(mesh, ax=ax, location="bottom", shrink=0.6, aspect=40)
        cbar.set_label(f"{label} ({units})")
        if ground_xy is not None:
            g = _xy(ground_xy, "ground_xy")
            ax.plot(g[:, 0], g[:, 1], color=PALETTE["black"], linewidth=1.2, label="ground")
        if surface_xy is not None:
            s = _xy(surface_xy, "surface_xy")
            ax.plot(s[:, 0], s[:, 1], color=PALETTE["vermillion"], linewidth=2.0,
                    label=f"critical surface, {_fs_text(None if fs is None else float(fs))}")
        if ax.get_legend_handles_labels()[0]:
            # Above the axes, so the legend never hides part of the field.
            ax.legend(loc="lower right", bbox_to_anchor=(1.0, 1.01), ncols=2, borderaxespad=0.0)
        ax.set_aspect("equal", adjustable="box")
        ax.set_xlabel("x (m)")
        ax.set_ylabel("elevation y (m)")
        ax.grid(False)
        if title:
            ax.set_title(title)
    return fig


def plot_realisations(
    grid_x,
    grid_y,
    realisations: Sequence[Mapping],
    label: str = "property",
    *,
    units: str = "kPa",
    ground_xy=None,
    ncols: int = 2,
    title: str | None = None,
):
    """A handful of realisations, each with its own critical surface, on one colour scale.

    A shared colour scale lets the eye compare realisations: a weak zone
    looks equally dark in every panel.

    Parameters
    ----------
    grid_x, grid_y : 1-D array_like
        Cell centres or edges, m (as :func:`plot_field_realisation`).
    realisations : sequence of dict
        ``{"values": (nx, ny), "surface_xy": (n, 2) (optional), "fs": float
        (optional), "label": str (optional, e.g. "realisation 17")}``.
    label, units : str
        Property name and unit for the shared colour bar.
    ground_xy : (n, 2) array_like, optional
        Ground line drawn in each panel.
    ncols : int
        Panels per row.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    if not realisations:
        raise InputError("realisations: give at least one {'values', 'surface_xy', 'fs'} dict.")
    if int(ncols) < 1:
        raise InputError("ncols: panels per row must be >= 1.")
    vals = []
    for k, r in enumerate(realisations):
        if "values" not in r:
            raise InputError(f"realisations[{k}]: missing 'values' (an (nx, ny) array of the property).")
        v = np.asarray(r["values"], dtype=float)
        if v.ndim != 2 or (vals and v.shape != vals[0].shape):
            raise InputError(f"realisations[{k}].values: expected a 2-D array like the others, got shape {v.shape}.")
        vals.append(v)
    finite = np.concatenate([v[np.isfinite(v)] for v in vals])
    if finite.size == 0:
        raise InputError("realisations: every value is NaN; pass realisations with values inside the soil.")
    vmin, vmax = float(finite.min()), float(finite.max())
    xe = _edges(_vector(grid_x, "grid_x"), vals[0].shape[0], "grid_x")
    ye = _edges(_vector(grid_y, "grid_y"), vals[0].shape[1], "grid_y")
    g = None if ground_xy is None else _xy(ground_xy, "ground_xy")
    n = len(vals)
    ncols = min(int(ncols), n)
    nrows = -(-n // ncols)
    with report_style():
        fig, axs = new_figure(nrows, ncols, figsize=(4.2 * ncols, 2.4 * nrows + 0.8), squeeze=False,
                              sharex=True, sharey=True)
        mesh = None
        for k, ax in enumerate(axs.flat):
            if k >= n:
                ax.set_visible(False)
                continue
            r = realisations[k]
            mesh = ax.pcolormesh(xe, ye, np.ma.masked_invalid(vals[k]).T, cmap=FIELD_CMAP, shading="flat",
                                 vmin=vmin, vmax=vmax, rasterized=True)
            if g is not None:
                ax.plot(g[:, 0], g[:, 1], color=PALETTE["black"], linewidth=1.0)
            head = str(r.get("label", f"realisation {k + 1}"))
            if r.get("surface_xy") is not None:
                sxy = _xy(r["surface_xy"], f"realisations[{k}].surface_xy")
                ax.plot(sxy[:, 0], sxy[:, 1], color=PALETTE["vermillion"], linewidth=1.8, gid=f"surface-{k}")
            if r.get("fs") is not None:
                head += f", {_fs_text(float(r['fs']))}"
            ax.set_title(head, fontsize=8.5)
            ax.set_aspect("equal", adjustable="box")
            ax.grid(False)
        for ax in axs[-1, :]:
            ax.set_xlabel("x (m)")
        for ax in axs[:, 0]:
            ax.set_ylabel("y (m)")
        cbar = fig.colorbar(mesh, ax=axs, location="bottom", shrink=0.5, aspect=40)
        cbar.set_label(f"{label} ({units})")
        if title:
            fig.suptitle(title)
    return fig


# --------------------------------------------------------------------------- FS distribution
def fit_fs_distributions(fs_samples) -> dict:
    """Maximum-likelihood normal and lognormal fits to factors of safety.

    Normal: ``scipy.stats.norm.fit`` (mean and the ddof=0 standard
    deviation). Lognormal: ``scipy.stats.lognorm.fit`` with the location
    fixed at zero (two-parameter lognormal), i.e. ``s`` = standard deviation
    of ln FS (ddof=0) and ``scale`` = exp(mean of ln FS). The lognormal fit is
    skipped (``None``) when any FS is not positive.

    Parameters
    ----------
    fs_samples : 1-D array_like
        Finite factors of safety (dimensionless).

    Returns
    -------
    dict
        ``{"normal": {"mean", "std", "pf"}, "lognormal": {"s", "scale",
        "median", "pf"} or None, "n"}`` where each ``pf`` is the fitted
        distribution's P(FS < 1).
    """
    fs = _vector(fs_samples, "fs_samples", min_len=2)
    if not np.all(np.isfinite(fs)):
        raise InputError("fs_samples: contains NaN/inf; pass only converged, admissible FS and count the rest separately.")
    mu, sd = stats.norm.fit(fs)
    out = {"n": int(fs.size), "normal": {"mean": float(mu), "std": float(sd), "pf": float(stats.norm.cdf(1.0, mu, sd)) if sd > 0 else float(mu < 1.0)}}
    if np.all(fs > 0):
        s, _, scale = stats.lognorm.fit(fs, floc=0.0)
        out["lognormal"] = {"s": float(s), "scale": float(scale), "median": float(scale),
                            "pf": float(stats.lognorm.cdf(1.0, s, 0.0, scale)) if s > 0 else float(scale < 1.0)}
    else:
        out["lognormal"] = None
    return out


def plot_fs_distribution(
    fs_samples,
    *,
    n_excluded: int = 0,
    pf: float | None = None,
    pf_interval: tuple[float, float] | None = None,
    bins: int | str = "auto",
    axes=None,
    title: str | None = None,
):
    """Histogram of FS with fitted normal and lognormal densities, and the empirical CDF.

    Left panel: density histogram with the two maximum-likelihood fits of
    :func:`fit_fs_distributions`. Right panel: empirical CDF
    F(x) = #{FS <= x}/n as a step line, FS = 1 marked, and pf annotated.

    Parameters
    ----------
    fs_samples : 1-D array_like
        Converged, admissible factors of safety.
    n_excluded : int
        Realisations left out of ``fs_samples`` because they did not converge
        or were inadmissible; stated on the figure so they are not lost.
    pf : float, optional
        Probability of failure to annotate (the simulator's estimate). When
        ``None``, the empirical fraction with FS < 1 of ``fs_samples``.
    pf_interval : (float, float), optional
        Confidence interval of ``pf``, annotated when given.
    bins : int or str
        Passed to :func:`numpy.histogram_bin_edges`.
    axes : pair of Axes, optional
        Two axes to draw into; a new 1×2 figure when ``None``.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    fs = _vector(fs_samples, "fs_samples", min_len=2)
    if int(n_excluded) < 0:
        raise InputError("n_excluded: must be a count >= 0 of realisations left out.")
    fits = fit_fs_distributions(fs)
    if pf is None:
        pf = float(np.mean(fs < 1.0))
    with report_style():
        if axes is None:
            fig, (ax_h, ax_c) = new_figure(1, 2, figsize=(8.0, 3.4))
        else:
            ax_h, ax_c = axes
            fig = ax_h.figure
        edges = np.histogram_bin_edges(fs, bins=bins)
        ax_h.hist(fs, bins=edges, density=True, color=PALETTE["sky_blue"], edgecolor="white", linewidth=0.5,
                  label=f"simulated (n = {fs.size})")
        pad = 0.05 * np.ptp(edges)
        x_lo = edges[0] - pad
        if fits["lognormal"] is not None:
            x_lo = max(x_lo, 1e-9)  # the lognormal density lives on FS > 0
        x = np.linspace(x_lo, edges[-1] + pad, 400)
        nrm = fits["normal"]
        # A constant FS (e.g. no random input) has no density to draw.
        if nrm["std"] > 1e-9 * abs(nrm["mean"]):
            ax_h.plot(x, stats.norm.pdf(x, nrm["mean"], nrm["std"]), color=PALETTE["blue"],
                      label=f"normal fit (μ = {nrm['mean']:.3f}, σ = {nrm['std']:.3f})", gid="fit-normal")
        if fits["lognormal"] is not None and fits["lognormal"]["s"] > 1e-9:
            ln = fits["lognormal"]
            ax_h.plot(x, stats.lognorm.pdf(x, ln["s"], 0.0, ln["scale"]), color=PALETTE["vermillion"], linestyle="--",
                      label=f"lognormal fit (median = {ln['median']:.3f}, σ_ln = {ln['s']:.3f})", gid="fit-lognormal")
        ax_h.axvline(1.0, color=PALETTE["black"], linewidth=1.0, linestyle=":", label="FS = 1")
        ax_h.set_xlabel("factor of safety FS")
        ax_h.set_ylabel("probability density")
        # Below the panel: the fits' parameters are long and would cover the histogram.
        ax_h.legend(loc="upper left", bbox_to_anchor=(0.0, -0.2), borderaxespad=0.0)

        srt = np.sort(fs)
        ecdf = np.arange(1, srt.size + 1) / srt.size
        ax_c.step(srt, ecdf, where="post", color=PALETTE["blue"], label="empirical CDF", gid="ecdf")
        ax_c.axvline(1.0, color=PALETTE["black"], linewidth=1.0, linestyle=":", label="FS = 1")
        # pf is read off the CDF at FS = 1: a short leader from the axis to that point.
        ax_c.plot([min(srt[0], 1.0), 1.0], [pf, pf], color=PALETTE["vermillion"], linewidth=0.8, linestyle="--",
                  gid="pf-leader")
        text = f"pf = P(FS < 1) = {pf:.3g}"
        if pf_interval is not None:
            lo_pf, hi_pf = (float(v) for v in pf_interval)
            text += f"\nconfidence interval [{lo_pf:.3g}, {hi_pf:.3g}]"
        text += f"\nn = {fs.size}"
        if n_excluded:
            text += f"\n{int(n_excluded)} not converged/inadmissible, excluded"
        # The lower right of a CDF plot is empty (the curve is high there), above the pf leader.
        ax_c.text(0.98, min(pf + 0.06, 0.6), text, transform=ax_c.transAxes, ha="right", va="bottom", fontsize=8,
                  gid="pf-note")
        ax_c.set_ylim(0.0, 1.0)
        ax_c.set_xlabel("factor of safety FS")
        ax_c.set_ylabel("P(FS ≤ x)")
        ax_c.legend(loc="upper left")
        if title:
            fig.suptitle(title)
    return fig


# --------------------------------------------------------------------------- convergence
def plot_pf_convergence(n, pf, lo, hi, *, level: float = 0.95, ax=None, title: str | None = None):
    """Running estimate of pf with its confidence band against the number of realisations.

    Parameters
    ----------
    n : 1-D array_like of int
        Number of realisations at each checkpoint (increasing, >= 1).
    pf, lo, hi : 1-D array_like
        Estimate and lower/upper confidence bounds at each checkpoint, all in
        [0, 1] with lo <= pf <= hi.
    level : float
        Confidence level of the band, for the legend (default 0.95).
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    n = _vector(n, "n")
    pf = _vector(pf, "pf")
    lo = _vector(lo, "lo")
    hi = _vector(hi, "hi")
    if not (n.size == pf.size == lo.size == hi.size):
        raise InputError(f"plot_pf_convergence: n, pf, lo, hi must have one value per checkpoint; got lengths "
                         f"{n.size}, {pf.size}, {lo.size}, {hi.size}.")
    if np.any(n < 1) or np.any(np.diff(n) <= 0):
        raise InputError("n: numbers of realisations must be >= 1 and strictly increasing.")
    for name, arr in (("pf", pf), ("lo", lo), ("hi", hi)):
        if np.any(~np.isfinite(arr)) or np.any(arr < 0) or np.any(arr > 1):
            raise InputError(f"{name}: probabilities must be finite and within [0, 1].")
    if np.any(lo > pf + 1e-12) or np.any(hi < pf - 1e-12):
        raise InputError("lo, hi: each band must contain its estimate (lo <= pf <= hi).")
    with report_style():
        fig, ax = _axes(ax)
        ax.fill_between(n, lo, hi, color=PALETTE["sky_blue"], alpha=0.35, linewidth=0,
                        label=f"{100 * level:g} % confidence band")
        ax.plot(n, pf, color=PALETTE["blue"], label="pf estimate")
        ax.set_xscale("log")
        # Plain numbers of realisations (100, 1000), not powers of ten with minor labels.
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:,.0f}" if v >= 1 else f"{v:g}"))
        ax.xaxis.set_minor_formatter(NullFormatter())
        ax.set_xlabel("number of realisations")
        ax.set_ylabel("probability of failure pf")
        ax.set_ylim(bottom=0.0)
        ax.legend(loc="upper right")
        if title:
            ax.set_title(title)
    return fig


def plot_pf_comparison(labels: Sequence[str], pf, lo=None, hi=None, *, log_pf: bool = False, ax=None,
                       title: str | None = None):
    """Several estimates of pf side by side, each with its confidence interval.

    For the averaging report (given θ, single random variable, analytic
    variance-reduction estimate) or system versus fixed-surface pf.

    Parameters
    ----------
    labels : sequence of str
        One label per estimate (top to bottom).
    pf : 1-D array_like
        Probabilities of failure, in [0, 1].
    lo, hi : 1-D array_like, optional
        Confidence bounds; NaN where an estimate has none (e.g. a closed form).
    log_pf : bool
        Logarithmic pf axis; estimates of 0 are then listed in a note.
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    labels = [str(s) for s in labels]
    pf = _vector(pf, "pf")
    if len(labels) != pf.size:
        raise InputError(f"labels: {len(labels)} labels for {pf.size} values of pf; give one label per estimate.")
    if (lo is None) != (hi is None):
        raise InputError("lo, hi: give both confidence bounds or neither.")
    lo = np.full(pf.size, np.nan) if lo is None else _vector(lo, "lo")
    hi = np.full(pf.size, np.nan) if hi is None else _vector(hi, "hi")
    if lo.size != pf.size or hi.size != pf.size:
        raise InputError("lo, hi: one bound per estimate (NaN where there is none).")
    if np.any(~np.isfinite(pf)) or np.any(pf < 0) or np.any(pf > 1):
        raise InputError("pf: probabilities must be finite and within [0, 1].")
    has = np.isfinite(lo) & np.isfinite(hi)
    if np.any(lo[has] > pf[has] + 1e-12) or np.any(hi[has] < pf[has] - 1e-12):
        raise InputError("lo, hi: each interval must contain its estimate (lo <= pf <= hi).")
    with report_style():
        fig, ax = _axes(ax, figsize=(6.4, 0.5 * len(labels) + 1.3))
        ypos = np.arange(pf.size)[::-1]
        drawable = pf > 0 if log_pf else np.ones(pf.size, bool)
        xerr = np.vstack([np.where(has, pf - lo, 0.0), np.where(has, hi - pf, 0.0)])
        if log_pf:
            # Keep the lower whisker on the positive axis.
            xerr[0] = np.where(has & (lo > 0), xerr[0], 0.0)
        eb = ax.errorbar(pf[drawable], ypos[drawable], xerr=xerr[:, drawable], color=PALETTE["blue"], marker="o",
                         linestyle="none", capsize=3)
        eb.lines[0].set_gid("estimates")
        for y, p in zip(ypos, pf):
            ax.annotate(f"{p:.3g}", xy=(p, y), xytext=(0, 6), textcoords="offset points", ha="center", fontsize=7)
        ax.set_yticks(ypos, labels)
        ax.set_ylim(-0.7, pf.size - 0.3)
        ax.set_xlabel("probability of failure pf (bars: confidence interval)")
        ax.grid(axis="y", visible=False)
        if log_pf:
            ax.set_xscale("log")
            if (~drawable).any():
                ax.text(0.0, 1.01, "pf = 0 not drawn on log axis: " + ", ".join(np.array(labels)[~drawable]),
                        transform=ax.transAxes, fontsize=7, gid="zero-note")
        else:
            ax.set_xlim(left=0.0)
        if title:
            ax.set_title(title)
    return fig


# --------------------------------------------------------------------------- tornado
def plot_tornado(names, low_fs, high_fs, base_fs: float, k: float = 1.0, *, clipped: Sequence[str] = (), ax=None,
                 title: str | None = None):
    """Tornado chart: FS with each input at its low and its high value in turn.

    Bars are sorted with the largest swing |high − low| at the top.

    Parameters
    ----------
    names : sequence of str
        Input variables.
    low_fs, high_fs : 1-D array_like
        FS with the variable at mean − k·σ and mean + k·σ (others at their means).
    base_fs : float
        FS with every variable at its mean.
    k : float
        Number of standard deviations used, for the legend.
    clipped : sequence of str
        Variables whose mean ± k·σ left their support and were clipped to
        it; marked with an asterisk and explained under the chart.
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    names = [str(s) for s in names]
    unknown = set(map(str, clipped)) - set(names)
    if unknown:
        raise InputError(f"clipped: {sorted(unknown)} are not among the tornado's variables {names}.")
    low = _vector(low_fs, "low_fs")
    high = _vector(high_fs, "high_fs")
    if not (len(names) == low.size == high.size):
        raise InputError(f"plot_tornado: names, low_fs and high_fs need one entry per variable; got {len(names)}, "
                         f"{low.size}, {high.size}.")
    base_fs = float(base_fs)
    if not (np.all(np.isfinite(low)) and np.all(np.isfinite(high)) and np.isfinite(base_fs)):
        raise InputError("plot_tornado: FS values must be finite; report non-converged evaluations separately.")
    order = np.argsort(-np.abs(high - low), kind="stable")
    with report_style():
        fig, ax = _axes(ax, figsize=(6.4, 0.45 * len(names) + 1.4))
        ypos = np.arange(len(names))[::-1]  # largest swing on top
        ax.barh(ypos, low[order] - base_fs, left=base_fs, color=PALETTE["vermillion"], height=0.6,
                label=f"variable at mean − {k:g}σ")
        ax.barh(ypos, high[order] - base_fs, left=base_fs, color=PALETTE["blue"], height=0.6,
                label=f"variable at mean + {k:g}σ")
        ax.axvline(base_fs, color=PALETTE["black"], linewidth=1.0, label=f"all at mean, FS = {base_fs:.3f}")
        marked = set(map(str, clipped))
        ax.set_yticks(ypos, [names[i] + (" *" if names[i] in marked else "") for i in order])
        xlabel = "factor of safety FS"
        if marked:
            xlabel += f"\n* mean ± {k:g}σ clipped to the variable's support"
        ax.set_xlabel(xlabel)
        ax.grid(axis="y", visible=False)
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0)
        if title:
            ax.set_title(title)
    return fig


# --------------------------------------------------------------------------- theta sweep
def _theta_series(theta_values, y, lo, hi, labels, name):
    """Validate sweep inputs: θ vector, (n_series, n_theta) values and bounds, labels."""
    theta = _vector(theta_values, "theta_values")
    if np.any(np.isnan(theta)) or np.any(theta <= 0):
        raise InputError("theta_values: scales of fluctuation must be > 0 (use inf for a single random variable).")
    y = np.atleast_2d(np.asarray(y, dtype=float))
    if y.ndim != 2 or y.shape[1] != theta.size:
        raise InputError(f"{name}: expected {theta.size} values per series (one per θ), got shape {y.shape}.")
    if (lo is None) != (hi is None):
        raise InputError("lo, hi: give both confidence bounds or neither.")
    if lo is not None:
        lo = np.broadcast_to(np.atleast_2d(np.asarray(lo, dtype=float)), y.shape)
        hi = np.broadcast_to(np.atleast_2d(np.asarray(hi, dtype=float)), y.shape)
        if np.any(lo > y + 1e-12) or np.any(hi < y - 1e-12):
            raise InputError(f"lo, hi: each interval must contain its value of {name} (lo <= value <= hi).")
    if labels is None:
        labels = [None] if y.shape[0] == 1 else [f"series {i + 1}" for i in range(y.shape[0])]
    labels = list(labels)
    if len(labels) != y.shape[0]:
        raise InputError(f"labels: expected {y.shape[0]} labels (one per series), got {len(labels)}.")
    return theta, y, lo, hi, labels


def _draw_theta_sweep(ax, theta, y, lo, hi, labels, *, ylabel, theta_name, log_y, from_zero, gid):
    """Draw series against θ with θ = ∞ as a separate marker past the right edge."""
    fin = np.isfinite(theta)
    if fin.any():
        tmax, tmin = theta[fin].max(), theta[fin].min()
        span = np.log10(tmax / tmin) if tmax > tmin else 1.0
        x_inf = tmax * 10 ** max(0.25 * span, 0.3)
    else:
        x_inf = 1.0
    zero_note = []
    for s in range(y.shape[0]):
        colour = CYCLE[s % len(CYCLE)]
        v = y[s]
        yerr = None if lo is None else np.vstack([v - lo[s], hi[s] - v])
        if fin.any():
            eb = ax.errorbar(theta[fin], v[fin], yerr=None if yerr is None else yerr[:, fin], color=colour,
                             marker="o", markersize=4, capsize=2, label=labels[s])
            eb.lines[0].set_gid(f"{gid}-{s}")
        if (~fin).any():
            eb = ax.errorbar(np.full((~fin).sum(), x_inf), v[~fin], yerr=None if yerr is None else yerr[:, ~fin],
                             color=colour, marker="s", markerfacecolor="white", markersize=6, capsize=2,
                             linestyle="none", label=None if fin.any() else labels[s])
            eb.lines[0].set_gid(f"{gid}-{s}-inf")
        if log_y and np.any(v <= 0):
            zero_note.append(labels[s] or ylabel)
    if (~fin).any() and fin.any():
        ax.axvline(np.sqrt(theta[fin].max() * x_inf), color="#999999", linestyle=":", linewidth=0.8)
    ax.set_xscale("log")
    if log_y:
        ax.set_yscale("log")
    elif from_zero:
        ax.set_ylim(bottom=0.0)
    # Ticks at the swept values themselves: a sweep has few, chosen θ.
    ticks = list(np.unique(theta[fin]))
    tick_labels = [f"{t:g}" for t in ticks]
    if (~fin).any():
        ticks.append(x_inf)
        tick_labels.append("∞\n(single random\nvariable)")
    ax.xaxis.set_minor_locator(NullLocator())
    ax.set_xticks(ticks, tick_labels)
    lo_x = theta[fin].min() / 1.5 if fin.any() else x_inf / 3
    ax.set_xlim(lo_x, (x_inf if (~fin).any() else theta[fin].max()) * 1.5)
    ax.set_xlabel(f"scale of fluctuation {theta_name} (m)")
    ax.set_ylabel(ylabel)
    if zero_note:
        ax.text(0.02, 0.02, "values of 0 not drawn on log axis: " + ", ".join(zero_note), transform=ax.transAxes,
                fontsize=7, ha="left", va="bottom", gid=f"{gid}-zero-note")
    if any(lbl for lbl in labels):
        ax.legend(loc="best")


def plot_pf_vs_theta(
    theta_values,
    pf,
    lo=None,
    hi=None,
    labels: Sequence[str] | None = None,
    *,
    theta_name: str = "θh",
    log_pf: bool = False,
    ax=None,
    title: str | None = None,
):
    """pf against the scale of fluctuation from a θ sweep.

    Finite θ go on a logarithmic x axis. θ = ∞ (each property as a single
    random variable) cannot sit on that axis: it is drawn as a separate,
    unconnected marker at the right edge, past a dotted separator, with the
    tick labelled "∞".

    Parameters
    ----------
    theta_values : 1-D array_like
        Scales of fluctuation, m (> 0; ``inf`` allowed).
    pf : array_like, shape (n_theta,) or (n_series, n_theta)
        Probability of failure per θ (one row per series, e.g. per θv).
    lo, hi : array_like, same shape as ``pf``, optional
        Confidence bounds, drawn as error bars.
    labels : sequence of str, optional
        One legend label per series.
    theta_name : str
        Name on the x axis (e.g. ``"θh"``).
    log_pf : bool
        Logarithmic pf axis (values of 0 are then not drawable and are
        listed in a note on the figure).
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    theta, pf, lo, hi, labels = _theta_series(theta_values, pf, lo, hi, labels, "pf")
    for name, arr in (("pf", pf), ("lo", lo), ("hi", hi)):
        if arr is not None and (np.any(~np.isfinite(arr)) or np.any(arr < 0) or np.any(arr > 1)):
            raise InputError(f"{name}: probabilities must be finite and within [0, 1].")
    with report_style():
        fig, ax = _axes(ax)
        _draw_theta_sweep(ax, theta, pf, lo, hi, labels, ylabel="probability of failure pf", theta_name=theta_name,
                          log_y=log_pf, from_zero=True, gid="series")
        if title:
            ax.set_title(title)
    return fig


def plot_fs_vs_theta(
    theta_values,
    mean_fs,
    std_fs,
    labels: Sequence[str] | None = None,
    *,
    theta_name: str = "θh",
    axes=None,
    title: str | None = None,
):
    """Mean and standard deviation of FS against the scale of fluctuation (θ sweep).

    Same x axis as :func:`plot_pf_vs_theta` (log θ, θ = ∞ as a separate
    marker at the right edge).

    Parameters
    ----------
    theta_values : 1-D array_like
        Scales of fluctuation, m (> 0; ``inf`` allowed).
    mean_fs, std_fs : array_like, shape (n_theta,) or (n_series, n_theta)
        Sample mean and standard deviation of the (minimum) FS per θ.
    labels : sequence of str, optional
        One legend label per series.
    theta_name : str
        Name on the x axes.
    axes : pair of Axes, optional
        Two axes to draw into; a new 1×2 figure when ``None``.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    theta, mean, _, _, labels = _theta_series(theta_values, mean_fs, None, None, labels, "mean_fs")
    _, std, _, _, _ = _theta_series(theta_values, std_fs, None, None, labels, "std_fs")
    if std.shape != mean.shape:
        raise InputError(f"std_fs: shape {std.shape} differs from mean_fs {mean.shape}; give one σ per mean.")
    if np.any(~np.isfinite(mean)) or np.any(~np.isfinite(std)) or np.any(std < 0):
        raise InputError("mean_fs, std_fs: must be finite, with std_fs >= 0.")
    with report_style():
        if axes is None:
            fig, (ax_m, ax_s) = new_figure(1, 2, figsize=(8.4, 3.4))
        else:
            ax_m, ax_s = axes
            fig = ax_m.figure
        _draw_theta_sweep(ax_m, theta, mean, None, None, labels, ylabel="mean FS", theta_name=theta_name,
                          log_y=False, from_zero=False, gid="mean")
        _draw_theta_sweep(ax_s, theta, std, None, None, labels, ylabel="standard deviation of FS",
                          theta_name=theta_name, log_y=False, from_zero=True, gid="std")
        if title:
            fig.suptitle(title)
    return fig


# --------------------------------------------------------------------------- variance function
def plot_variance_reduction(T_over_theta, gamma_by_model: Mapping[str, object], *, ax=None, title: str | None = None):
    """Variance function γ(T) of each correlation model against T/θ.

    γ(T) is the ratio Var[local average over length T] / point variance
    (Vanmarcke 1983). The dotted line θ/T is its common large-T asymptote,
    drawn for reference.

    Parameters
    ----------
    T_over_theta : 1-D array_like
        Averaging length over scale of fluctuation (> 0).
    gamma_by_model : mapping of str to 1-D array_like
        γ values per model name, each the length of ``T_over_theta``, in [0, 1].
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    t = _vector(T_over_theta, "T_over_theta", min_len=2)
    if np.any(t <= 0) or not np.all(np.isfinite(t)):
        raise InputError("T_over_theta: averaging lengths over θ must be finite and > 0.")
    if not gamma_by_model:
        raise InputError("gamma_by_model: give at least one model name with its γ values.")
    with report_style():
        fig, ax = _axes(ax)
        for k, (name, g) in enumerate(gamma_by_model.items()):
            g = _vector(g, f"gamma_by_model[{name!r}]")
            if g.size != t.size:
                raise InputError(f"gamma_by_model[{name!r}]: {g.size} values for {t.size} values of T/θ.")
            if np.any(g < -1e-12) or np.any(g > 1 + 1e-12):
                raise InputError(f"gamma_by_model[{name!r}]: variance reduction factors must lie in [0, 1].")
            ax.plot(t, g, color=CYCLE[k % len(CYCLE)], label=str(name), gid=f"gamma-{k}")
        big = t >= 1.0
        if big.any():
            ax.plot(t[big], 1.0 / t[big], color="#777777", linestyle=":", linewidth=1.0, label="θ/T (asymptote)",
                    gid="asymptote")
        ax.set_xscale("log")
        ax.set_ylim(0.0, 1.05)
        ax.set_xlabel("averaging length / scale of fluctuation, T/θ")
        ax.set_ylabel("variance function γ(T)")
        ax.legend(loc="lower left")
        if title:
            ax.set_title(title)
    return fig


def plot_failure_geometry(area, depth, *, bins: int | str = "auto", axes=None, title: str | None = None):
    """Distributions of the sliding-mass area and of the surface depth over failed realisations.

    Parameters
    ----------
    area : 1-D array_like
        Cross-sectional area of each failed sliding mass, m² (per metre run).
    depth : 1-D array_like
        Maximum depth of each failed surface below the ground, m.
    bins : int or str
        Passed to :func:`numpy.histogram_bin_edges`.
    axes : pair of Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    area = _vector(area, "area")
    depth = _vector(depth, "depth")
    for name, arr in (("area", area), ("depth", depth)):
        if np.any(~np.isfinite(arr)) or np.any(arr < 0):
            raise InputError(f"{name}: must be finite and >= 0 (one value per failed realisation).")
    with report_style():
        if axes is None:
            fig, (ax_a, ax_d) = new_figure(1, 2, figsize=(8.0, 3.0))
        else:
            ax_a, ax_d = axes
            fig = ax_a.figure
        for ax, arr, xl, colour in ((ax_a, area, "sliding-mass area (m² per m run)", PALETTE["orange"]),
                                    (ax_d, depth, "maximum depth of the surface (m)", PALETTE["bluish_green"])):
            ax.hist(arr, bins=np.histogram_bin_edges(arr, bins=bins), color=colour, edgecolor="white", linewidth=0.5)
            ax.axvline(np.median(arr), color=PALETTE["black"], linestyle="--", linewidth=1.0,
                       label=f"median {np.median(arr):.3g}")
            ax.set_xlabel(xl)
            ax.set_ylabel("failed realisations")
            ax.legend(loc="upper right")
        ax_a.text(0.0, 1.02, f"n = {area.size} failed realisations", transform=ax_a.transAxes, fontsize=8,
                  gid="n-note")
        if title:
            fig.suptitle(title)
    return fig


# --------------------------------------------------------------------------- failure map
def plot_failure_map(
    x_edges,
    y_edges,
    density,
    ground_xy,
    *,
    n_failed: int | None = None,
    n_total: int | None = None,
    surfaces: Sequence = (),
    ax=None,
    title: str | None = None,
):
    """Density of the critical surfaces of failed realisations over the section.

    Parameters
    ----------
    x_edges, y_edges : 1-D array_like
        Cell edges of the map, m (lengths ``nx + 1``, ``ny + 1``).
    density : (nx, ny) array_like
        Fraction (or count) of failed realisations whose critical surface
        crosses each cell, ``density[i, j]`` for cell ``i`` in x, ``j`` in y;
        cells of 0 are left blank, NaN marks cells outside the soil.
    ground_xy : (n, 2) array_like
        Ground line, m.
    n_failed, n_total : int, optional
        Counts for the annotation (failed realisations out of all).
    surfaces : sequence of (n, 2) arrays, optional
        A few failed surfaces drawn thinly on top.
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    d = np.asarray(density, dtype=float)
    if d.ndim != 2:
        raise InputError(f"density: expected a 2-D (nx, ny) array, got shape {d.shape}.")
    xe = _edges(_vector(x_edges, "x_edges", 2), d.shape[0], "x_edges")
    ye = _edges(_vector(y_edges, "y_edges", 2), d.shape[1], "y_edges")
    if np.any(d[np.isfinite(d)] < 0):
        raise InputError("density: values must be >= 0 (fractions or counts of failed surfaces).")
    g = _xy(ground_xy, "ground_xy")
    with report_style():
        fig, ax = _axes(ax, figsize=(7.0, 3.6))
        shown = np.ma.masked_where(~np.isfinite(d) | (d <= 0), d)
        mesh = ax.pcolormesh(xe, ye, shown.T, cmap=DENSITY_CMAP, shading="flat", rasterized=True)
        if shown.count() == 0:
            # No failure: an autoscaled empty bar would read -0.1 .. 0.1; a share lies in [0, 1].
            mesh.set_clim(0.0, 1.0)
        cbar = fig.colorbar(mesh, ax=ax, location="bottom", shrink=0.6, aspect=40)
        cbar.set_label("share of failed realisations crossing the cell")
        ax.plot(g[:, 0], g[:, 1], color=PALETTE["black"], linewidth=1.2, label="ground")
        for k, s in enumerate(surfaces):
            s = _xy(s, f"surfaces[{k}]")
            ax.plot(s[:, 0], s[:, 1], color=PALETTE["vermillion"], linewidth=0.7, alpha=0.8,
                    label="failed surfaces (examples)" if k == 0 else None)
        if n_failed is not None:
            note = f"{int(n_failed)} failed realisations" + (f" of {int(n_total)}" if n_total is not None else "")
            ax.text(0.0, 1.01, note, transform=ax.transAxes, ha="left", va="bottom", fontsize=8, gid="failed-note")
        ax.set_aspect("equal", adjustable="box")
        ax.set_xlabel("x (m)")
        ax.set_ylabel("elevation y (m)")
        ax.grid(False)
        ax.legend(loc="lower right", bbox_to_anchor=(1.0, 1.01), ncols=2, borderaxespad=0.0)
        if title:
            ax.set_title(title, pad=18)
    return fig
