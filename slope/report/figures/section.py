"""The cross-section with everything that acts on stability and the critical surfaces.

Drawn: zones (filled, named in the legend and on the section), the ground,
every water line (phreatic surface and per-zone piezometric lines, each its
own legend entry), surcharges (arrows with their pressure), the seismic
coefficient, the tension crack, where the search looked (circle-centre
lattice or entry/exit windows) and the critical surfaces. Factor-of-safety
labels are legend entries, one line each, set in columns under the axes of a
new figure, so they never overlap however close the surfaces lie.
"""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib.patches import Polygon, Rectangle

from ...errors import InputError
from ..style import PALETTE, report_style, zone_colour
from ._common import _axes, _fs_text, _xy

__all__ = ["plot_section", "WATER_STYLES"]

# Colour of critical surfaces when the caller gives none: vermillion stands
# out against the light zone fills and is not confused with the blue of water.
_SURFACE_COLOURS = (PALETTE["vermillion"], PALETTE["black"], PALETTE["reddish_purple"], PALETTE["blue"])
_WATER = PALETTE["blue"]
#: (colour, dash) of the phreatic surface and of successive piezometric lines.
#: Blues only: the hypotheses' colours (slope.report.style.HYPOTHESIS_COLOURS) are kept for critical surfaces.
WATER_STYLES = ((PALETTE["blue"], "--"), (PALETTE["sky_blue"], (0, (6, 2, 1, 2))),
                (PALETTE["blue"], (0, (2, 2))), (PALETTE["sky_blue"], (0, (8, 3))))


def _draw_water(ax, xy, label, colour, dash):
    ax.plot(xy[:, 0], xy[:, 1], color=colour, linestyle=dash, linewidth=1.3, label=label)
    # The customary inverted triangle sits on the line a quarter of the way along.
    xm = xy[0, 0] + 0.25 * (xy[-1, 0] - xy[0, 0])
    ym = np.interp(xm, xy[:, 0], xy[:, 1]) if np.all(np.diff(xy[:, 0]) > 0) else xy[0, 1]
    ax.plot([xm], [ym], marker="v", color=colour, markersize=7, linestyle="none")


def _label_point(poly: np.ndarray) -> tuple[float, float]:
    """A point well inside a polygon for its name: of a grid of inside points, the farthest from every edge.

    The vertex mean can fall outside a thin or bent zone (a dipping layer under a slope face).
    """
    from matplotlib.path import Path

    x0, y0 = poly.min(axis=0)
    x1, y1 = poly.max(axis=0)
    gx, gy = np.meshgrid(np.linspace(x0, x1, 60), np.linspace(y0, y1, 30))
    pts = np.c_[gx.ravel(), gy.ravel()]
    pts = pts[Path(poly).contains_points(pts)]
    if pts.size == 0:
        return float(poly[:, 0].mean()), float(poly[:, 1].mean())
    a, b = poly, np.roll(poly, -1, axis=0)
    ab = b - a
    t = np.clip(((pts[:, None, :] - a) * ab).sum(-1) / np.maximum((ab * ab).sum(-1), 1e-12), 0.0, 1.0)
    d = np.linalg.norm(pts[:, None, :] - (a + t[..., None] * ab), axis=-1).min(axis=1)
    x, y = pts[int(np.argmax(d))]
    return float(x), float(y)


def _drop_overlapping_names(fig, texts) -> None:
    """Remove zone names that would overlap an earlier one on the drawn figure (the legend names every zone)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = fig.canvas if hasattr(fig.canvas, "get_renderer") else FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    kept = []
    for tx in texts:
        box = tx.get_window_extent(renderer).expanded(1.5, 1.3)  # a clear gap, not just no overlap
        if any(box.overlaps(k) for k in kept):
            tx.remove()
        else:
            kept.append(box)


def _draw_surcharges(ax, ground, surcharges, height):
    for k, s in enumerate(surcharges):
        x1, x2 = float(s["x1"]), float(s["x2"])
        q1, q2 = float(s["q1"]), float(s.get("q2", s["q1"]))
        xs = np.linspace(x1, x2, max(3, int(round((x2 - x1) / max(height, 1e-9))) + 1))
        yg = np.interp(xs, ground[:, 0], ground[:, 1])
        qmax = max(q1, q2, 1e-9)
        for x, y in zip(xs, yg):
            q = q1 + (q2 - q1) * (x - x1) / (x2 - x1)
            ax.annotate("", xy=(x, y), xytext=(x, y + height * (0.4 + 0.6 * q / qmax)),
                        arrowprops=dict(arrowstyle="-|>", color=PALETTE["reddish_purple"], lw=0.9))
        text = f"q = {q1:g} kPa" if q1 == q2 else f"q = {q1:g} → {q2:g} kPa"
        ax.text(0.5 * (x1 + x2), float(yg.max()) + height * 1.05, text, ha="center", va="bottom", fontsize=7.5,
                color=PALETTE["reddish_purple"], gid=f"surcharge-{k}")
        ax.plot([], [], color=PALETTE["reddish_purple"], marker="$\u2193$", linestyle="none",
                label=f"surcharge {k + 1}: {text}")


def _draw_search(ax, search, ground):
    kind = search.get("kind")
    if kind == "centre-lattice" and search.get("x_range") and search.get("y_range"):
        (x0, x1), (y0, y1) = search["x_range"], search["y_range"]
        ax.add_patch(Rectangle((x0, y0), x1 - x0, y1 - y0, fill=False, edgecolor="#777777", linestyle=":",
                               linewidth=1.0, label="circle centres searched", gid="search-lattice"))
    elif kind == "window":
        for name, rng, colour in (("entry", search.get("entry"), PALETTE["orange"]),
                                  ("exit", search.get("exit"), "#888888")):
            if not rng:
                continue
            xs = np.linspace(float(rng[0]), float(rng[1]), 30)
            ax.plot(xs, np.interp(xs, ground[:, 0], ground[:, 1]), color=colour, linewidth=5.0, alpha=0.55,
                    solid_capstyle="butt", label=f"{name} window searched", gid=f"search-{name}")


def plot_section(
    ax=None,
    ground_xy=None,
    zones: Sequence[Mapping] = (),
    water_xy=None,
    surfaces: Sequence[Mapping] = (),
    *,
    units: str = "m",
    title: str | None = None,
    water_lines: Sequence[Mapping] = (),
    surcharges: Sequence[Mapping] = (),
    kh: float | None = None,
    crack: Mapping | None = None,
    search: Mapping | None = None,
    zone_names_on_section: bool = False,
    water_label: str = "water",
):
    """Cross-section with soil zones, water, loads, the search and critical surface(s).

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
        customary inverted-triangle symbol, legend "water".
    surfaces : sequence of dict
        ``{"xy", "fs", "label", "converged", "colour", "linestyle"}``; each surface is drawn and named in the legend with its FS (to 3
        decimals). A surface whose FS did not converge is drawn dotted and
        says so.
    units : str
        Length unit for the axis labels (default ``"m"``).
    title : str, optional
    water_lines : sequence of dict
        Further water lines ``{"xy", "label"}`` (e.g. a piezometric line per
        zone), each with its own style and legend entry.
    surcharges : sequence of dict
        ``{"x1", "x2", "q1", "q2"}`` strips, m and kPa.
    kh : float, optional
        Pseudo-static horizontal seismic coefficient, shown when > 0.
    crack : dict, optional
        ``{"depth", "water_filled"}`` of a tension crack (m).
    search : dict, optional
        ``{"kind", "x_range", "y_range"}`` (centre lattice) or ``{"kind",
        "entry", "exit"}`` (windows), m.
    zone_names_on_section : bool
        Also write each zone's name at its centroid.
    water_label : str
        Legend entry of ``water_xy``.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if ground_xy is None:
        raise InputError("ground_xy: the ground line is required; pass an (n, 2) array of (x, y) in m.")
    ground = _xy(ground_xy, "ground_xy")
    with report_style():
        own = ax is None
        fig, ax = _axes(ax, figsize=(8.0, 5.0))
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
            if zone_names_on_section:
                cx, cy = _label_point(poly)
                ax.text(cx, cy, name, ha="center", va="center", fontsize=7, color="#333333", gid=f"zone-name-{k}")
        ax.plot(ground[:, 0], ground[:, 1], color=PALETTE["black"], linewidth=1.4, label="ground")
        if water_xy is not None:
            _draw_water(ax, _xy(water_xy, "water_xy"), water_label, _WATER, "--")
        for k, w in enumerate(water_lines):
            colour, dash = WATER_STYLES[(k + (water_xy is not None)) % len(WATER_STYLES)]
            _draw_water(ax, _xy(w["xy"], f"water_lines[{k}].xy"), str(w["label"]), colour, dash)
        height = 0.06 * float(np.ptp(ground[:, 0]))
        _draw_surcharges(ax, ground, surcharges, height)
        if search:
            _draw_search(ax, search, ground)
        notes = []
        if kh:
            notes.append(f"seismic coefficient kh = {float(kh):g} (horizontal, pseudo-static)")
        if crack:
            notes.append(f"tension crack {float(crack['depth']):g} m deep at the upslope end of every surface"
                         + (", water-filled" if crack.get("water_filled") else ""))
        for k, surf in enumerate(surfaces):
            if "xy" not in surf:
                raise InputError(f"surfaces[{k}]: missing 'xy' (the slip surface, (n, 2) in m).")
            sxy = _xy(surf["xy"], f"surfaces[{k}].xy")
            fs = surf.get("fs")
            fs = None if fs is None else float(fs)
            converged = bool(surf.get("converged", True))
            name = str(surf.get("label", "critical surface" if len(surfaces) == 1 else f"surface {k + 1}"))
            text = f"{name}: {_fs_text(fs)}" + ("" if converged else " (not converged)")
            colour = surf.get("colour") or _SURFACE_COLOURS[k % len(_SURFACE_COLOURS)]
            style = surf.get("linestyle") or "-"
            ax.plot(sxy[:, 0], sxy[:, 1], color=colour, linewidth=2.0, linestyle=style if converged else ":",
                    label=text)
            if crack:
                x0 = sxy[0, 0] if sxy[0, 1] > sxy[-1, 1] else sxy[-1, 0]
                y0 = float(np.interp(x0, ground[:, 0], ground[:, 1]))
                ax.plot([x0, x0], [y0, y0 - float(crack["depth"])], color=colour, linewidth=2.5)
        ax.set_aspect("equal", adjustable="box")
        ax.autoscale_view()
        top = float(ground[:, 1].max()) + (1.7 * height if surcharges else 0.0)
        if ax.get_ylim()[1] < top:
            ax.set_ylim(top=top)  # room for the surcharge arrows and their text inside the axes
        if notes:
            # Above the plotting area, under the title: inside it the box covered the search region or a surface.
            ax.text(0.0, 1.01, "\n".join(notes), transform=ax.transAxes, ha="left", va="bottom", fontsize=7.5,
                    gid="load-notes")
        ax.set_xlabel(f"x ({units})")
        ax.set_ylabel(f"elevation y ({units})")
        if title:
            ax.set_title(title, pad=6.0 + 11.0 * len(notes))
        if zone_names_on_section:
            _drop_overlapping_names(fig, [tx for tx in ax.texts if (tx.get_gid() or "").startswith("zone-name-")])
        if own:
            # Below the axes, in columns: every entry (and so every FS) has its own line and never
            # overlaps another or the section, however many methods and water lines there are.
            n = len(ax.get_legend_handles_labels()[0])
            # Long handles, so that each method's dash pattern shows in full (ordinary and Janbu differ by a dot).
            fig.legend(*ax.get_legend_handles_labels(), loc="outside lower center", ncols=2 if n <= 8 else 3,
                       handlelength=4.0)
        else:
            ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0)
    return fig
