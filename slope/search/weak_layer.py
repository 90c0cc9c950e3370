"""``weak-layer``: block surfaces whose base runs along the bottom of a weak zone,
with an active wedge upslope (at 45° + φ/2 to the horizontal) and a passive
wedge downslope (45° − φ/2)."""
from __future__ import annotations


import numpy as np

from ..errors import InputError
from ..surfaces import Polyline
from .evaluate import SearchResult, evaluate_surfaces

def _zone_bottom(section, zone_index, x):
    """Lowest boundary of zone ``zone_index`` crossing the verticals x (NaN where absent)."""
    ye = section._edge_y(x)
    mine = section._e_sign_zone[:, zone_index] != 0
    ye = np.where(mine, ye, np.nan)
    with np.errstate(all="ignore"):
        return np.nanmin(ye, axis=-1) if np.any(np.isfinite(ye)) else np.full(np.shape(x), np.nan)


def block_surfaces(section, zone, x_from, x_to, n_positions=12, n_lengths=12, min_length=None,
                   phi_wedge=None, lift=0.25):
    """Block surfaces along the bottom of a weak zone.

    Parameters
    ----------
    zone : str
        Name of the weak zone.
    x_from, x_to : float, m
        Range along which the block's base may lie.
    n_positions, n_lengths : int
        Downslope-end positions × base lengths.
    min_length : float, m
        Shortest base (default a tenth of the range).
    phi_wedge : float, degrees
        Friction angle setting the wedge inclinations (45° ± φ/2); default the
        φ' of the material above the weak zone's top at mid-range, else 30°.
    lift : float
        Height of the base above the zone's bottom as a fraction of the zone's
        thickness there, so base midpoints lie inside the weak zone.

    Returns
    -------
    list of Polyline
    """
    names = section.zone_names
    if zone not in names:
        raise InputError(f"weak-layer search: zone '{zone}' is not in the section; use one of {names}")
    k = names.index(zone)
    if not x_to > x_from:
        raise InputError(f"weak-layer search: x_to ({x_to}) must exceed x_from ({x_from})")
    if phi_wedge is None:
        phi_wedge = 30.0
        for z in section.zones:
            if z.name != zone:
                phi_wedge = float(section.materials[z.material].phi) or 30.0
                break
    grid = np.linspace(x_from, x_to, 401)
    bottom = _zone_bottom(section, k, grid)
    top = _top_of_zone(section, k, grid)
    base = bottom + lift * (top - bottom)
    if np.any(~np.isfinite(base)):
        raise InputError(f"weak-layer search: zone '{zone}' does not span x = {x_from:g} to {x_to:g} m; "
                         "give a range where the zone exists")
    # direction of motion from the ground line over the range
    d = 1 if section.ground_y(x_from) > section.ground_y(x_to) else -1
    ta = 1.0 / np.tan(np.radians(45.0 + phi_wedge / 2))  # run per unit rise, active wedge
    tp = 1.0 / np.tan(np.radians(45.0 - phi_wedge / 2))  # passive wedge
    L = x_to - x_from
    min_length = 0.1 * L if min_length is None else float(min_length)
    out = []
    for a in np.linspace(x_from, x_to - min_length, int(n_positions)):
        for length in np.linspace(min_length, x_to - a, int(n_lengths)):
            b = a + length
            sel = (grid >= a) & (grid <= b)
            bx = np.r_[a, grid[sel], b]
            by = np.interp(bx, grid, base)
            bx, ui = np.unique(bx, return_index=True)
            by = by[ui]
            # keep only the vertices where the base bends (and its ends)
            if len(bx) > 2:
                s_ = np.diff(by) / np.diff(bx)
                bend = np.r_[True, np.abs(np.diff(s_)) > 1e-9, True]
                bx, by = bx[bend], by[bend]
            # wedges: rise to the ground; upslope (active) on the side the mass comes from
            left_run, right_run = (ta, tp) if d > 0 else (tp, ta)
            hl = max(section.ground_y(a) - by[0], 0.0)
            hr = max(section.ground_y(b) - by[-1], 0.0)
            xl = max(a - left_run * (hl + 1.0), section.x_min)
            xr = min(b + right_run * (hr + 1.0), section.x_max)
            yl = by[0] + (a - xl) / left_run if left_run > 0 else by[0] + hl + 1
            yr = by[-1] + (xr - b) / right_run if right_run > 0 else by[-1] + hr + 1
            pts = np.r_[[[xl, yl]], np.c_[bx, by], [[xr, yr]]]
            if np.all(np.diff(pts[:, 0]) > 0):
                out.append(Polyline(pts))
    return out


def _top_of_zone(section, zone_index, x):
    ye = section._edge_y(x)
    mine = section._e_sign_zone[:, zone_index] != 0
    ye = np.where(mine, ye, np.nan)
    with np.errstate(all="ignore"):
        return np.nanmax(ye, axis=-1)


def weak_layer(section, *, zone, x_from, x_to, n_positions=12, n_lengths=12, min_length=None,
               phi_wedge=None, method="spencer", **evaluate_opts) -> SearchResult:
    """``weak-layer`` search: block surfaces along a weak zone.

    See :func:`block_surfaces` and :func:`evaluate_surfaces`.
    """
    blocks = block_surfaces(section, zone, x_from, x_to, n_positions, n_lengths, min_length, phi_wedge)
    if not blocks:
        raise InputError("weak-layer search: no block surface could be built; widen x_from/x_to")
    return evaluate_surfaces(section, blocks, search="weak-layer", method=method, **evaluate_opts)


# ---------------------------------------------------------------- registry
