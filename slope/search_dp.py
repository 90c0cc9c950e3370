"""Non-circular critical surfaces by dynamic programming (after Baker 1980).

Baker, R. (1980). Determination of the critical slip surface in slope
stability computations. Int. J. Numer. Anal. Methods Geomech. 4, 333-359.

A slip surface is a path through a grid of nodes: columns of nodes at
abscissae ``x_0 < x_1 < ...``, node 0 of every column on the ground line.
Between two columns a path is a straight segment, which is one slice. For
Spencer's method at a fixed interslice inclination θ and a trial factor of
safety F, the net interslice force a slice takes,

    Q = [c l - u l tanφ + (A cos α - B sin α) tanφ - F (B cos α + A sin α)]
        / [F cos(α - θ) + tanφ sin(α - θ)],

depends on that slice alone (A: weight and top load, B: horizontal load,
as in :mod:`slope.methods.terms`), and the surface is in force equilibrium
when ΣQ = 0. ΣQ falls as F grows, so a surface of the grid has a factor of
safety below F exactly when its ΣQ(F) < 0: the path of least ΣQ, found by
dynamic programming column by column, answers "is there a surface below F?"
and its own root of ΣQ(F) = 0 is the next, lower trial F (the iteration of
Dinkelbach 1967 for a ratio, which ends when no path has ΣQ < 0). Baker
then re-solves with the interslice inclination of a full Spencer solution
on the path found; we do the same and finally judge every path with the
regular method of slices (:func:`slope.search.evaluate_surfaces`), so the
factor of safety reported is that of the engine, never of the grid.

Paths are kept kinematically admissible as in :func:`slope.search.refine`
(the surface's slope dy/dx never decreases along +x: the sliding mass has no
upward kink that would lock it), which makes the state of the recursion the
last segment (its two nodes) rather than the last node.

The grid is a band around a start surface (the best circle or block of a
bank): a wide band first, then narrower bands around each path found, so
the vertices move toward the weak zones step by step ("band refinement").

Units: m, kN/m, kPa, degrees at the user level.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numba import njit

from .bank import _column_weight, _ponded_top
from .errors import InputError
from .slices import SliceBank
from .strength import base_strength
from .surfaces import Circle, Polyline, cut_ground

__all__ = ["DP_FAMILY", "NodeGrid", "band_grid", "segment_terms", "first_band", "least_path", "dp_surface", "DPSettings",
           "dynamic_programming"]

DP_FAMILY = "dynamic-programming"
_M_ALPHA_MIN = 0.2  # as Bishop's default: slices with cos(α-θ)(1 + tanφ tan(α-θ)/F) below it are left out
_SLOPE_TOL = 1e-9


@dataclass(frozen=True)
class DPSettings:
    """Size of the node grids and of the band refinement.

    Parameters
    ----------
    columns : int
        Columns of nodes across the start surface (>= 3).
    nodes : int
        Nodes per column below the ground node (>= 3).
    passes : int
        Grids: the first a band of half-width ``band`` times the start
        surface's greatest depth, each next one around the previous path
        and two node spacings wide (>= 1).
    band : float
        Half-width of the first band as a fraction of the start surface's
        greatest depth (-).
    margin : float
        Columns extend beyond the start surface's ends by this fraction of
        its horizontal extent (-), so the ends can move.
    theta_rounds : int
        Solutions at a fixed interslice inclination; after each, θ is taken
        from Spencer's method on the path found (Baker 1980) (>= 1).
    """

    columns: int = 25
    nodes: int = 21
    passes: int = 3
    band: float = 0.6
    margin: float = 0.15
    theta_rounds: int = 2

    def __post_init__(self):
        for name, lo in (("columns", 3), ("nodes", 3), ("passes", 1), ("theta_rounds", 1)):
            v = getattr(self, name)
            if isinstance(v, bool) or int(v) != v or int(v) < lo:
                raise InputError(f"dynamic-programming {name}: {v!r}; give a whole number >= {lo}")
        for name in ("band", "margin"):
            v = float(getattr(self, name))
            if not (np.isfinite(v) and v > 0):
                raise InputError(f"dynamic-programming {name}: {getattr(self, name)!r}; give a fraction > 0")


@dataclass
class NodeGrid:
    """Columns of nodes (section frame, m): ``x`` (nc,) increasing, ``y`` (nc, nn), ``y[:, 0]`` on the ground."""

    x: np.ndarray
    y: np.ndarray


def _surface_y(section, surface, x):
    """Elevation of a start surface at x (ground outside its cuts), m."""
    x1, x2 = cut_ground(section, surface)
    g = section.ground_y(x)
    if isinstance(surface, Circle):
        ys = surface.yc - np.sqrt(np.maximum(surface.radius ** 2 - (x - surface.xc) ** 2, 0.0))
    else:
        ys = np.interp(x, surface.points[:, 0], surface.points[:, 1])
    inside = (x > x1) & (x < x2)
    return np.where(inside, np.minimum(ys, g), g), x1, x2


def band_grid(section, path_x, path_y, columns, nodes, half_width, margin, keep_x=()):
    """Node grid in a band about a path (section frame).

    Parameters
    ----------
    path_x, path_y : ndarray, m
        The path (ends on the ground); outside it the band follows the ground.
    columns, nodes : int
        Columns (the ground's vertices in the range are added) and nodes
        per column below the ground node.
    half_width : float, m
        Nodes lie from ``half_width`` above to ``half_width`` below the path,
        clipped to the ground and the section base.
    margin : float, m
        Columns extend this far beyond the path's ends.
    keep_x : sequence of float, m
        Abscissae that must be columns (the path's own vertices: with an odd
        ``nodes`` the path itself is then a path of the grid, so a pass never
        loses what the previous one found).
    """
    pad = 1e-6 * max(1.0, float(np.ptp(section.ground[:, 1])))
    xa = max(section.x_min + pad, float(path_x[0]) - margin)
    xb = min(section.x_max - pad, float(path_x[-1]) + margin)
    x = np.linspace(xa, xb, int(columns))
    # the ground's vertices are columns too: between columns the ground is then
    # straight, and a segment between two nodes below it stays below it
    gx = section.ground[:, 0]
    x = np.union1d(x, gx[(gx > xa) & (gx < xb)])
    kx = np.asarray(keep_x, float)
    x = np.union1d(x, kx[(kx > xa) & (kx < xb)])
    x = x[np.r_[True, np.diff(x) > 1e-6 * max(1.0, xb - xa)]]  # no zero-width column intervals
    g = section.ground_y(x)
    inside = (x > path_x[0]) & (x < path_x[-1])
    yc = np.where(inside, np.interp(x, path_x, path_y), g)
    off = np.linspace(half_width, -half_width, int(nodes))
    if int(nodes) % 2 == 0:  # the path's own elevation is always a node
        off = np.r_[off[:int(nodes) // 2], 0.0, off[int(nodes) // 2:]]
    y = yc[:, None] + off[None, :]
    gap = 1e-3 * max(half_width, pad)
    y = np.clip(y, section.base_y + pad, (g - gap)[:, None])
    return NodeGrid(x, np.concatenate([g[:, None], y], axis=1))


def _segment_bank(section, grid: NodeGrid, direction: int) -> SliceBank:
    """Every segment between consecutive columns as a one-slice surface.

    Rows in the order (column j, node a at j, node b at j+1). The weight of
    a segment's slice is the trapezoid rule over the soil columns above its
    two end nodes (computed once per node, not per segment: the ground is
    straight between columns, so the rule is exact unless a zone or water
    boundary bends inside the column); top loads (ponded water, strips)
    depend on the column interval only; pore pressure, zone and vertical
    stress are taken at the base midpoint as :func:`slope.bank.build_bank`
    does. The grid only guides the search: every path is judged afterwards
    on a regular slice bank.
    """
    nc, nn = grid.y.shape
    d = int(direction)
    J, A_, B_ = np.meshgrid(np.arange(nc - 1), np.arange(nn), np.arange(nn), indexing="ij")
    xl_s, xr_s = grid.x[J].ravel(), grid.x[J + 1].ravel()
    yl_s, yr_s = grid.y[J, A_].ravel(), grid.y[J + 1, B_].ravel()
    if d > 0:
        xl, xr, ybl, ybr = xl_s, xr_s, yl_s, yr_s
    else:
        xl, xr, ybl, ybr = -xr_s, -xl_s, yr_s, yl_s
    m = xl.size
    width = xr - xl
    xm = 0.5 * (xl + xr)
    ybase = 0.5 * (ybl + ybr)
    alpha = np.arctan2(ybl - ybr, width)
    gcol = section.ground_y(grid.x)
    Wn = _column_weight(section, np.repeat(grid.x, nn), grid.y.ravel(),
                        np.repeat(gcol, nn)).reshape(nc, nn)  # kPa: soil column above each node
    wsum = 0.5 * (Wn[J, A_] + Wn[J + 1, B_]).ravel()
    weight = width * wsum
    water, loads = section.water, section.loads
    lo_i, hi_i = grid.x[:-1], grid.x[1:]
    qv_i = np.zeros(nc - 1)
    qh_i = np.zeros(nc - 1)
    if water is not None and water.phreatic is not None:
        fv, fh, _ = _ponded_top(section, water, lo_i, hi_i)
        qv_i += fv
        qh_i += d * fh
    if loads is not None:
        for s_ in loads.strips:
            qv_i += s_.force_on(lo_i, hi_i)[0]
    jj = J.ravel()
    qv, qh = qv_i[jj], qh_i[jj]
    xm_sec = d * xm
    ytop = section.ground_y(xm_sec)
    eps = 1e-7 * max(1.0, float(np.ptp(section.ground[:, 1])))
    zone = section.zone_at(xm_sec, ybase + eps)
    sig_soil = wsum  # trapezoid of the end columns, as for the weight
    sig_tot = sig_soil.copy()
    if loads is not None:
        sig_tot += loads.surcharge(xm_sec)
    if water is not None:
        if water.phreatic is not None:
            sig_tot += water.gamma_w * np.maximum(water.phreatic_y(xm_sec) - ytop, 0.0)
        u = water.pore_pressure(xm_sec, ybase, zone, section.zone_names, sig_soil)
    else:
        u = np.zeros(m)
    valid = (zone >= 0) & (width > 0)
    zone = np.where(valid, zone, 0)  # outside every zone: left out of the paths (valid False)
    col = lambda v: np.asarray(v, float).reshape(m, 1)  # noqa: E731 - one slice per row
    nan = np.full(m, np.nan)
    return SliceBank(
        direction=np.full(m, d), x_left=col(xl), x_right=col(xr), width=col(width), x_mid=col(xm),
        y_base_left=col(ybl), y_base_right=col(ybr), y_base=col(ybase), y_top_left=col(section.ground_y(d * xl)),
        y_top_right=col(section.ground_y(d * xr)), y_top=col(ytop), alpha=col(alpha),
        base_length=col(width / np.cos(alpha)), weight=col(weight), y_centroid=col(ybase), u_base=col(u),
        sigma_v_eff=col(sig_tot - u), depth=col(ytop - ybase), zone=zone.reshape(m, 1), q_v=col(qv), q_h=col(qh),
        x_q=col(xm), y_q=col(ytop), kh=float(loads.kh) if loads is not None else 0.0,
        crack_force=np.zeros(m), crack_y=nan, centre_x=nan, centre_y=nan, radius=nan, valid=valid,
        reason=np.where(valid, "", "outside every zone").astype(object),
        zone_names=section.zone_names, zone_materials=section.zone_materials)


@dataclass
class SegmentTerms:
    """Per-segment terms of a grid, shape (nc - 1, nn, nn): [column j, node at j, node at j+1]."""

    grid: NodeGrid
    bank: SliceBank
    R0: np.ndarray  # A cos α - B sin α  (kN/m), normal load
    T: np.ndarray   # B cos α + A sin α  (kN/m), driving load along the base
    ul: np.ndarray
    length: np.ndarray
    cos_a: np.ndarray
    sin_a: np.ndarray
    slope: np.ndarray  # dy/dx of the segment, section frame
    ok: np.ndarray
    depth: float = float("nan")  # greatest depth of the start surface (m), sets the band widths


def segment_terms(section, grid: NodeGrid, direction: int) -> SegmentTerms:
    """Geometry and load terms of every segment of a grid (strength-free: reusable across realisations)."""
    bank = _segment_bank(section, grid, direction)
    nc, nn = grid.y.shape
    shp = (nc - 1, nn, nn)
    a = bank.alpha[:, 0]
    ca, sa = np.cos(a), np.sin(a)
    W = bank.weight[:, 0]
    A = W + bank.q_v[:, 0]
    B = bank.kh * W + bank.q_h[:, 0]
    dx = np.diff(grid.x)
    slope = (grid.y[1:, None, :] - grid.y[:-1, :, None]) / dx[:, None, None]
    r = lambda v: np.ascontiguousarray(np.reshape(v, shp), dtype=float)  # noqa: E731
    ok = np.reshape(bank.valid, shp) & np.isfinite(r(A)) & np.isfinite(r(ca))
    return SegmentTerms(grid=grid, bank=bank, R0=r(A * ca - B * sa), T=r(B * ca + A * sa),
                        ul=r(bank.u_base[:, 0] * bank.base_length[:, 0]), length=r(bank.base_length[:, 0]),
                        cos_a=r(ca), sin_a=r(sa), slope=np.ascontiguousarray(slope), ok=np.ascontiguousarray(ok))


@njit(cache=True)
def _dp(Rc, T, tp, ca, sa, slope, ok, F, theta, entry, leave):  # pragma: no cover - compiled
    """Least ΣQ over admissible paths of the grid at trial F and interslice inclination θ.

    Returns (best value, last segment's column j, its node a at j; pred table).
    pred[j, b, a] = node at column j-1 before segment (j, a → b); -1 when a is the start.
    """
    ns, nn, _ = Rc.shape
    big = 1e300
    cth, sth = np.cos(theta), np.sin(theta)
    V = np.full((nn, nn), big)
    pred = np.full((ns, nn, nn), -2, np.int64)
    best, bj, ba = big, -1, -1
    for j in range(ns):
        Vn = np.full((nn, nn), big)
        for a in range(nn):
            for b in range(nn):
                if not ok[j, a, b]:
                    continue
                if a == 0 and (b == 0 or not entry[j]):
                    continue
                cam = ca[j, a, b] * cth + sa[j, a, b] * sth
                sam = sa[j, a, b] * cth - ca[j, a, b] * sth
                dn = F * cam + tp[j, a, b] * sam
                if dn < _M_ALPHA_MIN * F:
                    continue
                q = (Rc[j, a, b] - F * T[j, a, b]) / dn
                if a == 0:
                    v, p = q, -1
                else:
                    if j == 0:
                        continue
                    v, p = big, -2
                    s = slope[j, a, b] + _SLOPE_TOL
                    for pp in range(nn):
                        w = V[a, pp]
                        if w < v and slope[j - 1, pp, a] <= s:
                            v, p = w, pp
                    if p == -2:
                        continue
                    v += q
                Vn[b, a] = v
                pred[j, b, a] = p
                if b == 0 and a != 0 and leave[j + 1] and v < best:
                    best, bj, ba = v, j, a
        V = Vn
    return best, bj, ba, pred


def _backtrack(pred, j, a):
    """Node index per column of the path ending with segment (j, a → 0): (first column, nodes)."""
    nodes = [0, a]
    b = 0
    while True:
        p = pred[j, b, a]
        if p == -1:
            break
        nodes.append(int(p))
        b, a, j = a, p, j - 1
    return j, nodes[::-1]


def _path_root(terms, c, tp, first, nodes, theta, F_hint):
    """Root F of ΣQ(F) = 0 along one path.

    Where every denominator F cos(α-θ) + tanφ sin(α-θ) is positive, ΣQ falls
    as F grows, so "ΣQ(F) is finite and negative" is false below the root
    and true above it: the root is bracketed on a geometric grid of trial
    values, then the bracket is narrowed on finer grids (all trials of a
    grid at once).
    """
    j = np.arange(first, first + len(nodes) - 1)
    a, b = np.asarray(nodes[:-1]), np.asarray(nodes[1:])
    t = tp[j, a, b]
    Rc = c[j, a, b] * terms.length[j, a, b] - terms.ul[j, a, b] * t + terms.R0[j, a, b] * t
    T = terms.T[j, a, b]
    cam = terms.cos_a[j, a, b] * np.cos(theta) + terms.sin_a[j, a, b] * np.sin(theta)
    sam = terms.sin_a[j, a, b] * np.cos(theta) - terms.cos_a[j, a, b] * np.sin(theta)

    def above(F):  # F: (k,) trial values -> (k,) bool
        dn = F[:, None] * cam + t * sam
        with np.errstate(divide="ignore", invalid="ignore"):
            g = np.sum((Rc - F[:, None] * T) / dn, axis=1)
        return np.all(dn > 0, axis=1) & (g < 0)

    F0 = max(float(F_hint), 1e-6)
    grid = F0 * np.geomspace(1e-3, 1e3, 121)
    ab = above(grid)
    if not ab.any():
        return np.nan
    i = int(np.argmax(ab))
    lo, hi = (grid[i - 1] if i > 0 else 0.0), grid[i]
    for _ in range(4):
        trial = np.linspace(lo, hi, 33)
        ab = above(trial)
        i = int(np.argmax(ab))
        lo, hi = (trial[i - 1] if i > 0 else lo), trial[i]
        if hi - lo <= 1e-9 * hi:
            break
    return hi


def least_path(terms: SegmentTerms, c, tan_phi, F_start, theta=0.0, entry=None, leave=None, max_rounds=30):
    """Critical path of one grid at a fixed interslice inclination θ.

    Parameters
    ----------
    terms : SegmentTerms
    c, tan_phi : ndarray (nc - 1, nn, nn)
        Base strengths of every segment (kPa, -).
    F_start : float
        First trial factor of safety (e.g. the start surface's).
    theta : float, rad
        Interslice inclination (Spencer's θ).
    entry, leave : ndarray of bool (nc,), optional
        Columns where a path may start / end on the ground (default all).

    Returns
    -------
    (F, xy) : the path's root of ΣQ = 0 and its vertices (k, 2) in the
    section frame, or (nan, None) when the grid holds no admissible path.
    """
    nc, nn = terms.grid.y.shape
    entry = np.ones(nc, bool) if entry is None else np.asarray(entry, bool)
    leave = np.ones(nc, bool) if leave is None else np.asarray(leave, bool)
    tp = np.ascontiguousarray(np.broadcast_to(tan_phi, terms.T.shape), dtype=float)
    cc = np.ascontiguousarray(np.broadcast_to(c, terms.T.shape), dtype=float)
    Rc = cc * terms.length - terms.ul * tp + terms.R0 * tp
    ok = terms.ok & np.isfinite(Rc)
    F = float(F_start) if np.isfinite(F_start) and F_start > 0 else 1.0
    found = None
    # Dinkelbach's iteration descends from above the grid's optimum: below
    # it the least ΣQ is a positive sliver (any thin surface), which says
    # nothing about the critical one; raise F until some path has ΣQ < 0.
    for _ in range(12):
        best, j, a, pred = _dp(Rc, terms.T, tp, terms.cos_a, terms.sin_a, terms.slope, ok, F, float(theta),
                               entry, leave)
        if j < 0 or best < 0:
            break
        F *= 1.6
    for _ in range(int(max_rounds)):
        if found is not None:
            best, j, a, pred = _dp(Rc, terms.T, tp, terms.cos_a, terms.sin_a, terms.slope, ok, F, float(theta),
                                   entry, leave)
        if j < 0:
            break
        first, nodes = _backtrack(pred, j, a)
        Fp = _path_root(terms, cc, tp, first, nodes, theta, F)
        if not np.isfinite(Fp):
            break
        if found is None or Fp < found[0]:
            found = (Fp, first, nodes)
        # Dinkelbach: stop when no path of the grid is below the trial F
        if best >= 0 or Fp >= F * (1 - 1e-7):
            break  # no path of the grid below F (or round-off): F is the grid's optimum
        F = Fp
    if found is None:
        return np.nan, None
    Fp, first, nodes = found
    cols = np.arange(first, first + len(nodes))
    return Fp, np.c_[terms.grid.x[cols], terms.grid.y[cols, nodes]]


def _strengths(seg: SegmentTerms, section, hypothesis, overrides):
    ov = overrides(seg.bank) if callable(overrides) else overrides
    c, tp = base_strength(seg.bank, section.materials, hypothesis, ov)
    shp = seg.T.shape
    c = np.reshape(np.asarray(c)[..., 0], shp) if np.ndim(c) == 2 else np.reshape(np.asarray(c)[0, :, 0], shp)
    tp = np.reshape(np.asarray(tp)[..., 0], shp) if np.ndim(tp) == 2 else np.reshape(np.asarray(tp)[0, :, 0], shp)
    return c, tp


def _spencer(section, xy, hypothesis, overrides, n_slices):
    """Spencer's F and θ (rad) on one polyline; NaN when not converged or the surface is rejected."""
    from .bank import build_bank
    from .methods import factor_of_safety

    bank = build_bank(section, [Polyline(xy)], n_slices)
    if not bank.valid[0]:
        return np.nan, np.nan
    ov = overrides(bank) if callable(overrides) else None
    c, tp = base_strength(bank, section.materials, hypothesis, ov)
    r = factor_of_safety(bank, c, tp, method="spencer")
    if not bool(np.asarray(r.converged).ravel()[0]):
        return np.nan, np.nan
    return float(np.asarray(r.fs).ravel()[0]), float(np.arctan(np.asarray(r.lam).ravel()[0]))


def dp_surface(section, start, *, hypothesis="drained", overrides=None, settings: DPSettings | None = None,
               n_slices=30, first_terms=None, start_solution=None):
    """Critical polyline by dynamic programming in bands about a start surface.

    Parameters
    ----------
    section : Section
    start : Circle or Polyline
        Start surface (the best circle or block of a bank).
    hypothesis : {"drained", "undrained"}
    overrides : callable, optional
        ``f(bank) -> dict`` of base strength overrides (see
        :func:`slope.strength.base_strength`), called with each grid's
        segment bank and with the slice bank of each path: the strengths of
        one realisation of random fields.
    settings : DPSettings
    n_slices : int
        Slices of the Spencer solutions that set θ between rounds.
    first_terms : SegmentTerms, optional
        The first band's segment terms when already built (they depend only
        on the geometry and the start, so a caller may keep them across
        realisations; see :func:`first_band`).
    start_solution : (float, float), optional
        F and Spencer's θ (rad) of the start surface when known (else
        Spencer's method is run on it): the first trial F and θ.

    Returns
    -------
    list of Polyline
        The path of every pass (the last the most refined); empty when no
        grid held an admissible path. Their factors of safety are for the
        caller to judge with the method of slices of its choice.
    """
    if overrides is not None and not callable(overrides):
        raise InputError("dynamic-programming search: strength overrides must be a function of the slice bank")
    st = DPSettings() if settings is None else settings
    if start_solution is None:
        F, theta = _spencer(section, _start_xy(section, start), hypothesis, overrides, n_slices)
    else:
        F, theta = (float(v) for v in start_solution)
    if not np.isfinite(theta):
        F, theta = np.nan, 0.0
    seg = first_band(section, start, st) if first_terms is None else first_terms
    depth = seg.depth
    paths = []
    for k in range(st.passes):
        c, tp = _strengths(seg, section, hypothesis, overrides)
        best_xy, best_F, th = None, np.inf, theta
        for rnd in range(st.theta_rounds):
            Fp, xy = least_path(seg, c, tp, F if np.isfinite(F) else 1.0, th)
            if xy is None:
                break
            if Fp < best_F:
                best_F, best_xy = Fp, xy
            if rnd + 1 == st.theta_rounds:
                break
            _, th_new = _spencer(section, xy, hypothesis, overrides, n_slices)
            if not np.isfinite(th_new) or abs(th_new - th) < 1e-3:
                break
            th = th_new
        if best_xy is None:
            break
        paths.append(Polyline(best_xy, family=DP_FAMILY))
        F, theta = best_F, th
        if k + 1 < st.passes:
            spacing = float(np.median(np.abs(np.diff(seg.grid.y[:, 1:], axis=1))))
            grid = band_grid(section, best_xy[:, 0], best_xy[:, 1], st.columns, st.nodes,
                             max(2.0 * spacing, 1e-3 * depth), 2.0 * float(np.median(np.diff(seg.grid.x))),
                             keep_x=best_xy[:, 0])
            seg = segment_terms(section, grid, seg.bank.direction[0])
            seg.depth = depth
    return paths


def _start_xy(section, start, n=40):
    """A start surface as polyline vertices (section frame), ends on the ground."""
    x1, x2 = cut_ground(section, start)
    xs = np.linspace(x1, x2, n)
    ys, _, _ = _surface_y(section, start, xs)
    ys[0], ys[-1] = section.ground_y(x1), section.ground_y(x2)
    return np.c_[xs, ys]


def first_band(section, start, settings: DPSettings | None = None) -> SegmentTerms:
    """Segment terms of the first (widest) band about a start surface."""
    st = DPSettings() if settings is None else settings
    xy = _start_xy(section, start, 400)
    x1, x2 = xy[0, 0], xy[-1, 0]
    depth = float(np.max(section.ground_y(xy[:, 0]) - xy[:, 1]))
    if not depth > 0:
        raise InputError("dynamic-programming search: the start surface has no depth below the ground")
    d = 1 if section.ground_y(x1) > section.ground_y(x2) else -1
    keep = start.points[:, 0] if isinstance(start, Polyline) else (x1, x2)  # the start's vertices are columns
    grid = band_grid(section, xy[:, 0], xy[:, 1], st.columns, st.nodes, st.band * depth, st.margin * (x2 - x1),
                     keep_x=np.clip(keep, x1, x2))
    seg = segment_terms(section, grid, d)
    seg.depth = depth
    return seg


def dynamic_programming(section, *, start=None, settings: DPSettings | None = None, method="spencer",
                        hypothesis="drained", n_slices=40, **evaluate_opts):
    """``dynamic-programming`` search: paths by :func:`dp_surface` from a start surface, evaluated.

    Parameters
    ----------
    start : Circle or Polyline, optional
        Default: the critical circle of a ``centre-lattice`` search with the
        same method and hypothesis.
    settings : DPSettings
    method, hypothesis, n_slices, **evaluate_opts
        As for :func:`slope.search.evaluate_surfaces` (``overrides`` as a
        function of the slice bank also steers the grids).

    Returns
    -------
    SearchResult
        The path of every pass and the start surface, so the critical
        surface is never above the start.
    """
    from .search import centre_lattice, evaluate_surfaces

    if start is None:
        first = centre_lattice(section, hypothesis=hypothesis, method=method, n_slices=n_slices, **evaluate_opts)
        if first.critical is None:
            raise InputError("dynamic-programming search: the centre-lattice search found no usable circle to "
                             "start from; give start=")
        start = first.critical
    ov = evaluate_opts.get("overrides")
    paths = dp_surface(section, start, hypothesis=hypothesis, overrides=ov if callable(ov) else None,
                       settings=settings, n_slices=n_slices)
    return evaluate_surfaces(section, paths + [start], search=DP_FAMILY, method=method, hypothesis=hypothesis,
                             n_slices=n_slices, **evaluate_opts)
