"""Surface banks and searches for the critical slip surface.

Searches (plain names of our own):

- ``centre-lattice``: circles over a rectangular lattice of centres, each with
  a sweep of radii set by the elevation of the circle's lowest point;
- ``window``: circles through an entry point in an upslope window and an exit
  point in a downslope window of the ground line, with a sweep of radii;
- ``refine``: a start surface (usually the critical circle) turned into a
  polyline whose vertices are moved by scipy optimisation, keeping the
  surface kinematically admissible (base inclination never increasing in the
  direction of motion, so the mass can slide without internal locking);
- ``weak-layer``: block surfaces whose base runs along the bottom of a weak
  zone, with an active wedge upslope (at 45° + φ/2 to the horizontal) and a
  passive wedge downslope (45° − φ/2).

Every search returns a :class:`SearchResult` with the critical surface, its
factor of safety, the factor of safety of every trial and the counts of
rejected trials by reason. A trial counts toward the critical surface when its
bank geometry is valid, the method converged, and no *intolerable* flag is
raised; by default a negative effective normal force at a few slices or a
line of thrust outside a slice (common under the crest of cohesive slopes)
is tolerated but counted, while m_α ≤ 0.2 and non-positive F are not.

Units: m, kPa, degrees at the user level.
"""
from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .bank import build_bank
from .errors import InputError
from .strength import base_strength
from .surfaces import Circle, Circles, Polyline

__all__ = [
    "SearchResult", "evaluate_surfaces", "centre_lattice", "window", "refine", "weak_layer",
    "critical_surface", "SEARCHES", "SearchKind", "register_search", "case_search_names",
    "search_from_case", "MIN_DEPTH_REASON",
]

_TOLERABLE = {"negative-normal": 1, "small-m-alpha": 2, "thrust-outside": 4}


def _methods():
    from . import methods  # late import: the methods package is optional for geometry work

    return methods


@dataclass
class SearchResult:
    """Outcome of a search over a bank of trial surfaces.

    Attributes
    ----------
    search : str
        Name of the search.
    method : str
        Method of slices used.
    fs_min : float
        Factor of safety of the critical surface (NaN if no trial counted).
    critical : Circle or Polyline or None
        The critical surface.
    critical_index : int
        Its index among the trials (-1 if none).
    critical_flags : int
        Flags of the method at the critical surface (0 = admissible).
    surfaces : Circles or list
        All trial surfaces, in bank order.
    fs : ndarray (n_trials,)
        Factor of safety of every trial (NaN where the geometry was rejected);
        use ``counted`` to see which entered the minimum.
    counted : ndarray of bool (n_trials,)
        Trials eligible for the minimum.
    flags : ndarray of int (n_trials,)
        Method flags of every trial (see :data:`slope.methods.FLAG_NAMES`).
    rejected : dict str -> int
        Count of trials not counted, by reason.
    n_trials : int
    bank : SliceBank
        The slice bank of the trials.
    history : list
        ``refine`` only: factor of safety after each accepted improvement.
    trials_rejected : dict str -> int
        ``refine`` only: the optimiser's trial shapes that were not accepted
        as a minimum, by reason (kinematically inadmissible shape, not
        converged, or a method flag).
    """

    search: str
    method: str
    fs_min: float
    critical: object
    critical_index: int
    critical_flags: int
    surfaces: object
    fs: np.ndarray
    counted: np.ndarray
    flags: np.ndarray
    rejected: dict
    n_trials: int
    bank: object = None
    history: list = field(default_factory=list)
    trials_rejected: dict = field(default_factory=dict)

    def summary(self) -> str:
        rej = ", ".join(f"{k}: {v}" for k, v in sorted(self.rejected.items())) or "none"
        return (f"{self.search} search, {self.method}: {self.n_trials} trials, "
                f"{int(self.counted.sum())} counted, FS min = {self.fs_min:.4f}; not counted: {rej}")


def _tolerated_mask(tolerate) -> int:
    mask = 0
    for t in tolerate:
        if t not in _TOLERABLE:
            raise InputError(f"tolerate: unknown flag {t!r}; use any of {sorted(_TOLERABLE)}")
        mask |= _TOLERABLE[t]
    return mask


def _surface_of(surfaces, i):
    if isinstance(surfaces, Circles):
        return Circle(float(surfaces.xc[i]), float(surfaces.yc[i]), float(surfaces.radius[i]))
    return surfaces[i]


def evaluate_surfaces(section, surfaces, *, hypothesis="drained", method="bishop", n_slices=40,
                      overrides=None, tolerate=("negative-normal", "thrust-outside"), search="given",
                      min_depth=None, **method_opts) -> SearchResult:
    """Factor of safety of every trial surface for one set of strengths.

    Parameters
    ----------
    section : Section
    surfaces : Circles, Circle, Polyline or sequence
    hypothesis : {"drained", "undrained"}
    method : str
        Method of slices (see :func:`slope.methods.factor_of_safety`).
    n_slices : int
    overrides : dict or callable, optional
        Per-slice strength overrides for :func:`slope.strength.base_strength`
        (a single sample: shapes broadcastable to (n_surfaces, n_slices)), or
        a function of the slice bank of the usable surfaces returning them
        (strengths from a random field, for surfaces built on the fly).
    tolerate : sequence of {"negative-normal", "thrust-outside"}
        Method flags that do not exclude a trial from the minimum (they stay
        in ``flags`` and in ``rejected`` is nothing for them).
    min_depth : float, optional, m
        Surfaces whose greatest vertical depth below the ground line is
        less than this are dropped from the trials (they are not in
        ``surfaces`` nor in the bank) and counted in ``rejected`` under
        :data:`MIN_DEPTH_REASON`; ``n_trials`` still counts them.
    **method_opts
        Passed to :func:`slope.methods.factor_of_safety`.

    Returns
    -------
    SearchResult
    """
    methods = _methods()
    tol_mask = _tolerated_mask(tolerate)
    bank = build_bank(section, surfaces, n_slices=n_slices)
    if isinstance(surfaces, (Circle, Polyline)):
        surfaces = [surfaces]
    n_shallow = 0
    if min_depth is not None and float(min_depth) > 0:
        bank, surfaces, n_shallow = _drop_shallow(bank, surfaces, float(min_depth))
    m = bank.n_surfaces
    rejected = Counter(str(r) for r in bank.reason[~bank.valid])
    rejected[MIN_DEPTH_REASON] += n_shallow
    fs = np.full(m, np.nan)
    flags = np.zeros(m, dtype=int)
    counted = np.zeros(m, bool)
    idx = np.nonzero(bank.valid)[0]
    if len(idx):
        sub = bank.subset(idx)
        ov = None
        if callable(overrides):
            ov = overrides(sub)  # strengths that depend on where the bases lie (random fields)
        elif overrides is not None:
            ov = {k: np.broadcast_to(np.asarray(v, float), (m, bank.n_slices))[idx] for k, v in overrides.items()}
        c, tp = base_strength(sub, section.materials, hypothesis, ov)
        res = methods.factor_of_safety(sub, c, tp, method=method, **method_opts)
        f = res.fs.reshape(-1, len(idx))[0]
        fl = np.asarray(res.flags).reshape(-1, len(idx))[0]
        conv = np.asarray(res.converged).reshape(-1, len(idx))[0]
        fs[idx] = f
        flags[idx] = fl
        # a negative effective normal force changes nothing where every base
        # of the surface is frictionless (phi = 0: strength c l alone)
        frictionless = np.all(np.broadcast_to(tp, res.fs.shape + (sub.n_slices,)).reshape(
            -1, len(idx), sub.n_slices)[0] == 0, axis=1)
        bad = fl & ~tol_mask & ~np.where(frictionless, _TOLERABLE["negative-normal"], 0)
        ok = conv & (bad == 0) & np.isfinite(f)
        counted[idx] = ok
        rejected["not converged"] += int(np.sum(~conv))
        for bit, name in methods.FLAG_NAMES.items():
            if bit & tol_mask:
                continue
            rejected[name] += int(np.sum(conv & ((bad & bit) != 0)))
    rejected = {k: v for k, v in rejected.items() if v}
    if counted.any():
        i = int(np.nanargmin(np.where(counted, fs, np.inf)))
        crit, fmin, cflags = _surface_of(surfaces, i), float(fs[i]), int(flags[i])
    else:
        i, crit, fmin, cflags = -1, None, float("nan"), 0
    return SearchResult(search=search, method=str(method), fs_min=fmin, critical=crit, critical_index=i,
                        critical_flags=cflags, surfaces=surfaces, fs=fs, counted=counted, flags=flags,
                        rejected=rejected, n_trials=m + n_shallow, bank=bank)


#: Reason under which :func:`evaluate_surfaces` counts the surfaces shallower than ``min_depth``.
MIN_DEPTH_REASON = "shallower than search.min_depth"


def surface_depth(bank) -> np.ndarray:
    """Greatest vertical depth of each surface of a bank below the ground line (m; NaN if invalid).

    Taken over slice sides and midpoints, as the sliding-mass geometry of the report.
    """
    with np.errstate(invalid="ignore"):
        d = np.fmax(np.fmax(bank.y_top_left - bank.y_base_left, bank.y_top_right - bank.y_base_right),
                    bank.y_top - bank.y_base)
        return np.where(bank.valid, np.max(d, axis=1), np.nan)


def _drop_shallow(bank, surfaces, min_depth):
    """The bank and surfaces without the valid surfaces shallower than ``min_depth`` (m), and their count."""
    depth = surface_depth(bank)
    keep = ~(bank.valid & (depth < min_depth))
    n_drop = int(np.sum(~keep))
    if not n_drop:
        return bank, surfaces, 0
    idx = np.flatnonzero(keep)
    if isinstance(surfaces, Circles):
        kept = Circles(surfaces.xc[idx], surfaces.yc[idx], surfaces.radius[idx]) if idx.size else surfaces
    else:
        kept = [surfaces[i] for i in idx]
    if not idx.size:
        raise InputError(f"search.min_depth = {min_depth:g} m: every one of the {len(keep)} trial surfaces is "
                         "shallower; lower min_depth or move the search towards deeper surfaces")
    return bank.subset(idx), kept, n_drop


# ------------------------------------------------------------------ circles
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
def _polyline_from(section, surface, n_vertices):
    from .surfaces import cut_ground

    x1, x2 = cut_ground(section, surface)
    xs = np.linspace(x1, x2, n_vertices)
    if isinstance(surface, Circle):
        ys = surface.yc - np.sqrt(np.maximum(surface.radius ** 2 - (xs - surface.xc) ** 2, 0.0))
    else:
        ys = surface.y(xs)
    ys[0], ys[-1] = section.ground_y(x1), section.ground_y(x2)
    return xs, ys


def kinematic_reason(section, xs, ys) -> str:
    """Why a polyline (section frame, ends on the ground) cannot slide; '' if it can.

    Checks: x strictly increasing; every interior vertex below the ground;
    the base inclination in the direction of motion never increases (no
    upward kink that would lock the mass).
    """
    if np.any(np.diff(xs) <= 0):
        return "vertices out of order"
    if np.any(ys[1:-1] >= section.ground_y(xs[1:-1])):
        return "a vertex lies above the ground line"
    d = 1 if section.ground_y(xs[0]) > section.ground_y(xs[-1]) else -1
    slope = np.diff(ys) / np.diff(xs)  # section frame
    descent = -d * slope  # descent rate toward the direction of motion, ordered along +x
    if d < 0:
        descent = descent[::-1]
    if np.any(np.diff(descent) > 1e-9):
        return "base inclination increases in the direction of motion"
    return ""


#: why a trial shape of ``refine`` was not accepted, besides the method flags
SHAPE_REJECTED = "shape not kinematically admissible or outside the section"


def refine(section, start, *, n_vertices=8, method="spencer", hypothesis="drained", n_slices=40,
           overrides=None, max_evaluations=600, tolerate=(), **method_opts) -> SearchResult:
    """``refine`` search: optimise a polyline starting from ``start``.

    The ends slide along the ground line and the interior vertices move
    vertically; scipy's Nelder–Mead minimises the factor of safety, with
    kinematically inadmissible shapes (see :func:`kinematic_reason`) and
    inadmissible solutions given a penalty so the optimiser steps away.

    Parameters
    ----------
    section : Section
    start : Circle or Polyline
        Start surface (e.g. ``centre_lattice(...).critical``).
    n_vertices : int
        Vertices of the polyline (>= 3), ends included.
    method : str
        A method valid for non-circular surfaces (``spencer``,
        ``morgenstern-price``, ``janbu``; ``bishop`` uses a moment point).
    max_evaluations : int
        Budget of factor-of-safety evaluations.
    tolerate : sequence of str
        Method flags that do not exclude a trial (default none: a refined
        minimum must be a clean solution, converged with no flag; Spencer
        roots with negative base normals or a line of thrust outside the mass
        on an optimised polyline are how a spurious low FS would enter).
        Rejected trials are counted by reason in ``trials_rejected``.

    Returns
    -------
    SearchResult
        ``surfaces`` holds the start polyline, the refined one and, when
        ``start`` is not itself that polyline (a circle), ``start`` too, so
        ``critical`` is never worse than the start surface: a polyline of a
        few chords inscribed in a circle lies above the arc and starts with
        a higher FS than the circle (about 1 % with 6 vertices), which a
        small optimisation budget may not win back.  ``history`` holds the
        best FS of the polyline after each improvement.
    """
    from scipy.optimize import minimize

    if int(n_vertices) < 3:
        raise InputError(f"n_vertices must be >= 3, got {n_vertices}")
    xs0, ys0 = _polyline_from(section, start, int(n_vertices))
    span = xs0[-1] - xs0[0]
    depth0 = section.ground_y(xs0[1:-1]) - ys0[1:-1]
    scale = np.r_[0.05 * span, 0.05 * span, np.maximum(depth0, 0.05 * span) * 0.5]
    opts = dict(hypothesis=hypothesis, method=method, n_slices=n_slices, overrides=overrides,
                tolerate=tolerate, **method_opts)
    history = []
    best = {"fs": np.inf, "p": None}
    trials_rejected = Counter()

    def shape(p):
        q = p * scale
        x1, x2 = xs0[0] + q[0], xs0[-1] + q[1]
        t = (xs0 - xs0[0]) / span
        xs = x1 + (x2 - x1) * t
        ys = section.ground_y(xs)
        ys[1:-1] = ys[1:-1] - (depth0 + q[2:])
        return xs, ys

    def objective(p):
        xs, ys = shape(p)
        if xs[0] < section.x_min or xs[-1] > section.x_max or kinematic_reason(section, xs, ys):
            trials_rejected[SHAPE_REJECTED] += 1
            return 10.0 + np.sum(p * p)  # outside the admissible shapes: push back
        r = evaluate_surfaces(section, Polyline(np.c_[xs, ys]), **opts)
        if not r.counted[0]:
            trials_rejected.update(r.rejected)
            return 10.0 + np.sum(p * p)
        f = float(r.fs[0])
        if f < best["fs"]:
            best["fs"], best["p"] = f, p.copy()
            history.append(f)
        return f

    p0 = np.zeros(len(scale))
    f0 = objective(p0)
    if not np.isfinite(best["fs"]):
        why = ", ".join(f"{k}" for k in sorted(trials_rejected)) or "no factor of safety"
        raise InputError(
            f"refine: the start surface has no clean {method} solution ({why}); start from a surface "
            "whose factor of safety converged with no flag"
        )
    minimize(objective, p0, method="Nelder-Mead",
             options={"maxfev": int(max_evaluations), "xatol": 1e-3, "fatol": 1e-5, "initial_simplex": None})
    xs, ys = shape(best["p"])
    start_poly = Polyline(np.c_[xs0, ys0])
    final = Polyline(np.c_[xs, ys])
    candidates = [start_poly, final] + ([start] if isinstance(start, Circle) else [])
    res = evaluate_surfaces(section, candidates, search="refine", **opts)
    res.history = history
    res.trials_rejected = dict(trials_rejected)
    return res


# -------------------------------------------------------------- weak layer
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
@dataclass(frozen=True)
class SearchKind:
    """One search of the registry.

    Attributes
    ----------
    name : str
        The name users write (``[search] kind`` of a case file, :func:`critical_surface`).
    search : callable
        ``search(section, **opts) -> SearchResult``: the library call.
    from_case : callable or None
        ``from_case(section, table, **evaluate_opts) -> SearchResult``: the
        search as a case file's ``[search]`` table states it (``table`` is the
        checked table with its defaults); None when case files cannot ask for it.
    keys : tuple of str
        ``[search]`` keys this search reads besides ``kind`` and ``min_depth``
        (a key given for another kind is refused, as it would do nothing).
    doc : str
        One line for the documentation.
    """

    name: str
    search: Callable
    from_case: Callable | None = None
    keys: tuple = ()
    doc: str = ""


#: name -> SearchKind; the case schema and :func:`critical_surface` read it.
SEARCHES: dict[str, SearchKind] = {}


def register_search(kind: SearchKind) -> SearchKind:
    """Add a search to the registry (one line per search)."""
    SEARCHES[kind.name] = kind
    return kind


def case_search_names() -> tuple:
    """Searches a case file may name in ``[search] kind``."""
    return tuple(n for n, k in SEARCHES.items() if k.from_case is not None)


def _per_axis(trials, n_radii=10):
    return max(3, int(round(math.sqrt(int(trials) / n_radii))))


def _lattice_from_case(section, table, **opts):
    n = _per_axis(table["trials"])
    return centre_lattice(section, x_range=tuple(table["x_range"]) if "x_range" in table else None,
                          y_range=tuple(table["y_range"]) if "y_range" in table else None,
                          nx=n, ny=n, n_radii=10, **opts)


def _window_from_case(section, table, **opts):
    n = _per_axis(table["trials"])
    return window(section, upslope=tuple(table["entry"]), downslope=tuple(table["exit"]),
                  n_up=n, n_down=n, n_radii=10, **opts)


def _given(section, *, surfaces, **opts):
    return evaluate_surfaces(section, surfaces, search="fixed", **opts)


def _fixed_from_case(section, table, **opts):
    if "circle" in table:
        c = table["circle"]
        surf = Circle(float(c["x"]), float(c["y"]), float(c["r"]))
    else:
        surf = Polyline(np.asarray(table["polyline"], float))
    return _given(section, surfaces=[surf], **opts)


def _refine_search(section, **opts):
    if "start" not in opts:
        keys = ("hypothesis", "n_slices", "overrides", "tolerate")
        first = centre_lattice(section, **{k: opts[k] for k in keys if k in opts})
        if first.critical is None:
            raise InputError("refine: the centre-lattice search found no usable circle to start from")
        opts["start"] = first.critical
    return refine(section, opts.pop("start"), **opts)


register_search(SearchKind("centre-lattice", centre_lattice, _lattice_from_case, ("trials", "x_range", "y_range"),
                           "circles over a lattice of centres, each with a sweep of radii"))
register_search(SearchKind("window", window, _window_from_case, ("trials", "entry", "exit"),
                           "circles from an upslope entry window to a downslope exit window"))
register_search(SearchKind("fixed", _given, _fixed_from_case, ("circle", "polyline"),
                           "one given surface: a circle {x, y, r} or a polyline"))
register_search(SearchKind("refine", _refine_search, None, (),
                           "a start surface turned into a polyline and optimised"))
register_search(SearchKind("weak-layer", weak_layer, None, (),
                           "block surfaces along the bottom of a weak zone"))
# issue 15's families: a case adds them to its bank with [[search.block]] and
# [search.dynamic_programming] (slope.search_families), whatever its kind
from .search_block import block_search  # noqa: E402 - the registry is complete once this module is
from .search_dp import dynamic_programming  # noqa: E402
register_search(SearchKind("block", block_search, None, (),
                           "sliding blocks on a weak zone: Rankine active and passive wedges from entry and exit ranges"))
register_search(SearchKind("dynamic-programming", dynamic_programming, None, (),
                           "non-circular surfaces by dynamic programming over grids of nodes (Baker 1980)"))


def _kind(name) -> SearchKind:
    if name not in SEARCHES:
        raise InputError(f"search: unknown search {name!r}; choose one of {', '.join(SEARCHES)}")
    return SEARCHES[name]


def search_from_case(section, table: dict, **evaluate_opts) -> SearchResult:
    """Run the search a case's checked ``[search]`` table asks for (the one dispatcher of case files).

    ``min_depth`` of the table drops shallower surfaces (see :func:`evaluate_surfaces`).
    """
    kind = _kind(table.get("kind", "centre-lattice"))
    if kind.from_case is None:
        raise InputError(f"search.kind = {kind.name!r} cannot be asked for in a case file; use one of "
                         f"{', '.join(case_search_names())}")
    return kind.from_case(section, table, min_depth=table.get("min_depth"), **evaluate_opts)


def critical_surface(section, search="centre-lattice", **opts) -> SearchResult:
    """Run a search of the registry by name (see :data:`SEARCHES`).

    ``refine`` without a ``start`` runs a ``centre-lattice`` search first
    (with the same hypothesis and strengths, Bishop) and refines its critical
    circle; ``fixed`` takes ``surfaces``.
    """
    return _kind(search).search(section, **opts)
