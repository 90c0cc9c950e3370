"""Circular trial surfaces: ``centre-lattice`` (a lattice of centres, each with a
sweep of radii set by the elevation of the circle's lowest point) and ``window``
(circles from an entry point in an upslope window to an exit point in a
downslope window of the ground line, with a sweep of radii)."""
from __future__ import annotations


import numpy as np

from ..errors import InputError
from ..surfaces import Circles
from .evaluate import SearchResult, evaluate_surfaces

def _face_extent(section):
    """x-range of the sloping part of the ground and its height (m)."""
    g = section.ground
    h = float(np.ptp(g[:, 1]))
    if h <= 0:
        raise InputError("section: the ground line is level; give the search ranges explicitly")
    lo, hi = g[:, 1].min() + 0.01 * h, g[:, 1].max() - 0.01 * h
    xs = np.linspace(section.x_min, section.x_max, 2001)
    ys = section.ground_y(xs)
    inner = xs[(ys > lo) & (ys < hi)]
    if inner.size == 0:
        # a face narrower than the sampling step (a near-vertical cut written
        # with a face 0.01 m wide): sample each ground segment itself
        t = np.linspace(0.0, 1.0, 101)
        xs = (g[:-1, 0, None] + np.diff(g[:, 0])[:, None] * t).ravel()
        ys = (g[:-1, 1, None] + np.diff(g[:, 1])[:, None] * t).ravel()
        inner = xs[(ys > lo) & (ys < hi)]
    return float(inner.min()), float(inner.max()), h


def lattice_circles(section, x_range=None, y_range=None, nx=15, ny=15, n_radii=10, tangent_range=None):
    """Circles of the ``centre-lattice`` search.

    Parameters
    ----------
    x_range, y_range : (float, float), m
        Extent of the lattice of centres; default: the slope face widened by
        half its height each side, and from the crest to two heights above it.
    nx, ny : int
        Lattice points in x and y.
    n_radii : int
        Radii per centre, set by the elevation of the circle's lowest point,
        spread evenly over ``tangent_range`` (default: from the section base
        to 90 % of the way up the slope).

    Returns
    -------
    Circles
    """
    a, b, h = _face_extent(section)
    ytop = float(section.ground[:, 1].max())
    ybot = float(section.ground[:, 1].min())
    x_range = (a - 0.5 * h, b + 0.5 * h) if x_range is None else x_range
    y_range = (ytop + 0.1 * h, ytop + 2.0 * h) if y_range is None else y_range
    tangent_range = (section.base_y, ybot + 0.9 * h) if tangent_range is None else tangent_range
    for name, v, k in (("nx", nx, 1), ("ny", ny, 1), ("n_radii", n_radii, 1)):
        if int(v) < k:
            raise InputError(f"{name} must be >= {k}, got {v}")
    xs = np.linspace(*x_range, int(nx))
    ys = np.linspace(*y_range, int(ny))
    ts = np.linspace(*tangent_range, int(n_radii))
    X, Y, T = np.meshgrid(xs, ys, ts, indexing="ij")
    X, Y, T = X.ravel(), Y.ravel(), T.ravel()
    keep = Y - T > 0
    return Circles(X[keep], Y[keep], (Y - T)[keep])


def centre_lattice(section, *, x_range=None, y_range=None, nx=15, ny=15, n_radii=10, tangent_range=None,
                   **evaluate_opts) -> SearchResult:
    """``centre-lattice`` search: lattice of centres × sweep of radii.

    See :func:`lattice_circles` for the trial circles and
    :func:`evaluate_surfaces` for ``evaluate_opts`` (hypothesis, method,
    n_slices, overrides, tolerate, method options).
    """
    circles = lattice_circles(section, x_range, y_range, nx, ny, n_radii, tangent_range)
    return evaluate_surfaces(section, circles, search="centre-lattice", **evaluate_opts)


def window_circles(section, upslope, downslope, n_up=10, n_down=10, n_radii=10, max_angle=80.0, min_angle=3.0):
    """Circles of the ``window`` search.

    Parameters
    ----------
    upslope, downslope : (float, float), m
        x-ranges of the ground line where circles enter and leave.
    n_up, n_down : int
        Points in each window.
    n_radii : int
        Radii per entry/exit pair, set by the half-angle θ the arc subtends at
        the centre, evenly from ``min_angle`` to ``max_angle`` (degrees;
        r = chord / (2 sin θ)); small angles give flat, nearly planar arcs.

    Returns
    -------
    Circles
    """
    for name, w in (("upslope", upslope), ("downslope", downslope)):
        if len(w) != 2 or not w[0] <= w[1] or w[0] < section.x_min or w[1] > section.x_max:
            raise InputError(f"{name} window {w!r}: give (x_from, x_to) within the ground line "
                             f"({section.x_min:g} to {section.x_max:g} m)")
    if not 0.0 < min_angle < max_angle < 90.0:
        raise InputError(f"min_angle and max_angle must satisfy 0 < min_angle < max_angle < 90 degrees, "
                         f"got {min_angle}, {max_angle}")
    xe = np.linspace(*upslope, int(n_up))
    xx = np.linspace(*downslope, int(n_down))
    th = np.radians(np.linspace(min_angle, max_angle, int(n_radii)))
    E, Xx, Th = np.meshgrid(xe, xx, th, indexing="ij")
    E, Xx, Th = E.ravel(), Xx.ravel(), Th.ravel()
    p1 = np.c_[E, section.ground_y(E)]
    p2 = np.c_[Xx, section.ground_y(Xx)]
    mid = 0.5 * (p1 + p2)
    d = p2 - p1
    chord = np.hypot(d[:, 0], d[:, 1])
    keep = chord > 0
    r = 0.5 * chord / np.sin(Th)
    # centre on the perpendicular bisector, on the upper side of the chord
    nrm = np.c_[-d[:, 1], d[:, 0]] / np.where(chord > 0, chord, 1.0)[:, None]
    nrm *= np.where(nrm[:, 1] < 0, -1.0, 1.0)[:, None]
    off = np.sqrt(np.maximum(r * r - 0.25 * chord * chord, 0.0))
    c = mid + nrm * off[:, None]
    return Circles(c[keep, 0], c[keep, 1], r[keep])


def window(section, *, upslope, downslope, n_up=10, n_down=10, n_radii=10, max_angle=80.0, min_angle=3.0,
           **evaluate_opts) -> SearchResult:
    """``window`` search: circles from an upslope window to a downslope window.

    See :func:`window_circles` and :func:`evaluate_surfaces`.
    """
    circles = window_circles(section, upslope, downslope, n_up, n_down, n_radii, max_angle, min_angle)
    return evaluate_surfaces(section, circles, search="window", **evaluate_opts)


# --------------------------------------------------------------- refinement
