"""Build a :class:`~slope.slices.SliceBank` from a section and many surfaces.

Each surface is cut into ``n_slices`` slices of equal width between its
upslope and downslope ends. A slice's base is the chord of the surface
between the slice sides; its top is the ground line itself. Slice weights are
integrated exactly in the vertical (zone polygons, moist above / saturated
below the phreatic surface, see :meth:`Section.column_lengths`) and by
``n_quad``-point Gauss–Legendre quadrature across the width, which is exact
unless a ground, zone or water vertex falls inside a slice (the error then
falls as the slice width squared).

Circles are vectorised; polylines go through the same array code with their
elevations interpolated one surface at a time. Rejected surfaces stay in the
bank with ``valid = False``, a ``reason`` and NaN geometry.

Units: m, kN/m, kPa, rad (see :mod:`slope.slices` for the sliding frame).
"""
from __future__ import annotations

from typing import Sequence

import numpy as np

from .errors import InputError
from .slices import SliceBank
from .surfaces import Circle, Circles, Polyline, circle_cuts, polyline_cuts
from .water import GAMMA_W

__all__ = ["build_bank", "vertical_effective_stress", "unit_weight_parts", "scale_unit_weights", "section_with_unit_weights",
           "WEIGHT_DEPENDENT", "NO_DRIVING_REASON"]

# slice quantities linear in the unit weights (weight · y_centroid stands for y_centroid)
WEIGHT_DEPENDENT = ("weight", "weight_moment", "sigma_v_eff", "u_base")

#: a circle is rejected as having no driving moment when the moment of its
#: loads about its centre is below this fraction of sum(|W| + |horizontal
#: loads|) x its horizontal extent: round-off level (a symmetric section's
#: axis gives about 1e-16), so no circle with a real driving moment, however
#: small, is touched
NO_DRIVING_MOMENT = 1e-9
NO_DRIVING_REASON = "no driving moment: the loads balance about the circle centre"

_CRACK_SAMPLES = 256  # points along a surface to locate a tension crack before refining


def build_bank(section, surfaces, n_slices: int = 40, n_quad: int = 3) -> SliceBank:
    """Slice geometry, weights, pore pressures and loads of many surfaces.

    Parameters
    ----------
    section : Section
    surfaces : Circle, Circles, Polyline or a sequence of Circle/Polyline
        Trial surfaces (section frame).
    n_slices : int
        Slices per surface (same for all).
    n_quad : int
        Gauss points per slice width for weights and top loads.

    Returns
    -------
    SliceBank
        One row per surface, in the order given; rejected surfaces flagged
        (``valid``, ``reason``) and filled with NaN.
    """
    n_slices = int(n_slices)
    if n_slices < 2:
        raise InputError(f"n_slices must be >= 2, got {n_slices}")
    if not 1 <= int(n_quad) <= 10:
        raise InputError(f"n_quad must be between 1 and 10, got {n_quad}")
    if isinstance(surfaces, (Circle, Polyline)):
        surfaces = [surfaces]
    if isinstance(surfaces, Circles):
        circ = surfaces
        x1, x2, reason = circle_cuts(section, circ.xc, circ.yc, circ.radius)
        kind = "circle"
        data = (circ.xc, circ.yc, circ.radius)
    else:
        surfaces = list(surfaces)
        if not surfaces:
            raise InputError("surfaces: empty; give at least one Circle or Polyline")
        if all(isinstance(s, Circle) for s in surfaces):
            return build_bank(section, Circles.of(surfaces), n_slices, n_quad)
        for s in surfaces:
            if not isinstance(s, (Circle, Polyline)):
                raise InputError(f"surfaces: expected Circle or Polyline, got {type(s).__name__}")
        cut = []
        for s in surfaces:
            if isinstance(s, Circle):
                a, b, r = circle_cuts(section, [s.xc], [s.yc], [s.radius])
                cut.append((a[0], b[0], r[0]))
            else:
                cut.append(polyline_cuts(section, s))
        x1 = np.array([c[0] for c in cut], float)
        x2 = np.array([c[1] for c in cut], float)
        reason = np.array([c[2] for c in cut], dtype=object)
        kind = "mixed"
        data = surfaces
    return _assemble(section, x1, x2, reason, kind, data, n_slices, int(n_quad))


def polyline_sides(a, b, breaks, n):
    """Slice sides from a to b (sliding frame, m) with a side at every break inside (a, b).

    The breaks are added to the sides of ``n - len(breaks)`` equal slices,
    so the count stays ``n`` and every side moves continuously with the
    surface's vertices (an optimiser sees no jumps); with as many breaks as
    slices or more, equal widths (the bends cannot all be followed).

    Returns
    -------
    ndarray (n + 1,)
    """
    tol = 1e-9 * max(1.0, abs(b - a))
    inner = np.unique(np.asarray(breaks, float))
    inner = inner[(inner > a + tol) & (inner < b - tol)]
    m = n - inner.size
    if m < 1:
        inner, m = inner[:0], n
    out = np.sort(np.r_[a + (b - a) / m * np.arange(m + 1), inner])
    out[0], out[-1] = a, b
    return out


_CROSSING_SAMPLES = 801


def zone_crossings(section, poly, x_lo, x_hi):
    """Abscissae (section frame, m) where a polyline passes from one zone into another.

    Found on a sampling of the line (``_CROSSING_SAMPLES`` points, so crossings
    closer together than its spacing may be missed) and refined by bisection
    to 1e-9 of the width; the zone is read just above the line, as the slice
    bases read it.
    """
    return zone_crossings_many(section, [poly], [x_lo], [x_hi])[0]


def zone_crossings_many(section, polys, x_lo, x_hi):
    """:func:`zone_crossings` of several polylines at once (one list of abscissae each).

    The same sampling and bisection, point by point, with the zones of all
    the lines' points read in one call per step (a bank of a few polylines
    otherwise spends most of its time in these calls).
    """
    k = len(polys)
    if k == 0:
        return []
    eps = 1e-7 * max(1.0, float(np.ptp(section.ground[:, 1])))
    x = np.stack([np.linspace(lo, hi, _CROSSING_SAMPLES) for lo, hi in zip(x_lo, x_hi)])
    y = np.stack([p.y(xv) for p, xv in zip(polys, x)])
    z = section.zone_at(x, y + eps)
    # between two zones only: where the line meets the ground (zone -1 above it) is its end, not a crossing
    line, j = np.nonzero((z[:, 1:] != z[:, :-1]) & (z[:, 1:] >= 0) & (z[:, :-1] >= 0))
    if not j.size:
        return [np.empty(0) for _ in range(k)]
    a, b, za = x[line, j], x[line, j + 1], z[line, j]
    steps = np.array([int(np.ceil(np.log2((x[i, 1] - x[i, 0]) / (1e-9 * max(1.0, hi - lo))))) + 1
                      for i, (lo, hi) in enumerate(zip(x_lo, x_hi))])[line]
    groups = [(polys[i], line == i) for i in np.unique(line)]    # the crossings of each line, fixed
    for step in range(int(steps.max())):
        m = 0.5 * (a + b)
        ym = np.empty_like(m)
        for poly, on in groups:
            ym[on] = poly.y(m[on])
        same = section.zone_at(m, ym + eps) == za
        go = step < steps  # each line's own number of steps
        a, b = np.where(go & same, m, a), np.where(go & ~same, m, b)
    mid = 0.5 * (a + b)
    return [mid[line == i] for i in range(k)]


def _surface_y(kind, data, rows, x):
    """Surface elevation at section-frame abscissae x (len(rows), P)."""
    if kind == "circle":
        xc, yc, r = (a[rows, None] for a in data)
        return yc - np.sqrt(np.maximum(r * r - (x - xc) ** 2, 0.0))
    out = np.empty_like(x)
    for k, i in enumerate(rows):
        s = data[i]
        if isinstance(s, Circle):
            out[k] = s.yc - np.sqrt(np.maximum(s.radius ** 2 - (x[k] - s.xc) ** 2, 0.0))
        else:
            out[k] = s.y(x[k])
    return out


def _circle_params(kind, data, m):
    nan = np.full(m, np.nan)
    if kind == "circle":
        return data[0].copy(), data[1].copy(), data[2].copy()
    xc, yc, r = nan.copy(), nan.copy(), nan.copy()
    for i, s in enumerate(data):
        if isinstance(s, Circle):
            xc[i], yc[i], r[i] = s.xc, s.yc, s.radius
    return xc, yc, r


def _assemble(section, x1, x2, reason, kind, data, n, nq) -> SliceBank:
    m = len(x1)
    reason = np.asarray(reason, dtype=object).copy()
    water = section.water
    loads = section.loads
    gw = water.gamma_w if water is not None else GAMMA_W
    ok = np.array([r == "" for r in reason])
    rows = np.nonzero(ok)[0]
    xc, yc, rad = _circle_params(kind, data, m)

    # sense of motion: from the higher cut to the lower; ties by the circle centre
    yg1, yg2 = section.ground_y(np.nan_to_num(x1)), section.ground_y(np.nan_to_num(x2))
    dirn = np.where(yg1 > yg2, 1, -1)
    tie = np.isclose(yg1, yg2, rtol=0, atol=1e-9)
    dirn = np.where(tie & np.isfinite(xc), np.where(xc >= 0.5 * (x1 + x2), 1, -1), dirn)
    dirn = np.where(tie & ~np.isfinite(xc), 1, dirn).astype(int)

    # sliding-frame ends: xa upslope, xb downslope
    xa = np.where(dirn > 0, x1, -x2)
    xb = np.where(dirn > 0, x2, -x1)

    crack_force = np.zeros(m)
    crack_y = np.full(m, np.nan)
    crack = getattr(loads, "crack", None) if loads is not None else None
    if crack is not None and len(rows):
        t = np.linspace(0.0, 1.0, _CRACK_SAMPLES)
        xs_ = xa[rows, None] + (xb - xa)[rows, None] * t
        dep = section.ground_y(dirn[rows, None] * xs_) - _surface_y(kind, data, rows, dirn[rows, None] * xs_)
        deep = dep >= crack.depth
        has = deep.any(axis=1)
        k = np.argmax(deep, axis=1)
        km = np.maximum(k - 1, 0)
        ar = np.arange(len(rows))
        d0, d1 = dep[ar, km], dep[ar, k]
        frac = np.where(d1 > d0, (crack.depth - d0) / np.where(d1 > d0, d1 - d0, 1.0), 0.0)
        xcrack = xs_[ar, km] + frac * (xs_[ar, k] - xs_[ar, km])
        # refine the crack position with a few secant steps on depth(x) = zc
        for _ in range(3):
            xsec = dirn[rows] * xcrack
            f = section.ground_y(xsec) - _surface_y(kind, data, rows, xsec[:, None])[:, 0] - crack.depth
            h = 1e-6 * np.maximum(1.0, np.abs(xb - xa)[rows])
            xsec2 = dirn[rows] * (xcrack + h)
            f2 = section.ground_y(xsec2) - _surface_y(kind, data, rows, xsec2[:, None])[:, 0] - crack.depth
            step = np.where(np.abs(f2 - f) > 0, f * h / (f2 - f), 0.0)
            xcrack = np.clip(xcrack - np.clip(step, -h * 1e4, h * 1e4), xa[rows], xb[rows])
        bad = rows[~has]
        reason[bad] = "never deeper than the tension crack"
        xa[rows[has]] = xcrack[has]
        ok = np.array([r == "" for r in reason])
        rows = np.nonzero(ok)[0]

    shape = (m, n)
    out = {k: np.full(shape, np.nan) for k in (
        "x_left", "x_right", "width", "x_mid", "y_base_left", "y_base_right", "y_base", "y_top_left",
        "y_top_right", "y_top", "alpha", "base_length", "weight", "y_centroid", "u_base", "sigma_v_eff",
        "depth", "q_v", "q_h", "x_q", "y_q")}
    zone = np.full(shape, -1, dtype=int)

    if len(rows):
        d = dirn[rows, None]
        A, B = xa[rows, None], xb[rows, None]
        b = (B - A) / n
        sides = A + b * np.arange(n + 1)  # sliding frame
        sides[:, -1] = B[:, 0]
        if kind != "circle":
            # polylines: a slice side at every bend of the surface and of the ground line, so no
            # slice base cuts across a bend (a thin seam's block would otherwise have bases
            # through the cover); circles keep equal widths
            gx = section.ground[:, 0]
            lines = [k for k, i in enumerate(rows) if isinstance(data[rows[k]], Polyline)]
            ends = [sorted((d[k, 0] * A[k, 0], d[k, 0] * B[k, 0])) for k in lines]
            crossings = zone_crossings_many(section, [data[rows[k]] for k in lines], [e[0] for e in ends],
                                            [e[1] for e in ends])
            for k, cross in zip(lines, crossings):
                brk = np.r_[data[rows[k]].points[:, 0], gx, cross] * d[k, 0]
                sides[k] = polyline_sides(A[k, 0], B[k, 0], brk, n)
        ys = _surface_y(kind, data, rows, d * sides)
        yt = section.ground_y(d * sides)
        # the downslope end lies on the ground; the upslope end too unless cracked
        ys[:, -1] = yt[:, -1]
        if crack is None:
            ys[:, 0] = yt[:, 0]
        xl, xr = sides[:, :-1], sides[:, 1:]
        ybl, ybr = ys[:, :-1], ys[:, 1:]
        width = xr - xl
        xm = 0.5 * (xl + xr)
        ybase = 0.5 * (ybl + ybr)
        alpha = np.arctan2(ybl - ybr, width)

        # Gauss–Legendre across each slice
        tq, wq = np.polynomial.legendre.leggauss(nq)
        tq, wq = 0.5 * (tq + 1.0), 0.5 * wq
        xq = xl[..., None] + width[..., None] * tq  # (r, n, q) sliding frame
        xq_sec = d[..., None] * xq
        yb_q = ybl[..., None] + (ybr - ybl)[..., None] * tq
        yt_q = section.ground_y(xq_sec)
        W_q, M_q = _column_weight(section, xq_sec, yb_q, yt_q, moment=True)
        weight = width * np.sum(wq * W_q, axis=-1)
        wsum = np.sum(wq * W_q, axis=-1)
        ycen = np.where(wsum > 0, np.sum(wq * M_q, axis=-1) / np.where(wsum > 0, wsum, 1.0), ybase)

        # ponded water and strip loads on the slice tops
        qv = np.zeros_like(width)
        qh = np.zeros_like(width)
        mx = np.zeros_like(width)  # Σ x' · vertical force, for the point of application
        if water is not None and water.phreatic is not None:
            fv, fh, fx = _ponded_top(section, water, np.minimum(d * xl, d * xr), np.maximum(d * xl, d * xr))
            qv += fv
            qh += d * fh  # toward +x' in the sliding frame
            mx += d * fx
        if loads is not None:
            for s in loads.strips:
                f, xc_sec = s.force_on(d * xl, d * xr)
                qv += f
                mx += f * d * xc_sec
        xq_app = np.where(qv > 0, mx / np.where(qv > 0, qv, 1.0), xm)
        yq_app = section.ground_y(d * xq_app)

        # base midpoint: zone, stresses, pore pressure
        xm_sec = d * xm
        ytop = section.ground_y(xm_sec)
        depth = ytop - ybase
        eps = 1e-7 * max(1.0, float(np.ptp(section.ground[:, 1])))
        ye = section._edge_y(xm_sec.ravel())    # the zones and the columns read the same edges
        zone_r = section.zone_at(xm_sec.ravel(), (ybase + eps).ravel(), edge_y=ye).reshape(xm.shape)
        sig_soil = _column_weight(section, xm_sec, ybase, ytop, edge_y=ye)
        sig_tot = sig_soil.copy()
        if loads is not None:
            sig_tot += loads.surcharge(xm_sec)
        if water is not None:
            if water.phreatic is not None:
                sig_tot += gw * np.maximum(water.phreatic_y(xm_sec) - ytop, 0.0)
            u = water.pore_pressure(xm_sec, ybase, zone_r, section.zone_names, sig_soil)
        else:
            u = np.zeros_like(ybase)

        if crack is not None and crack.water_filled:
            h = crack.fill * (yt[:, 0] - ys[:, 0])
            crack_force[rows] = 0.5 * gw * h * h
            crack_y[rows] = ys[:, 0] + h / 3.0

        vals = dict(x_left=xl, x_right=xr, width=width, x_mid=xm, y_base_left=ybl, y_base_right=ybr,
                    y_base=ybase, y_top_left=yt[:, :-1], y_top_right=yt[:, 1:], y_top=ytop, alpha=alpha,
                    base_length=width / np.cos(alpha), weight=weight, y_centroid=ycen, u_base=u,
                    sigma_v_eff=sig_tot - u, depth=depth, q_v=qv, q_h=qh, x_q=xq_app, y_q=yq_app)
        for k, v in vals.items():
            out[k][rows] = v
        zone[rows] = zone_r

        # rejections found only once the slices exist
        below = np.min(np.minimum(ybl, ybr), axis=1) < section.base_y - 1e-9
        if kind == "circle" or np.isfinite(xc[rows]).any():
            lo = np.where(np.isfinite(xc[rows]) & (d[:, 0] * xc[rows] > A[:, 0]) & (d[:, 0] * xc[rows] < B[:, 0]),
                          yc[rows] - rad[rows], np.inf)
            below |= lo < section.base_y - 1e-9
        outside = np.any(zone_r < 0, axis=1)
        reason[rows[outside]] = "a slice base lies outside every zone"
        reason[rows[below]] = f"passes below the section base (y = {section.base_y:g} m)"

    kh = float(loads.kh) if loads is not None else 0.0
    bank = _finish(out, zone, reason, dirn, kh, crack_force, crack_y, xc, yc, rad, section)
    if np.isfinite(xc).any() and bank.valid.any():
        # a circle whose loads have no moment about its centre (one centred on
        # the axis of a symmetric embankment) has no direction to slide in:
        # its FS is a ratio over a round-off moment (values like -1e17), so it
        # is rejected here, once, with its own reason, instead of being counted
        # as inadmissible in every realisation of a simulation
        from .methods.terms import prepare_bank

        terms = prepare_bank(bank)
        scale = terms.force_scale * terms.length_scale
        still = (np.isfinite(xc) & bank.valid & terms.valid
                 & (np.abs(terms.m_active) <= NO_DRIVING_MOMENT * scale))
        if still.any():
            reason = bank.reason.copy()
            reason[still] = NO_DRIVING_REASON
            bank = _finish(out, zone, reason, dirn, kh, crack_force, crack_y, xc, yc, rad, section)
    return bank


def _finish(out, zone, reason, dirn, kh, crack_force, crack_y, xc, yc, rad, section) -> SliceBank:
    valid = np.array([r == "" for r in reason])
    out = {k: v.copy() for k, v in out.items()}
    zone = zone.copy()
    crack_force = crack_force.copy()
    for k in out:
        out[k][~valid] = np.nan
    zone[~valid] = -1
    crack_force[~valid] = np.nan
    return SliceBank(
        direction=dirn, **out, zone=zone, kh=kh, crack_force=crack_force, crack_y=crack_y,
        centre_x=dirn * xc, centre_y=yc, radius=rad, valid=valid, reason=reason,
        zone_names=section.zone_names, zone_materials=section.zone_materials,
    )


def _column_weight(section, x, lo, hi, moment=False, edge_y=None):
    """Soil weight per unit width (kPa) of the column [lo, hi] at x; optionally ∫γ y dy.

    ``edge_y``: ``section._edge_y`` of the raveled ``x`` when the caller has it.
    """
    shp = np.shape(x)
    x, lo, hi = (np.broadcast_to(a, shp).ravel() for a in (x, lo, hi))
    mats = [section.materials[z.material] for z in section.zones]
    g_m = np.array([mt.unit_weight for mt in mats])
    g_s = np.array([mt.unit_weight_sat for mt in mats])
    water = section.water
    ye = section._edge_y(x) if edge_y is None else edge_y   # once for both parts of the column
    if water is not None and water.phreatic is not None:
        yw = water.phreatic_y(x)
        split = np.clip(yw, lo, np.maximum(hi, lo))
        r1 = section.column_lengths(x, split, hi, moment, edge_y=ye)  # moist, above the water
        r2 = section.column_lengths(x, lo, split, moment, edge_y=ye)  # saturated
    else:
        r1 = section.column_lengths(x, lo, hi, moment, edge_y=ye)
        r2 = None
    if moment:
        w = r1[0] @ g_m + (r2[0] @ g_s if r2 is not None else 0.0)
        mo = r1[1] @ g_m + (r2[1] @ g_s if r2 is not None else 0.0)
        return w.reshape(shp), mo.reshape(shp)
    w = r1 @ g_m + (r2 @ g_s if r2 is not None else 0.0)
    return w.reshape(shp)


def _ponded_top(section, water, lo, hi):
    """Ponded water on slice tops [lo, hi] (section frame), integrated exactly.

    Between consecutive vertices of the ground and of the phreatic surface
    both lines are straight, so the pressure γw (y_w − y_g)⁺ is linear there
    (clipped where the water meets the ground) and the integrals are closed
    forms.

    Returns
    -------
    fv : vertical force (kN/m, downward), fh : horizontal force toward +x
    (kN/m), fx : ∫ p x dx (kN), all in the section frame.
    """
    gw = water.gamma_w
    X = np.union1d(section.ground[:, 0], water.phreatic[:, 0])
    X = X[(X > section.x_min) & (X < section.x_max)]
    X = np.concatenate([[section.x_min - 1e9], X, [section.x_max + 1e9]])
    a = np.maximum(lo[..., None], X[:-1])
    b = np.minimum(hi[..., None], X[1:])
    live = b > a
    b = np.where(live, b, a)
    pa = gw * (water.phreatic_y(a) - section.ground_y(a))
    pb = gw * (water.phreatic_y(b) - section.ground_y(b))
    sl = section.ground_slope(0.5 * (a + b))
    # keep the wet part of each piece
    cross = (pa > 0) != (pb > 0)
    xc = np.where(cross, a + (b - a) * pa / np.where(cross, pa - pb, 1.0), b)
    a2 = np.where(cross & (pa <= 0), xc, a)
    b2 = np.where(cross & (pb <= 0), xc, b)
    pa2 = np.where(cross & (pa <= 0), 0.0, pa)
    pb2 = np.where(cross & (pb <= 0), 0.0, pb)
    wet = live & ((pa > 0) | (pb > 0))
    L = np.where(wet, b2 - a2, 0.0)
    f = L * 0.5 * (pa2 + pb2)
    fx = L / 6.0 * (pa2 * (2 * a2 + b2) + pb2 * (a2 + 2 * b2))
    return f.sum(-1), (f * sl).sum(-1), fx.sum(-1)


def _weight_dependent(bank):
    return {"weight": bank.weight, "weight_moment": bank.weight * bank.y_centroid,
            "sigma_v_eff": bank.sigma_v_eff, "u_base": bank.u_base}


def unit_weight_parts(section, surfaces, zones, n_slices: int = 40, n_quad: int = 3) -> dict:
    """Share of each zone's unit weight in the weight-dependent slice quantities.

    Slice weights, their moments, the vertical effective stress at the base
    and pore pressures set by ru are all linear in the unit weights, so a
    random factor ``f_z`` on zone z's γ and γsat changes a quantity Q by
    ``(f_z − 1) · ΔQ_z``, with ΔQ_z the change when that zone's unit weights
    double. Computed once per bank (one extra bank per zone).

    Parameters
    ----------
    section : Section
    surfaces : as :func:`build_bank`
    zones : sequence of int
        Zone indices (``section.zones``) whose unit weight is random.
    n_slices, n_quad : int
        As the bank the parts belong to.

    Returns
    -------
    dict zone index -> dict name -> ndarray (m, n)
        ΔQ for every name of :data:`WEIGHT_DEPENDENT` (kN/m, kN m/m, kPa, kPa).
    """
    ref = _weight_dependent(build_bank(section, surfaces, n_slices, n_quad))
    out = {}
    for z in zones:
        q = _weight_dependent(build_bank(section_with_unit_weights(section, {int(z): 2.0}), surfaces,
                                         n_slices, n_quad))
        out[int(z)] = {k: q[k] - ref[k] for k in WEIGHT_DEPENDENT}
    return out


def section_with_unit_weights(section, factors):
    """A copy of ``section`` with the unit weights of some zones multiplied.

    Parameters
    ----------
    section : Section
    factors : dict zone index -> float
        Factor on γ and γsat of that zone (its material is cloned for it, so
        other zones of the same material keep theirs).

    Returns
    -------
    Section
    """
    from dataclasses import replace

    from .section import Section, Zone

    mats = dict(section.materials)
    zones = []
    for i, zz in enumerate(section.zones):
        name = zz.material
        if i in factors and float(factors[i]) != 1.0:
            f = float(factors[i])
            mat = section.materials[zz.material]
            name = f"{zz.material} (zone {zz.name}, unit weight x {f:.17g})"
            mats[name] = replace(mat, name=name, unit_weight=f * mat.unit_weight,
                                 unit_weight_sat=f * mat.unit_weight_sat)
        # Zone stores its polygon open; the constructor wants it closed
        zones.append(Zone(zz.name, name, np.vstack([zz.polygon, zz.polygon[:1]])))
    return Section(section.ground, zones, mats, water=section.water, loads=section.loads,
                   base_y=section.base_y)


def scale_unit_weights(bank, parts, factors):
    """The bank with zone unit weights multiplied by ``factors``.

    Parameters
    ----------
    bank : SliceBank
    parts : dict
        :func:`unit_weight_parts` of the same surfaces (rows of ``bank``).
    factors : dict zone index -> float or 1-D array
        Factor on γ and γsat of each zone (1 = unchanged). Arrays of ``s``
        factors (one per sample) give a stacked bank of ``s × m`` rows,
        sample-major (row ``k·m + j`` is surface j with sample k's weights),
        so that many samples go through one kernel call.

    Returns
    -------
    SliceBank
        ``weight``, ``y_centroid``, ``sigma_v_eff`` and ``u_base`` updated;
        geometry shared (tiled when stacked).
    """
    from dataclasses import replace

    f = {z: np.asarray(v, float) for z, v in factors.items()}
    stacked = any(v.ndim > 0 for v in f.values())
    q = _weight_dependent(bank)
    if stacked:
        s = max(v.size for v in f.values())
        m = bank.n_surfaces
        bank = bank.subset(np.tile(np.arange(m), s))
        q = {k: np.tile(v, (s, 1)) for k, v in q.items()}
        for z, v in f.items():
            d = np.repeat(np.broadcast_to(v, (s,)) - 1.0, m)[:, None]
            q = {k: q[k] + d * np.tile(parts[z][k], (s, 1)) for k in WEIGHT_DEPENDENT}
    else:
        for z, v in f.items():
            d = float(v) - 1.0
            if d != 0.0:
                q = {k: q[k] + d * parts[z][k] for k in WEIGHT_DEPENDENT}
    w = q["weight"]
    ycen = np.where(w > 0, q["weight_moment"] / np.where(w > 0, w, 1.0), bank.y_base)
    return replace(bank, weight=w, y_centroid=ycen, sigma_v_eff=q["sigma_v_eff"], u_base=q["u_base"])


def vertical_effective_stress(section, x, y):
    """Vertical effective stress σ'v (kPa) at points of the section, as a slice base there would carry it.

    The same terms as a slice base midpoint in :func:`build_bank`: the soil
    column above the point (moist above the phreatic surface, saturated
    below), the strip loads there, ponded water above the ground, less the
    pore pressure of the case's water model. This is the σ'v of the ``ratio``
    undrained law (su = S · σ'v), so a figure of S can be shown as su in kPa.

    Parameters
    ----------
    section : Section
    x, y : array_like, m
        Points in the section frame, broadcast together; points above the
        ground get the stress of a zero-height column.

    Returns
    -------
    ndarray, kPa
        σ'v, shape of the broadcast points; NaN outside every zone.
    """
    zone, sig_eff, _ = point_stresses(section, x, y)
    return np.where(zone >= 0, sig_eff, np.nan)


def point_stresses(section, x, y):
    """Zone, vertical effective stress σ'v (kPa) and pore pressure u (kPa) at points of the section.

    The terms of :func:`vertical_effective_stress` (a slice base's), with the
    zone index (-1 outside every zone) and the pore pressure of the case's
    water model; shapes of the broadcast points.
    """
    x, y = np.broadcast_arrays(np.asarray(x, float), np.asarray(y, float))
    shp = x.shape
    x, y = x.ravel(), y.ravel()
    ytop = section.ground_y(x)
    y = np.minimum(y, ytop)
    ye = section._edge_y(x)    # the columns and the zones read the same edges at x
    zone, sig_tot, u = column_stresses(section, x, y, ytop, _column_weight(section, x, y, ytop, edge_y=ye),
                                       edge_y=ye)
    return zone.reshape(shp), (sig_tot - u).reshape(shp), u.reshape(shp)


def column_stresses(section, x, y, ytop, sig_soil, edge_y=None):
    """Zone, total vertical stress σv (kPa) and pore pressure u (kPa) at points under soil columns.

    Parameters
    ----------
    section : Section
    x, y, ytop : ndarray (m,), m
        Points and the ground elevation above each.
    sig_soil : ndarray (m,), kPa
        Weight of the soil column above each point per unit area.
    edge_y : ndarray (m, E), optional
        ``section._edge_y(x)`` when the caller has it.

    Returns
    -------
    zone : ndarray (m,) of int
        Zone index just above each point (-1 outside every zone).
    sig_tot : ndarray (m,), kPa
        ``sig_soil`` plus surcharges and ponded water above the ground.
    u : ndarray (m,), kPa
        Pore pressure of the case's water model (0 without water).
    """
    eps = 1e-7 * max(1.0, float(np.ptp(section.ground[:, 1])))
    zone = section.zone_at(x, y + eps, edge_y=edge_y)
    sig_tot = sig_soil.copy()
    water, loads = section.water, section.loads
    if loads is not None:
        sig_tot += loads.surcharge(x)
    if water is not None:
        if water.phreatic is not None:
            sig_tot += water.gamma_w * np.maximum(water.phreatic_y(x) - ytop, 0.0)
        u = water.pore_pressure(x, y, zone, section.zone_names, sig_soil)
    else:
        u = np.zeros_like(y)
    return zone, sig_tot, u
