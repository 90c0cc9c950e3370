"""Sliding-block surfaces along a weak zone or layer: active wedge, block, passive wedge.

The classical three-part sliding-block mechanism (a block sliding on a weak
stratum, pushed by an active wedge upslope and resisted by a passive wedge
downslope; e.g. the wedge method of U.S. Army Corps of Engineers EM
1110-2-1902, 2003, and the block analyses of Terzaghi & Peck) is written
here as slip surfaces the methods of slices evaluate like any other:

- the **active wedge** leaves the ground at an *entry* point on the side the
  mass comes from and descends at Rankine's (1857) active angle
  45° + φ/2 to the horizontal;
- the **base** follows the weak zone (at ``lift`` of its thickness above
  its bottom, so base midpoints lie in it);
- the **passive wedge** rises from the base at 45° − φ/2 to an *exit*
  point on the ground.

Entry and exit points sweep the two ground ranges given (``entry``,
``exit``); φ of each wedge is that of the material it crosses (zero for an
undrained material under the undrained hypothesis, so both wedges at 45°).

Units: m, degrees.
"""
from __future__ import annotations

import warnings

import numpy as np

from ..errors import InputError
from ..surfaces import Polyline

__all__ = ["BLOCK_FAMILY", "block_base", "block_polylines", "block_search"]

BLOCK_FAMILY = "block"
_BASE_SAMPLES = 801


def _zone_edges(section, k, x):
    """Lowest and highest boundary of zone k on the verticals x (NaN where the zone is absent)."""
    ye = section._edge_y(x)
    mine = section._e_sign_zone[:, k] != 0
    ye = np.where(mine, ye, np.nan)
    with warnings.catch_warnings():  # verticals that miss the zone give NaN, as documented
        warnings.simplefilter("ignore", RuntimeWarning)
        return np.nanmin(ye, axis=-1), np.nanmax(ye, axis=-1)


def block_base(section, zone, lift=0.25, key="search.block.zone"):
    """The sliding base along a zone: abscissae and elevations (section frame, m).

    Parameters
    ----------
    zone : str
        Name of a zone or layer of the section.
    lift : float
        Height of the base above the zone's bottom, as a fraction of the
        zone's thickness (0 ≤ lift < 1).

    Returns
    -------
    x, y : ndarray, m
        NaN where the zone is absent.
    """
    names = section.zone_names
    if zone not in names:
        raise InputError(f"{key}: zone {zone!r} is not in the section; use one of {', '.join(names)}")
    if not 0.0 <= float(lift) < 1.0:
        raise InputError(f"search.block.lift: {lift!r}; give a fraction of the zone's thickness, 0 <= lift < 1")
    k = names.index(zone)
    x = np.linspace(section.x_min, section.x_max, _BASE_SAMPLES)
    bot, top = _zone_edges(section, k, x)
    return x, bot + float(lift) * (top - bot)


def _wedge_phi(section, hypothesis, x, y):
    """Friction angle (degrees) of the material at (x, y) under the hypothesis."""
    z = int(section.zone_at(np.atleast_1d(float(x)), np.atleast_1d(float(y)))[0])
    if z < 0:
        return 0.0
    mat = section.materials[section.zones[z].material]
    if hypothesis == "undrained" and mat.has_undrained:
        return 0.0
    return float(mat.phi)


def _first_crossing(xs, f):
    """First x where f changes sign from > 0 to <= 0 (linear interpolation); NaN if none."""
    s = f > 0
    idx = np.flatnonzero(s[:-1] & ~s[1:] & np.isfinite(f[:-1]) & np.isfinite(f[1:]))
    if not idx.size:
        return np.nan
    i = idx[0]
    return xs[i] + (xs[i + 1] - xs[i]) * f[i] / (f[i] - f[i + 1])


def block_polylines(section, zone, entry, exit, points=10, lift=0.25, hypothesis="drained", key="search.block"):
    """Block surfaces along ``zone`` whose wedges meet the ground in ``entry`` and ``exit``.

    Parameters
    ----------
    section : Section
    zone : str
        Zone or layer whose base the block slides on.
    entry, exit : (float, float), m
        Ground ranges (x from, x to) where the active wedge enters and the
        passive wedge leaves; the mass moves from ``entry`` toward ``exit``.
    points : int
        Points in each range (``points²`` trial blocks), >= 2.
    lift : float
        See :func:`block_base`.
    hypothesis : {"drained", "undrained"}
        Sets the wedges' φ.
    key : str
        Case key named in error messages.

    Returns
    -------
    list of Polyline
        One per entry × exit pair whose wedges reach the base with the block
        between them, each tagged with the ``block`` family.

    Raises
    ------
    InputError
        A zone not in the section, ranges outside the ground line, fewer
        than 2 points, or no block whose wedges reach the zone.
    """
    if isinstance(points, bool) or int(points) != points or int(points) < 2:
        raise InputError(f"{key}.points: {points!r}; give a whole number >= 2 (points in each range)")
    for name, r in (("entry", entry), ("exit", exit)):
        if len(r) != 2 or not r[0] < r[1] or r[1] <= section.x_min or r[0] >= section.x_max:
            raise InputError(f"{key}.{name}: {list(r)!r} does not intersect the ground line "
                             f"(x = {section.x_min:g} to {section.x_max:g} m); give [x_from, x_to] on it")
    bx, by = block_base(section, zone, lift, key=f"{key}.zone")
    if not np.any(np.isfinite(by)):
        raise InputError(f"{key}.zone: zone {zone!r} has no base inside the section")
    clip = lambda r: (max(r[0], section.x_min), min(r[1], section.x_max))  # noqa: E731
    xe = np.linspace(*clip(entry), int(points))
    xx = np.linspace(*clip(exit), int(points))
    d = 1 if np.mean(xx) > np.mean(xe) else -1  # the mass moves from entry toward exit
    # sliding frame: x' = d x, increasing in the direction of motion
    xs = d * bx
    order = np.argsort(xs)
    xs, ys = xs[order], by[order]
    out = []
    for e in xe:
        ge = float(section.ground_y(e))
        phi_a = _wedge_phi(section, hypothesis, e, ge - 0.1)
        ta = np.tan(np.radians(45.0 + 0.5 * phi_a))
        # active wedge: y = ge - ta (x' - e'), meets the base where it drops below it
        fa = ge - ta * (xs - d * e) - ys
        fa = np.where(xs >= d * e, fa, np.inf)
        xa = _first_crossing(xs, fa)
        if not np.isfinite(xa):
            continue
        for x_ in xx:
            gx = float(section.ground_y(x_))
            phi_p = _wedge_phi(section, hypothesis, x_, gx - 0.1)
            tp = np.tan(np.radians(45.0 - 0.5 * phi_p))
            fp = gx - tp * (d * x_ - xs) - ys
            fp = np.where(xs <= d * x_, fp, np.inf)
            xp = _first_crossing(xs[::-1], fp[::-1])
            if not (np.isfinite(xp) and xp > xa + 1e-6 and d * x_ > xp and d * e < xa):
                continue
            inner = (xs > xa) & (xs < xp)
            base = np.r_[[[xa, np.interp(xa, xs, ys)]], np.c_[xs[inner], ys[inner]],
                         [[xp, np.interp(xp, xs, ys)]]]
            if len(base) > 2:  # keep the base's bends only
                s_ = np.diff(base[:, 1]) / np.diff(base[:, 0])
                keep = np.r_[True, np.abs(np.diff(s_)) > 1e-9, True]
                base = base[keep]
            pts = np.r_[[[d * e, ge]], base, [[d * x_, gx]]]
            pts[:, 0] *= d
            pts = pts[np.argsort(pts[:, 0])]
            if np.all(np.diff(pts[:, 0]) > 1e-9) and np.all(np.isfinite(pts)):
                out.append(Polyline(pts, family=BLOCK_FAMILY))
    if not out:
        raise InputError(f"{key}: no block's wedges reach zone {zone!r} between entry {list(entry)} and "
                         f"exit {list(exit)}; move the ranges so the wedges from them meet the zone's base")
    return out


def block_search(section, *, zone, entry, exit, points=10, lift=0.25, method="spencer", hypothesis="drained",
                 **evaluate_opts):
    """``block`` search: the sliding blocks of :func:`block_polylines`, evaluated.

    ``evaluate_opts`` as for :func:`slope.search.evaluate_surfaces`.
    """
    from .evaluate import evaluate_surfaces

    blocks = block_polylines(section, zone, entry, exit, points=points, lift=lift, hypothesis=hypothesis,
                             key="block search")
    return evaluate_surfaces(section, blocks, search=BLOCK_FAMILY, method=method, hypothesis=hypothesis,
                             **evaluate_opts)
