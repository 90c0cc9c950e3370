"""Kinematic (upper-bound) factor of safety of a polyline slip surface as a mechanism of rigid blocks.

A limit-equilibrium factor of safety is not a bound: on a free non-circular
path its statical assumptions (the interslice force inclination) can put F
well below that of any mechanism the soil could actually follow. The upper
bound theorem of plasticity (Drucker & Prager 1952; Chen 1975, *Limit
Analysis and Soil Plasticity*) gives one that is: for any kinematically
admissible mechanism with associated flow, the factor by which the strength
must be divided for the work of the loads to equal the energy dissipated is
not below the true factor of safety.

The mechanism here is that of Sarma (1979) and Donald & Chen (1997, Slope
stability analysis by the upper bound approach: fundamentals and methods,
Can. Geotech. J. 34, 853-862): one rigid block per segment of the polyline,
a straight interface from every interior vertex up to the ground line, its
inclination free. With the strength reduced by F (``c_d = c / F``,
``tan φ_d = tan φ / F``), associated flow makes every velocity jump -- of a
block over the ground below its base, or of one block against the next
across an interface -- inclined at φ_d to the line it crosses, opening it.
That fixes each block's direction of motion (its base tangent turned by φ_d
away from the ground) and, block after block, the size of every velocity
and jump (a 2 x 2 system per interface). The work equation

    Σ_blocks (W_k + Q_k) · v_k  +  Σ_lines U |Δv| sin φ_d  =  Σ_lines C_d |Δv| cos φ_d

(weights W and loads Q on the block; U = ∫ u dL the pore-water thrust on a
line of effective-stress strength, whose opening does work; C = ∫ c dL)
is solved for F (directly when φ = 0, where the velocities do not depend on
F; else by false position), and F is minimised over the interface
inclinations exactly over a table of inclinations per vertex, by dynamic
programming along the chain (:mod:`slope.search.upper_bound_kernels`), the
table then refined about the best. Every table value is exact, so every F
returned is a true upper bound for its mechanism, up to the quadrature below.

Limits (stated, not hidden):
- φ must be one value along each line for the flow rule to hold everywhere
  on it. Where a line crosses zones of different φ the line's
  length-weighted mean tan φ is used: an approximation, not a bound. Lines
  in φ = 0 (undrained) zones, and homogeneous zones, are exact.
- Strengths are sampled at Gauss points on equal parts of each line (the
  same law in depth, elevation or σ'v as on slice bases, and the same
  random-field overrides); pore pressure counts only where tan φ > 0
  (total-stress undrained zones take none).
- Block weights are exact column integrals of the section's unit weights
  (moist above the phreatic surface, saturated below), integrated in x
  between the vertices of the surface, the ground and the zone edges.
- Strip surcharges, ponded water (normal to the ground) and the
  pseudo-static coefficient kh are loads. A tension crack is not modelled:
  :func:`upper_bound_fs` refuses a section that has one.

Units: m, kN/m, kPa, degrees at the user level.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from ..bank import _column_weight, point_stresses
from ..errors import InputError
from ..strength import base_strength
from .upper_bound_kernels import _least_f, _solve_f

__all__ = ["BlockMechanism", "Refinement", "upper_bound_fs", "fixed_interfaces_fs", "mechanism_xy", "KINEMATIC_REASON", "warm_up"]

#: Reason under which a free path is not counted: its kinematic factor is above its start surface's.
KINEMATIC_REASON = "less critical than its start surface as a mechanism of rigid blocks"

_GAUSS = tuple(np.polynomial.legendre.leggauss(3))
_GAUSS = (0.5 * (_GAUSS[0] + 1.0), 0.5 * _GAUSS[1])
_LINE_PARTS = 4            # equal parts of each base and interface for the strength quadrature
#: interface inclinations from the vertical (degrees, + leaning toward +x at the top), refined about the best
_STEEPEST = 80.0   # degrees from the vertical
_NORMAL_TABLE = np.linspace(-6.0, 6.0, 7)
_TABLES = (np.linspace(-60.0, 60.0, 13), np.linspace(-5.0, 5.0, 11), np.linspace(-0.5, 0.5, 5))


@dataclass
class BlockMechanism:
    """The least upper bound found for one polyline.

    Attributes
    ----------
    fs : float
        Kinematic factor of safety (-); inf when no admissible mechanism was found.
    inclination : ndarray (n - 1,), degrees
        Inclination of each interface from the vertical (+ top toward +x).
    top : ndarray (n - 1, 2), m
        Where each interface meets the ground (section frame).
    """

    fs: float
    inclination: np.ndarray
    top: np.ndarray


def mechanism_xy(section, surface, n_segments):
    """A surface as polyline vertices (section frame) for :func:`upper_bound_fs`.

    A circle becomes ``n_segments`` chords between points equally spaced in
    x (ends on the ground); a polyline keeps its own vertices.
    """
    from .dp_grid import start_xy
    from ..surfaces import Circle

    if isinstance(surface, Circle):
        return start_xy(section, surface, int(n_segments) + 1)
    return np.asarray(surface.points, float)


class _LinePoints:
    """Quadrature points on lines, shaped as slice bases of zero length for the strength functions
    (as :class:`slope.search.interslice_strength._BoundaryPoints`): a random field's overrides read
    the points themselves.

    The points are kept with the lines' geometry (:data:`_GEOMETRY`), so the same object comes back
    in every realisation that judges the same lines (a start's chords); ``reads_kept`` is where a
    realisation's overrides keep what depends on the points only (their grid cells and weights, the
    materials' values there: :func:`slope.simulate.refinement.realisation_overrides`), computed once.
    """

    def __init__(self, section, x, y, zone, depth, sigma_v_eff):
        from ..slices import SliceBank

        self.direction = np.ones(1)
        self.x_left = self.x_right = self.x_mid = x
        self.y_base_left = self.y_base_right = self.y_base = y
        self.zone, self.depth, self.sigma_v_eff = zone, depth, sigma_v_eff
        self.zone_names, self.zone_materials = section.zone_names, section.zone_materials
        self._bpf = SliceBank.base_points_section_frame
        self.reads_kept = {}
        self.zero_length = True       # every base is one point: its points along the base are all equal

    def base_points_section_frame(self, n_per_base: int = 1):
        return self._bpf(self, n_per_base)

    @property
    def n_surfaces(self) -> int:
        return 1


def _line_geometry(section, p0, p1):
    """Quadrature points, weights, lengths and stresses on lines p0 -> p1: what does not depend on strengths."""
    t = (np.arange(_LINE_PARTS)[:, None] + _GAUSS[0][None, :]).ravel() / _LINE_PARTS   # (q,)
    w = np.tile(_GAUSS[1], _LINE_PARTS) / _LINE_PARTS
    x = p0[..., 0, None] + (p1[..., 0] - p0[..., 0])[..., None] * t
    y = p0[..., 1, None] + (p1[..., 1] - p0[..., 1])[..., None] * t
    L = np.hypot(p1[..., 0] - p0[..., 0], p1[..., 1] - p0[..., 1])
    zone, sig_eff, u = point_stresses(section, x, y)
    depth = section.ground_y(x) - y
    flat = lambda v: np.ascontiguousarray(v, float).reshape(1, -1)   # noqa: E731 - points as bases
    pts = _LinePoints(section, flat(x), flat(y), np.where(zone >= 0, zone, 0).reshape(1, -1), flat(depth),
                      flat(sig_eff))
    return w, x, y, L, zone, sig_eff, u, depth, pts


def _line_terms(section, p0, p1, hypothesis, overrides, geometry=None):
    """∫c dL, mean tan φ, ∫u dL (where tan φ > 0) and length of lines p0 -> p1 (arrays (..., 2)).

    ``geometry`` is :func:`_line_geometry` of the same lines when already computed.
    """
    w, x, y, L, zone, sig_eff, u, depth, pts = _line_geometry(section, p0, p1) if geometry is None else geometry
    if callable(overrides):
        ov = overrides(pts)
    else:    # single numbers only: per-slice arrays belong to slice bases, not to these lines
        from .interslice_strength import _scalar_overrides

        ov = _scalar_overrides(overrides)
    c, tp = base_strength(pts, section.materials, hypothesis, ov)
    c = np.asarray(c, float).reshape((-1,) + x.shape)[0]
    tp = np.asarray(tp, float).reshape((-1,) + x.shape)[0]
    inside = zone >= 0
    c, tp = np.where(inside, c, 0.0), np.where(inside, tp, 0.0)
    uw = np.where(inside & (tp > 0), u, 0.0)
    return (c * w).sum(-1) * L, (tp * w).sum(-1), (uw * w).sum(-1) * L, L


def _breaks(section, x0, x1):
    """Abscissae in [x0, x1] where the integrands may bend: ground and zone-edge vertices, strip ends."""
    v = [section.ground[:, 0]] + [z.polygon[:, 0] for z in section.zones]
    loads = section.loads
    if loads is not None:
        v += [np.array([s.x1, s.x2], float) for s in loads.strips]
    v = np.concatenate(v)
    return np.unique(v[(v > x0) & (v < x1)])


def _pieces(a, b, brk):
    """Gauss points (..., P*3) and weights over [a, b] split at the breakpoints ``brk`` (sorted)."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    if brk.size:   # only the breakpoints inside each interval (sorted, so a window from the first one)
        lo_i = np.searchsorted(brk, a, side="right")
        m = int(np.max(np.searchsorted(brk, b, side="left") - lo_i, initial=0))
        inner = brk[np.minimum(lo_i[..., None] + np.arange(max(m, 0)), brk.size - 1)]
    else:
        inner = np.zeros(a.shape + (0,))
    br = np.concatenate([a[..., None], np.clip(inner, a[..., None], b[..., None]), b[..., None]], axis=-1)
    if not np.all(a <= b):   # else already in order: the window is sorted and clipped into [a, b]
        br = np.sort(br, axis=-1)
    lo, hi = br[..., :-1], br[..., 1:]
    x = (lo[..., None] + (hi - lo)[..., None] * _GAUSS[0]).reshape(a.shape + (-1,))
    w = ((hi - lo)[..., None] * _GAUSS[1]).reshape(a.shape + (-1,))
    return x, w


def _surface_loads(section, x):
    """Vertical surcharge and ponded water on the ground per unit x at abscissae x: (fx, fy), kN/m per m."""
    fx = np.zeros_like(x)
    fy = np.zeros_like(x)
    loads, water = section.loads, section.water
    if loads is not None and loads.strips:
        fy -= loads.surcharge(x)
    if water is not None and water.phreatic is not None:
        p = water.gamma_w * np.maximum(water.phreatic_y(x) - section.ground_y(x), 0.0)
        fx += p * section.ground_slope(x)     # pressure normal to the ground: p (g', -1) per unit x
        fy -= p
    return fx, fy


def _right_of(section, xy, top, brk):
    """Weight (kN/m) and surface load vector (kN/m) of the mass to the right of each interface.

    ``top`` (..., 2) are the interfaces' ground ends, ``xy`` the polyline; the interface from vertex
    i is the line from ``xy[i]`` to ``top[i]`` (shape (n - 1, K, 2)).
    """
    xb, yb = xy[1:-1, 0][:, None], xy[1:-1, 1][:, None]
    xt, yt = top[..., 0], top[..., 1]
    xn = xy[-1, 0]
    lean_right = xt >= xb
    a, b = np.minimum(xb, xt), np.maximum(xb, xt)
    allb = np.unique(np.r_[xy[:, 0], brk])
    # the wedge between the interface and the vertical through its farther end, split where its
    # bounding lines bend (the surface's and the ground's vertices; zone edges crossing it only put a
    # kink in the integrand, left to the Gauss points)
    g = section.ground[:, 0]
    wb = np.unique(np.r_[xy[:, 0], g[(g > xy[0, 0]) & (g < xn)]])
    xq, wq = _pieces(a, b, wb)
    # the wedges are split at every breakpoint any of them holds, so most of their Gauss points lie on
    # pieces of zero width (weight exactly 0): the columns are weighed only where the weight is not
    # zero, the rest count 0, the same sums as weighing them all (and the same numbers point by point)
    live = wq != 0.0
    at = lambda v: np.broadcast_to(v[..., None], xq.shape)[live]   # noqa: E731 - per-wedge value at its points
    x = xq[live]
    with np.errstate(divide="ignore", invalid="ignore"):
        yl = at(np.broadcast_to(yb, xt.shape)) + (x - at(np.broadcast_to(xb, xt.shape))) * at(
            np.where(xt != xb, (yt - yb) / (xt - xb), 0.0))
    lean = at(lean_right)
    lo = np.where(lean, np.interp(x, xy[:, 0], xy[:, 1]), yl)
    hi = np.where(lean, yl, section.ground_y(x))
    cw = np.zeros(xq.shape)
    cw[live] = _column_weight(section, x, lo, hi)
    W = (cw * wq).sum(-1)
    # whole columns from that end to the mass's right end: exact integrals between breakpoints, summed
    # from the right, plus the part of the piece the end falls in
    col = lambda x: _column_weight(section, x, np.interp(x, xy[:, 0], xy[:, 1]), section.ground_y(x))  # noqa: E731
    xs, right = _kept((id(section), "columns", xy.tobytes(), xy.shape, allb.tobytes()), section,
                      lambda: _columns_right(xy, allb, col))
    j = np.clip(np.searchsorted(xs, b, side="right"), 1, len(xs) - 1)    # b lies in [xs[j-1], xs[j]]
    xq, wq = _pieces(b, xs[j], np.zeros(0))
    W = W + right[j] + (col(xq) * wq).sum(-1)
    if not _kept((id(section), "ground loaded"), section, lambda: _ground_loaded(section)):
        return W, np.zeros(W.shape), np.zeros(W.shape)     # the integrals of loads that are 0 everywhere
    xq, wq = _pieces(xt, np.broadcast_to(xn, xt.shape), allb)
    live = wq != 0.0
    fx, fy = np.zeros(xq.shape), np.zeros(xq.shape)
    fx[live], fy[live] = _surface_loads(section, xq[live])
    return W, (fx * wq).sum(-1), (fy * wq).sum(-1)


def _ground_loaded(section) -> bool:
    """Whether a strip load or ponded water (phreatic surface above the ground) loads the ground anywhere.

    Both lines are straight between their vertices and level beyond them, so the water is above the
    ground somewhere only if it is at one of their vertices.
    """
    loads, water = section.loads, section.water
    if loads is not None and loads.strips:
        return True
    if water is None or water.phreatic is None:
        return False
    x = np.union1d(section.ground[:, 0], water.phreatic[:, 0])
    return bool(np.any(water.phreatic_y(x) > section.ground_y(x)))


def _columns_right(xy, allb, col):
    """Breakpoints ``xs`` of the mass and the weight of the columns from each to its right end (kN/m)."""
    xs = allb[(allb >= xy[0, 0]) & (allb <= xy[-1, 0])]
    xq, wq = _pieces(xs[:-1], xs[1:], np.zeros(0))
    return xs, np.r_[np.cumsum((col(xq) * wq).sum(-1)[::-1])[::-1], 0.0]     # ∫ from xs[j] to xn


def _tops(section, xy, incl_deg):
    """Ground ends of interfaces from the interior vertices at inclinations (n - 1, K) from the vertical.

    Returns (top (n-1, K, 2), ok (n-1, K)): ok where the line meets the ground inside the mass's
    span and stays above the polyline on the way.
    """
    g = section.ground
    d = np.radians(incl_deg)
    s = np.stack([np.sin(d), np.cos(d)], -1)                       # (n-1, K, 2) upward along the line
    P = xy[1:-1][:, None, :]
    g0, g1 = g[:-1], g[1:]
    e = g1 - g0                                                   # (G, 2)
    r = g0[None, None] - P[..., None, :]                          # (n-1, K, G, 2)
    S = s[..., None, :]
    den = S[..., 0] * e[:, 1] - S[..., 1] * e[:, 0]               # cross(s, e)
    with np.errstate(divide="ignore", invalid="ignore"):
        tt = (r[..., 0] * e[:, 1] - r[..., 1] * e[:, 0]) / den     # along the interface
        uu = (r[..., 0] * S[..., 1] - r[..., 1] * S[..., 0]) / den  # along the ground segment
    hit = (np.abs(den) > 1e-12) & (uu >= -1e-12) & (uu <= 1 + 1e-12) & (tt > 1e-9)
    tt = np.where(hit, tt, np.inf)
    t = tt.min(-1)
    top = P + np.where(np.isfinite(t), t, 0.0)[..., None] * s
    ok = np.isfinite(t) & (top[..., 0] > xy[0, 0]) & (top[..., 0] < xy[-1, 0])
    # the interface must not pass below the polyline between its ends
    xv, yv = xy[:, 0], xy[:, 1]
    lo, hi = np.minimum(P[..., 0], top[..., 0]), np.maximum(P[..., 0], top[..., 0])
    between = (xv > lo[..., None] + 1e-9) & (xv < hi[..., None] - 1e-9)
    with np.errstate(divide="ignore", invalid="ignore"):
        yline = P[..., 1, None] + (xv - P[..., 0, None]) * (s[..., 1] / s[..., 0])[..., None]
    ok &= ~np.any(between & (yv >= yline - 1e-9), axis=-1)
    return top, ok


#: Geometry of mechanisms met before (strength-free: tops, weights, loads, lines' points and stresses),
#: keyed by the section and the vertices (and the interfaces' inclinations): a start surface is judged
#: again in every realisation that searches from it, with the same vertices and, at the first table,
#: the same inclinations. Exact reuse of the same arrays, so results do not change. The line points
#: kept here also keep where a realisation's fields are read on them (:class:`_LinePoints`).
_GEOMETRY: dict = {}
_GEOMETRY_MAX = 256


def _kept(key, section, build):
    """The value ``build()`` kept under ``key`` for ``section`` (built and kept when new)."""
    hit = _GEOMETRY.get(key)
    if hit is not None and hit[0] is section:
        _GEOMETRY[key] = _GEOMETRY.pop(key)     # the last used last: a start met again outlives the paths
        return hit[1]
    value = build()
    if len(_GEOMETRY) >= _GEOMETRY_MAX:
        _GEOMETRY.pop(next(iter(_GEOMETRY)))    # the least recently used first
    _GEOMETRY[key] = (section, value)
    return value


def _setup(section, xy, hypothesis, overrides):
    """Checks, direction of motion, bases' terms, total weight and loads of a polyline mechanism."""
    xy = np.asarray(xy, float)
    if xy.ndim != 2 or xy.shape[0] < 2 or np.any(np.diff(xy[:, 0]) <= 0):
        raise InputError("upper-bound evaluation: give at least two vertices with x increasing")
    loads = section.loads
    if loads is not None and loads.crack is not None:
        raise InputError("upper-bound evaluation: a tension crack is not modelled by the rigid-block mechanism; "
                         "remove [loads.crack] or judge non-circular paths by limit equilibrium only")
    xy = np.ascontiguousarray(xy)
    kh, d, brk, tb, nb, geo, Ftot = _kept((id(section), "setup", xy.tobytes(), xy.shape), section,
                                          lambda: _setup_geometry(section, xy))
    Cb, Tb, Ub, _ = _line_terms(section, xy[:-1], xy[1:], hypothesis, overrides, geo)
    return xy, d, kh, brk, tb, nb, Cb, Tb, Ub, Ftot


def _setup_geometry(section, xy):
    loads = section.loads
    kh = 0.0 if loads is None else float(loads.kh)
    d = 1.0 if section.ground_y(xy[0, 0]) > section.ground_y(xy[-1, 0]) else -1.0   # direction of motion in x
    seg = np.diff(xy, axis=0)
    Lb = np.hypot(seg[:, 0], seg[:, 1])
    tb = d * seg / Lb[:, None]
    nb = np.c_[-seg[:, 1], seg[:, 0]] / Lb[:, None]          # upward normal of each base
    geo = _line_geometry(section, xy[:-1], xy[1:])
    brk = _breaks(section, xy[0, 0], xy[-1, 0])
    xq, wq = _pieces(np.array(xy[0, 0]), np.array(xy[-1, 0]), np.unique(np.r_[xy[:, 0], brk]))
    Wt = float((_column_weight(section, xq, np.interp(xq, xy[:, 0], xy[:, 1]), section.ground_y(xq)) * wq).sum())
    fx, fy = _surface_loads(section, xq)
    Ftot = np.array([kh * d * Wt + float((fx * wq).sum()), -Wt + float((fy * wq).sum())])
    return kh, d, brk, tb, nb, geo, Ftot


def fixed_interfaces_fs(section, xy, inclinations, *, hypothesis="drained", overrides=None) -> float:
    """Kinematic factor of safety of a polyline with given interface inclinations (no optimisation).

    Parameters
    ----------
    section, xy, hypothesis, overrides
        As for :func:`upper_bound_fs`.
    inclinations : array_like (n - 1,), degrees
        Inclination of the interface at each interior vertex from the vertical (+ top toward +x).

    Returns
    -------
    float
        F; inf when the interfaces are not admissible (crossing, leaving the mass) or no
        admissible velocity field exists.
    """
    xy, d, kh, brk, tb, nb, Cb, Tb, Ub, Ftot = _setup(section, xy, hypothesis, overrides)
    incl = np.asarray(inclinations, float).reshape(-1, 1)
    if incl.shape[0] != len(xy) - 2:
        raise InputError(f"upper-bound evaluation: {incl.shape[0]} inclinations for {len(xy) - 2} interior vertices")
    if len(xy) == 2:
        return float(_solve_f(np.zeros(0, np.int64), 1.0, tb, nb, Cb, Tb, Ub, Ftot, np.zeros((0, 1, 2)),
                              np.zeros((0, 1, 2)), np.zeros((0, 1)), np.zeros((0, 1)), np.zeros((0, 1)),
                              np.zeros((0, 1, 2))))
    ok, xt, tabs = _interface_tables(section, xy, incl, hypothesis, overrides, brk, kh, d)
    if not (ok.all() and np.all(np.diff(xt[:, 0]) > 0)):
        return np.inf
    return float(_solve_f(np.zeros(len(incl), np.int64), 1.0, tb, nb, Cb, Tb, Ub, Ftot, *tabs))


def upper_bound_fs(section, xy, *, hypothesis="drained", overrides=None, enough=None) -> BlockMechanism:
    """Least kinematic factor of safety of a polyline as a mechanism of rigid blocks.

    Parameters
    ----------
    section : Section
    xy : ndarray (n + 1, 2), m
        Vertices of the slip surface, section frame, x increasing, ends on
        the ground (one block per segment).
    hypothesis : {"drained", "undrained"}
    overrides : callable or dict, optional
        As for :func:`slope.strength.base_strength`; a callable gets the
        quadrature points of the lines as slice bases of zero length (so a
        realisation's random fields are sampled along the bases and the
        interfaces alike).
    enough : float, optional
        Stop refining the tables once F <= ``enough`` (-): the F returned is
        then that of the mechanism found so far, an upper bound not above
        ``enough`` but not the least (for a yes/no comparison with
        ``enough``, which the finer tables, never raising F, cannot change).

    Returns
    -------
    BlockMechanism

    Raises
    ------
    InputError
        A section with a tension crack (not modelled), or fewer than two vertices.
    """
    r = Refinement(section, xy, hypothesis=hypothesis, overrides=overrides)
    while not r.done and not (r.level and enough is not None and r.fs <= enough):
        r.step()
    return r.result()


class Refinement:
    """The least upper bound of one polyline, refined one table of inclinations at a time.

    The tables: the first spans ±60° from the vertical; each next one is finer, about the previous
    optimum. Every table is searched exactly (``_least_f``), so ``fs`` never rises from one to the
    next (the previous optimum is in the next table). The first table also holds, at every vertex,
    inclinations about the normal to the mean direction of its two bases (the radii, for chords of a
    circle: the rigid rotation's own jumps), which a coarse table of absolute inclinations cannot hold
    for close vertices without crossing. :func:`upper_bound_fs` steps until ``done``; a caller that
    only compares two surfaces (:mod:`slope.search.path_acceptance`) steps each as far as the
    comparison needs.

    Attributes
    ----------
    fs : float
        F after the tables searched so far (-): inf before the first, non-increasing.
    done : bool
        No table left, or the last one did not lower F (``fs`` is then that of
        :func:`upper_bound_fs`).
    """

    def __init__(self, section, xy, *, hypothesis="drained", overrides=None):
        self.section, self.hypothesis, self.overrides = section, hypothesis, overrides
        (self.xy, self.d, self.kh, self.brk, self.tb, self.nb, self.Cb, self.Tb, self.Ub,
         self.Ftot) = _setup(section, xy, hypothesis, overrides)
        seg = np.diff(self.xy, axis=0)
        n = len(seg)
        self.fs, self.centre, self.level, self.done = np.inf, np.zeros(n - 1), 0, False
        if n == 1:
            self.fs = float(_solve_f(np.zeros(0, np.int64), 1.0, self.tb, self.nb, self.Cb, self.Tb, self.Ub,
                                     self.Ftot, np.zeros((0, 1, 2)), np.zeros((0, 1, 2)), np.zeros((0, 1)),
                                     np.zeros((0, 1)), np.zeros((0, 1)), np.zeros((0, 1, 2))))
            self.done = True
            return
        beta = np.degrees(np.arctan2(seg[:, 1], seg[:, 0]))
        self._normal = -0.5 * (beta[:-1] + beta[1:])

    def step(self):
        """Search the next table (nothing when ``done``)."""
        if self.done:
            return
        table, n1 = _TABLES[self.level], len(self.centre)
        incl = self.centre[:, None] + table[None, :]
        if self.level == 0:
            incl = np.concatenate([incl, self._normal[:, None] + _NORMAL_TABLE[None, :]], axis=1)
        incl = np.clip(incl, -_STEEPEST, _STEEPEST)
        ok, xt, tabs = _interface_tables(self.section, self.xy, incl, self.hypothesis, self.overrides, self.brk,
                                         self.kh, self.d)
        F = self.fs
        Fk, idx = _least_f(F if np.isfinite(F) else 1e3, xt, ok, self.tb, self.nb, self.Cb, self.Tb, self.Ub,
                           self.Ftot, *tabs)
        self.level += 1
        if not (np.isfinite(Fk) and Fk <= F):
            self.done = True
            return
        self.fs, self.centre = Fk, incl[np.arange(n1), idx]
        self.done = self.level == len(_TABLES)

    def result(self) -> BlockMechanism:
        return _result(self.section, self.fs, self.xy, self.centre)


def _interface_tables(section, xy, incl, hypothesis, overrides, brk, kh, d):
    """Admissibility, top abscissae and the work-equation terms of interfaces at inclinations (n - 1, K)."""
    incl = np.ascontiguousarray(incl, float)
    key = (id(section), "interfaces", xy.tobytes(), xy.shape, incl.tobytes(), incl.shape, kh, d)
    ok, xt, si, mi, geo, Fr = _kept(key, section, lambda: _interface_geometry(section, xy, incl, brk, kh, d))
    Ci, Ti, Ui, _ = _line_terms(section, None, None, hypothesis, overrides, geo)
    return ok, xt, (si, mi, Ci, Ti, Ui, Fr)


def _interface_geometry(section, xy, incl, brk, kh, d):
    top, ok = _tops(section, xy, incl)
    dr = np.radians(incl)
    si = np.stack([np.sin(dr), np.cos(dr)], -1)
    mi = np.stack([np.cos(dr), -np.sin(dr)], -1)          # opening normal, toward +x
    geo = _line_geometry(section, np.broadcast_to(xy[1:-1, None, :], top.shape), top)
    Wr, Qx, Qy = _right_of(section, xy, top, brk)
    Fr = np.ascontiguousarray(np.stack([kh * d * Wr + Qx, -Wr + Qy], -1))
    return ok, np.ascontiguousarray(top[..., 0]), si, mi, geo, Fr


def _result(section, F, xy, incl):
    top, _ = _tops(section, xy, incl[:, None]) if len(incl) else (np.zeros((0, 1, 2)), None)
    return BlockMechanism(float(F), np.asarray(incl, float), top[:, 0, :])


def warm_up():
    """Compile (or load) the kernels under their compile lock, by a tiny evaluation of the types real
    calls pass (a worker calls this before its first searched realisation)."""
    from ..examples import simple_slope
    from ..methods.compiled import first_call
    from ..strength import Material
    from .upper_bound_kernels import _least_f, _solve_f

    sec = simple_slope(10.0, 2.0, 4.0, material=Material("warm-up", unit_weight=20.0, c=10.0, phi=20.0))
    with first_call(_least_f):
        upper_bound_fs(sec, np.array([[0.0, 0.0], [15.0, -2.0], [30.0, 10.0]]), hypothesis="drained")
    with first_call(_solve_f):
        upper_bound_fs(sec, np.array([[0.0, 0.0], [30.0, 10.0]]), hypothesis="drained")
