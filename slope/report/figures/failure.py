"""Where and how the slope fails: failure map and geometry of the failed sliding masses."""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from ...errors import InputError
from ..style import DENSITY_CMAP, PALETTE, new_figure, report_style
from ._common import _axes, _edges, _vector, _xy

__all__ = ['plot_failure_geometry', 'plot_failure_map']


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
#: line styles of failed surfaces by kind: the bank's in the colour of "failed surfaces" above, the
#: per-realisation search's dashed in another colour of the palette (told apart in grey print too)
_GROUP_STYLE = {"bank": dict(color=PALETTE["vermillion"], linewidth=0.7, alpha=0.8, linestyle="-"),
                "search": dict(color=PALETTE["reddish_purple"], linewidth=1.1, alpha=1.0, linestyle="--")}


def plot_failure_map(
    x_edges,
    y_edges,
    density,
    ground_xy,
    *,
    n_failed: int | None = None,
    n_total: int | None = None,
    surfaces: Sequence = (),
    groups: Sequence = (),
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
    groups : sequence of (kind, label, surfaces), optional
        Failed surfaces drawn thinly on top by kind, each kind in its own
        colour and line style with ``label`` in the legend: ``"bank"``
        (surfaces of the bank, solid vermillion like ``surfaces``) and
        ``"search"`` (polylines the per-realisation search found, dashed
        reddish purple); e.g. the groups of
        :func:`slope.simulate.failure_geometry.failure_map`.
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
        for kind, label, drawn in groups:
            if kind not in _GROUP_STYLE:
                raise InputError(f"groups: kind {kind!r}; use one of {', '.join(_GROUP_STYLE)}")
            for k, s in enumerate(drawn):
                s = _xy(s, f"groups[{kind}][{k}]")
                ax.plot(s[:, 0], s[:, 1], **_GROUP_STYLE[kind], label=label if k == 0 else None)
        if n_failed is not None:
            note = f"{int(n_failed)} failed realisations" + (f" of {int(n_total)}" if n_total is not None else "")
            ax.text(0.0, 1.01, note, transform=ax.transAxes, ha="left", va="bottom", fontsize=8, gid="failed-note")
        ax.set_aspect("equal", adjustable="box")
        ax.set_xlabel("x (m)")
        ax.set_ylabel("elevation y (m)")
        ax.grid(False)
        # with groups the labels are long: one column at the right, clear of the count note at the left
        ax.legend(loc="lower right", bbox_to_anchor=(1.0, 1.01), ncols=1 if len(groups) else 2, borderaxespad=0.0)
        if title:
            ax.set_title(title, pad=18)
    return fig
