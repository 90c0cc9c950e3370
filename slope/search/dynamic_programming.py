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

from ..errors import InputError
from ..methods.compiled import FROM_PYTHON
from .dp_grid import NodeGrid, SegmentTerms, band_grid, segment_terms, start_xy as _start_xy
from ..strength import base_strength
from ..surfaces import Polyline

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


@njit(cache=True, **FROM_PYTHON)
def _dp(Rc, T, tp, ca, sa, slope, ok, F, theta, entry, leave):  # pragma: no cover - compiled
    """Least ΣQ over admissible paths of the grid at trial F and interslice inclination θ.

    Returns (best value, last segment's column j, its node a at j; pred table).
    pred[j, b, a] = node at column j-1 before segment (j, a → b); -1 when a is the start.
    """
    ns, nn, _ = Rc.shape
    big = 1e300
    cth, sth = np.cos(theta), np.sin(theta)
    # np.full, not np.empty and loops: those saved 0.1 s of compilation once but cost 3 % of the
    # search's time in every run (15 µs a call)
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
    from ..bank import build_bank
    from ..methods import factor_of_safety

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
        The path of every pass that may replace the start and the start
        surface, so the critical surface is never above the start. A path
        less critical than the start as a mechanism of rigid blocks
        (:mod:`slope.search.path_acceptance`) is not evaluated and is counted
        in ``rejected`` under its reason.
    """
    from .circles import centre_lattice
    from .evaluate import evaluate_surfaces

    if start is None:
        first = centre_lattice(section, hypothesis=hypothesis, method=method, n_slices=n_slices, **evaluate_opts)
        if first.critical is None:
            raise InputError("dynamic-programming search: the centre-lattice search found no usable circle to "
                             "start from; give start=")
        start = first.critical
    from .path_acceptance import accepted_paths, add_refused

    ov = evaluate_opts.get("overrides")
    paths = dp_surface(section, start, hypothesis=hypothesis, overrides=ov if callable(ov) else None,
                       settings=settings, n_slices=n_slices)
    # a path replaces the start only if it is at least as critical as a mechanism of rigid blocks
    paths, refused = accepted_paths(section, paths, start, hypothesis=hypothesis, overrides=ov)
    res = evaluate_surfaces(section, paths + [start], search=DP_FAMILY, method=method, hypothesis=hypothesis,
                            n_slices=n_slices, **evaluate_opts)
    return add_refused(res, refused)
