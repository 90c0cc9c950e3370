"""Node grids of the dynamic-programming search (:mod:`slope.search.dynamic_programming`): bands and segment terms.

A grid is columns of nodes (section frame); node 0 of each column lies on
the ground. Every segment between two nodes of consecutive columns is one
slice of a candidate path; its load terms (weight, top loads, pore
pressure) depend on the geometry only, so a grid's terms are computed once
and reused with any strengths (every realisation of a run).

Units: m, kN/m, kPa.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..bank import _column_weight, _ponded_top, column_stresses
from ..slices import SliceBank
from ..surfaces import Circle, cut_ground

__all__ = ["NodeGrid", "SegmentTerms", "band_grid", "segment_terms", "start_xy"]


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
    # the soil column is the trapezoid of the end columns, as for the weight
    zone, sig_tot, u = column_stresses(section, xm_sec, ybase, ytop, wsum)
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


def start_xy(section, start, n=40):
    """A start surface as polyline vertices (section frame), ends on the ground."""
    x1, x2 = cut_ground(section, start)
    xs = np.linspace(x1, x2, n)
    if not isinstance(start, Circle):  # its bends are kept exactly
        v = start.points[:, 0]
        xs = np.union1d(xs, v[(v > x1) & (v < x2)])
    ys, _, _ = _surface_y(section, start, xs)
    ys[0], ys[-1] = section.ground_y(x1), section.ground_y(x2)
    return np.c_[xs, ys]
