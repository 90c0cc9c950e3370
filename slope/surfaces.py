"""Trial slip surfaces: circles and polylines, and where they cut the ground.

A circle's slip surface is its lower arc ``y = yc − sqrt(r² − (x − xc)²)``.
A surface must cut the ground line exactly twice; the sliding mass lies
between the two cuts, above the surface and below the ground line.

Units: m, section frame (x right, y up).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import InputError

__all__ = [
    "Circle", "Circles", "Polyline", "circle_through", "circle_cuts", "polyline_cuts", "cut_ground", "family_of",
    "SNAP_TOLERANCE",
]

#: a polyline end within this fraction of the section width (1e-6: 0.1 mm
#: on a 100 m section) above or below the ground line is taken as on it
SNAP_TOLERANCE = 1e-6


@dataclass(frozen=True)
class Circle:
    """Circular slip surface from its centre (xc, yc) and radius r (m)."""

    xc: float
    yc: float
    radius: float

    def __post_init__(self):
        if not (np.isfinite(self.xc) and np.isfinite(self.yc)):
            raise InputError(f"circle: centre must be finite, got ({self.xc}, {self.yc})")
        if not self.radius > 0:
            raise InputError(f"circle: radius must be > 0 m, got {self.radius}")


@dataclass
class Circles:
    """Many circles at once (arrays of equal length): centres and radii, m."""

    xc: np.ndarray
    yc: np.ndarray
    radius: np.ndarray

    def __post_init__(self):
        self.xc, self.yc, self.radius = (np.atleast_1d(np.asarray(a, dtype=float)) for a in
                                         np.broadcast_arrays(self.xc, self.yc, self.radius))
        if not np.all(np.isfinite(self.xc) & np.isfinite(self.yc)):
            raise InputError("circles: centres must be finite")
        if np.any(~(self.radius > 0)):
            raise InputError("circles: every radius must be > 0 m")

    def __len__(self):
        return len(self.xc)

    @classmethod
    def of(cls, circles) -> "Circles":
        """Collect a sequence of :class:`Circle` into one :class:`Circles`."""
        return cls([c.xc for c in circles], [c.yc for c in circles], [c.radius for c in circles])


def circle_through(p1, p2, p3) -> Circle:
    """The circle through three points (m).

    Raises
    ------
    InputError
        When the points are (nearly) collinear or coincide.
    """
    (ax, ay), (bx, by), (cx, cy) = (np.asarray(p, dtype=float) for p in (p1, p2, p3))
    d = 2.0 * (ax * (by - cy) + bx * (cy - ay) + cx * (ay - by))
    scale = max(np.ptp([ax, bx, cx]), np.ptp([ay, by, cy]), 1e-12)
    if abs(d) < 1e-10 * scale * scale:
        raise InputError(
            f"circle through three points: ({ax:g}, {ay:g}), ({bx:g}, {by:g}), ({cx:g}, {cy:g}) "
            "are collinear; move the middle point off the line"
        )
    a2, b2, c2 = ax * ax + ay * ay, bx * bx + by * by, cx * cx + cy * cy
    ux = (a2 * (by - cy) + b2 * (cy - ay) + c2 * (ay - by)) / d
    uy = (a2 * (cx - bx) + b2 * (ax - cx) + c2 * (bx - ax)) / d
    return Circle(float(ux), float(uy), float(np.hypot(ax - ux, ay - uy)))


@dataclass
class Polyline:
    """General (non-circular) slip surface through vertices (m), x increasing.

    The polyline's ends should lie on or above the ground line; it is cut
    where it crosses the ground. ``family`` names the search that made it
    (``block``, ``dynamic-programming``, ...; see :func:`family_of`); it
    changes nothing in the geometry and is left out of ``repr``.
    """

    points: np.ndarray
    family: str = field(default="polyline", repr=False, compare=False)

    def __post_init__(self):
        from .section import _as_points

        p = _as_points("polyline surface", self.points)
        if np.any(np.diff(p[:, 0]) <= 0):
            raise InputError("polyline surface: x must increase strictly from vertex to vertex")
        self.points = p

    def y(self, x):
        """Surface elevation at x (m); NaN outside the polyline's x range."""
        p = self.points
        return np.interp(x, p[:, 0], p[:, 1], left=np.nan, right=np.nan)


def family_of(surface) -> str:
    """Family of a trial surface: ``circle`` for circles, else the polyline's ``family``."""
    return "circle" if isinstance(surface, Circle) else str(getattr(surface, "family", "polyline"))


def circle_cuts(section, xc, yc, r):
    """Where many circles' lower arcs cut the ground line.

    Parameters
    ----------
    section : Section
    xc, yc, r : ndarray (m,), m

    Returns
    -------
    x1, x2 : ndarray (m,), m
        Left and right cuts (NaN when rejected).
    reason : ndarray (m,) of str
        Empty when the arc cuts the ground twice with the mass between, or
        more often and the arc from the highest cut to its neighbour is taken.
    """
    xc, yc, r = (np.asarray(a, dtype=float)[:, None] for a in (xc, yc, r))
    g = section.ground
    ax, ay = g[:-1, 0], g[:-1, 1]
    dx, dy = np.diff(g[:, 0]), np.diff(g[:, 1])
    # |A + t D - C|² = r² → a t² + b t + c = 0
    fx, fy = ax - xc, ay - yc
    qa = dx * dx + dy * dy
    qb = 2.0 * (fx * dx + fy * dy)
    qc = fx * fx + fy * fy - r * r
    disc = qb * qb - 4.0 * qa * qc
    sq = np.sqrt(np.maximum(disc, 0.0))
    last = np.zeros(len(dx), bool)
    last[-1] = True
    xs = []
    for sgn in (-1.0, 1.0):
        t = (-qb + sgn * sq) / (2.0 * qa)
        ok = (disc > 0) & (t >= 0) & ((t < 1) | (last & (t <= 1)))
        yy = ay + t * dy
        ok &= yy <= yc  # only the lower arc is a slip surface
        xs.append(np.where(ok, ax + t * dx, np.nan))
    xs = np.concatenate(xs, axis=1)
    xs.sort(axis=1)  # NaN last
    n = np.sum(np.isfinite(xs), axis=1)
    x1, x2 = xs[:, 0].copy(), np.where(n >= 2, xs[:, 1], np.nan)
    reason = np.full(len(n), "", dtype=object)
    reason[n < 2] = "does not cut the ground line twice"
    # more than two cuts (a toe circle of a steep face whose arc dips below
    # toe level beyond the toe, or an arc through a gully): the slip surface
    # is the arc from the upslope entry (the highest cut) to the next cut on
    # the side where the arc runs below the ground; the lens of soil beyond
    # that exit does not move (Taylor 1937's toe circles are of this kind)
    for i in np.flatnonzero(n > 2):
        cut = xs[i, :n[i]]
        gy = section.ground_y(cut)
        top = int(np.argmax(gy))
        best = None
        for a, b in ((top - 1, top), (top, top + 1)):
            if a < 0 or b >= len(cut):
                continue
            xm_ = 0.5 * (cut[a] + cut[b])
            ym_ = yc[i, 0] - np.sqrt(max(r[i, 0] ** 2 - (xm_ - xc[i, 0]) ** 2, 0.0))
            if ym_ < section.ground_y(xm_) and (best is None or cut[b] - cut[a] > best[1] - best[0]):
                best = (cut[a], cut[b])
        if best is None:
            reason[i] = "cuts the ground line more than twice"
        else:
            x1[i], x2[i] = best
            n[i] = 2
    ok = n == 2
    xm = 0.5 * (x1 + x2)
    with np.errstate(invalid="ignore"):
        ym = yc[:, 0] - np.sqrt(np.maximum(r[:, 0] ** 2 - (xm - xc[:, 0]) ** 2, 0.0))
    above = ok & (ym >= section.ground_y(np.where(ok, xm, 0.0)))
    reason[above] = "arc lies above the ground line between its cuts"
    ok &= ~above
    x1[~ok] = np.nan
    x2[~ok] = np.nan
    return x1, x2, reason


def polyline_cuts(section, surface: Polyline):
    """Left and right cuts (m) of a polyline with the ground, and a reason ('' if fine)."""
    p = surface.points
    xs = np.union1d(p[:, 0], section.ground[:, 0])
    xs = xs[(xs >= p[0, 0]) & (xs <= p[-1, 0])]
    d = surface.y(xs) - section.ground_y(xs)  # > 0 above ground
    # an end on the ground line within round-off (coordinates typed to a few
    # decimals, or computed) is on it
    snap = SNAP_TOLERANCE * max(1.0, float(np.ptp(section.ground[:, 0])))
    for k in (0, -1):
        if abs(d[k]) <= snap:
            d[k] = 0.0
    cuts = []
    for i in range(len(xs) - 1):
        if d[i] == 0 and (i == 0 or d[i - 1] != 0):
            cuts.append(xs[i])
        elif d[i] * d[i + 1] < 0:
            cuts.append(xs[i] + (xs[i + 1] - xs[i]) * d[i] / (d[i] - d[i + 1]))
    if d[-1] == 0:
        cuts.append(xs[-1])
    cuts = sorted(set(np.round(cuts, 12)))
    if len(cuts) < 2:
        return np.nan, np.nan, "does not cut the ground line twice"
    if len(cuts) > 2:
        return np.nan, np.nan, "cuts the ground line more than twice"
    x1, x2 = cuts
    xm = 0.5 * (x1 + x2)
    if surface.y(xm) >= section.ground_y(xm):
        return np.nan, np.nan, "surface lies above the ground line between its cuts"
    return float(x1), float(x2), ""


def cut_ground(section, surface):
    """Cuts (x1, x2) of one surface with the ground line, m.

    Raises
    ------
    InputError
        When the surface does not cut the ground line exactly twice with the
        sliding mass between the cuts.
    """
    if isinstance(surface, Circle):
        x1, x2, reason = circle_cuts(section, [surface.xc], [surface.yc], [surface.radius])
        x1, x2, reason = float(x1[0]), float(x2[0]), reason[0]
        label = f"circle (xc={surface.xc:g}, yc={surface.yc:g}, r={surface.radius:g})"
    elif isinstance(surface, Polyline):
        x1, x2, reason = polyline_cuts(section, surface)
        label = "polyline surface"
    else:
        raise InputError(f"surface: expected a Circle or a Polyline, got {type(surface).__name__}")
    if reason:
        raise InputError(
            f"{label} {reason}; a slip surface must enter and leave the ground line once each "
            "(change its centre/radius or vertices)"
        )
    return x1, x2
