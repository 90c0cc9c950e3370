"""Random fields of a property: one realisation, or a few on one colour scale."""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from ...errors import InputError
from ..style import FIELD_CMAP, PALETTE, new_figure, report_style
from ._common import _axes, _edges, _fs_text, _vector, _xy

__all__ = ['plot_field_realisation', 'plot_realisations']


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
    surface_colour: str = PALETTE["vermillion"],
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
    surface_colour : str
        Colour of the critical surfaces (the report passes its hypothesis' colour).

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
                ax.plot(sxy[:, 0], sxy[:, 1], color=surface_colour, linewidth=1.8, gid=f"surface-{k}")
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
