"""Cross-section: ground line, material zones, water and loads.

A section is the region between the ground line (a polyline, x increasing)
and a horizontal *section base* at elevation ``base_y``; trial surfaces may
not pass below it (it plays the part of a firm stratum). Zones are simple
polygons, each naming a material, that must tile that region exactly: no
gaps, no overlaps, nothing above the ground line.

Units: m (coordinates), x to the right, y up.

The vertical-column integrals used by :mod:`slope.bank` live here because they
only need the zone polygons: for a vertical line at ``x``, the length of
``[lo, hi]`` inside a counter-clockwise polygon is
``sum(top edges crossing x: clip(y_e, lo, hi)) - sum(bottom edges: ...)``,
exact for straight-edged polygons and fully vectorised over points.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from .errors import InputError

__all__ = ["Zone", "Section"]

_TOL = 1e-7  # m; geometric tolerance for coincident points (sections are 1-1000 m)


def _as_points(name: str, pts, min_points: int = 2) -> np.ndarray:
    try:
        arr = np.asarray(pts, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected a list of (x, y) points in m, got {pts!r}") from None
    if arr.ndim != 2 or arr.shape[1] != 2 or arr.shape[0] < min_points:
        raise InputError(
            f"{name}: expected at least {min_points} (x, y) points as an array of shape (k, 2), "
            f"got shape {arr.shape}"
        )
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}: coordinates must be finite numbers (found NaN or inf)")
    return arr


def polygon_area(poly: np.ndarray) -> float:
    """Signed area of a polygon (shoelace; positive counter-clockwise), m²."""
    x, y = poly[:, 0], poly[:, 1]
    return 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))


def _segments_cross(p1, p2, q1, q2) -> bool:
    """True when segments p1p2 and q1q2 cross at a point interior to both."""
    def orient(a, b, c):
        return (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])

    d1, d2 = orient(q1, q2, p1), orient(q1, q2, p2)
    d3, d4 = orient(p1, p2, q1), orient(p1, p2, q2)
    scale = max(np.ptp([p1[0], p2[0], q1[0], q2[0]]), np.ptp([p1[1], p2[1], q1[1], q2[1]]), 1.0)
    eps = _TOL * scale
    return ((d1 > eps and d2 < -eps) or (d1 < -eps and d2 > eps)) and (
        (d3 > eps and d4 < -eps) or (d3 < -eps and d4 > eps)
    )


@dataclass
class Zone:
    """One material zone of the section.

    Parameters
    ----------
    name : str
        Zone name (unique in the section).
    material : str
        Name of the material filling the zone (a key of ``Section.materials``).
    polygon : array_like, shape (k, 2), m
        Vertices of a closed simple polygon; the last vertex must repeat the
        first. Either orientation; stored counter-clockwise without the
        repeated vertex.
    """

    name: str
    material: str
    polygon: np.ndarray

    def __post_init__(self):
        label = f"zone '{self.name}' polygon"
        poly = _as_points(label, self.polygon, min_points=4)
        if np.hypot(*(poly[-1] - poly[0])) > _TOL * max(1.0, np.abs(poly).max()):
            raise InputError(
                f"{label} is not closed: last vertex {tuple(poly[-1])} differs from the first "
                f"{tuple(poly[0])}; repeat the first vertex at the end"
            )
        poly = poly[:-1]
        # drop consecutive duplicates so edges have length
        keep = np.hypot(*(poly - np.roll(poly, 1, axis=0)).T) > _TOL
        poly = poly[keep]
        if poly.shape[0] < 3:
            raise InputError(f"{label} needs at least 3 distinct vertices")
        k = poly.shape[0]
        for i in range(k):
            for j in range(i + 2, k):
                if i == 0 and j == k - 1:
                    continue  # adjacent through the closing edge
                if _segments_cross(poly[i], poly[(i + 1) % k], poly[j], poly[(j + 1) % k]):
                    raise InputError(
                        f"{label} intersects itself (edge {i}-{i + 1} crosses edge {j}-{(j + 1) % k}); "
                        "order the vertices around the boundary without crossing"
                    )
        area = polygon_area(poly)
        if abs(area) < _TOL:
            raise InputError(f"{label} has zero area; give the vertices of a polygon that encloses the zone")
        self.polygon = poly if area > 0 else poly[::-1].copy()

    @property
    def area(self) -> float:
        """Area of the zone, m²."""
        return polygon_area(self.polygon)


@dataclass
class Section:
    """A 2D cross-section: ground line, zones, materials, water and loads.

    Parameters
    ----------
    ground : array_like, shape (k, 2), m
        Ground-surface polyline, x strictly increasing.
    zones : sequence of Zone
        Zones tiling the region between the ground line and ``base_y``.
    materials : mapping str -> slope.strength.Material
        Materials by name; every zone's material must be defined here.
    water : slope.water.Water, optional
        Water conditions (phreatic surface, ru, piezometric lines); dry if None.
    loads : slope.loads.Loads, optional
        External loads (strip surcharges, kh, tension crack); none if None.
    base_y : float, optional, m
        Elevation of the section base; by default the lowest zone vertex.

    Raises
    ------
    InputError
        When the ground line, a zone or a material reference is invalid, or the
        zones leave gaps, overlap or rise above the ground line.
    """

    ground: np.ndarray
    zones: Sequence[Zone]
    materials: Mapping = field(default_factory=dict)
    water: object = None
    loads: object = None
    base_y: float | None = None

    def __post_init__(self):
        g = _as_points("ground line", self.ground)
        dx = np.diff(g[:, 0])
        if np.any(dx <= 0):
            i = int(np.argmax(dx <= 0))
            raise InputError(
                f"ground line: x must increase strictly from point to point (points {i} and {i + 1} "
                f"have x = {g[i, 0]:g}, {g[i + 1, 0]:g}); give the ground from left to right, "
                "without vertical or overhanging segments"
            )
        self.ground = g
        self.zones = list(self.zones)
        if not self.zones:
            raise InputError("section: no zones given; give at least one Zone below the ground line")
        names = [z.name for z in self.zones]
        dup = {n for n in names if names.count(n) > 1}
        if dup:
            raise InputError(f"section: zone names must be unique, repeated: {sorted(dup)}")
        self.materials = dict(self.materials)
        for z in self.zones:
            if z.material not in self.materials:
                raise InputError(
                    f"zone '{z.name}' refers to material '{z.material}', which is not defined; "
                    f"define it or use one of {sorted(self.materials)}"
                )
        ymin = min(float(z.polygon[:, 1].min()) for z in self.zones)
        if self.base_y is None:
            self.base_y = ymin
        self.base_y = float(self.base_y)
        if self.base_y > g[:, 1].min():
            raise InputError(
                f"section base_y = {self.base_y:g} m is above the lowest ground point "
                f"({g[:, 1].min():g} m); give a lower base_y or extend the zones downward"
            )
        self._build_edges()
        self._check_tiling()
        if self.water is not None and hasattr(self.water, "validate"):
            self.water.validate(self)
        if self.loads is not None and hasattr(self.loads, "validate"):
            self.loads.validate(self)

    # ------------------------------------------------------------------ geometry
    @property
    def x_min(self) -> float:
        return float(self.ground[0, 0])

    @property
    def x_max(self) -> float:
        return float(self.ground[-1, 0])

    @property
    def zone_names(self) -> list:
        return [z.name for z in self.zones]

    @property
    def zone_materials(self) -> list:
        return [z.material for z in self.zones]

    def ground_y(self, x) -> np.ndarray:
        """Ground elevation at ``x`` (m); held level beyond the ends."""
        return np.interp(x, self.ground[:, 0], self.ground[:, 1])

    def ground_slope(self, x) -> np.ndarray:
        """dy/dx of the ground line at ``x`` (slope of the segment containing x)."""
        gx, gy = self.ground[:, 0], self.ground[:, 1]
        s = np.diff(gy) / np.diff(gx)
        i = np.clip(np.searchsorted(gx, x, side="right") - 1, 0, len(s) - 1)
        return s[i]

    def _build_edges(self):
        x1, y1, x2, y2, zid = [], [], [], [], []
        for k, z in enumerate(self.zones):
            p = z.polygon
            q = np.roll(p, -1, axis=0)
            x1.append(p[:, 0]); y1.append(p[:, 1]); x2.append(q[:, 0]); y2.append(q[:, 1])
            zid.append(np.full(len(p), k))
        x1, y1, x2, y2, zid = map(np.concatenate, (x1, y1, x2, y2, zid))
        keep = x1 != x2  # vertical edges never cross a vertical line in its interior
        x1, y1, x2, y2, zid = x1[keep], y1[keep], x2[keep], y2[keep], zid[keep]
        # CCW polygon: edges running toward -x are tops (+1), toward +x bottoms (-1)
        sign = np.where(x2 < x1, 1.0, -1.0)
        self._ex_lo = np.minimum(x1, x2)
        self._ex_hi = np.maximum(x1, x2)
        self._e_slope = (y2 - y1) / (x2 - x1)
        self._e_x1, self._e_y1 = x1, y1
        # (E, Z) matrix: signed membership of each edge in its zone
        self._e_sign_zone = np.zeros((len(x1), len(self.zones)))
        self._e_sign_zone[np.arange(len(x1)), zid] = sign

    def _edge_y(self, x):
        """Elevation of every edge at x: (P, E), NaN where the edge does not span x."""
        x = np.asarray(x, dtype=float)[..., None]
        ye = x - self._e_x1
        ye *= self._e_slope
        ye += self._e_y1                 # y1 + slope (x - x1), in place (the same numbers)
        ye[(x < self._ex_lo) | (x >= self._ex_hi)] = np.nan
        return ye

    def column_lengths(self, x, lo, hi, moment: bool = False, *, edge_y=None):
        """Length of the vertical segment ``[lo, hi]`` at ``x`` inside each zone.

        Parameters
        ----------
        x, lo, hi : array_like, shape (P,), m
            Abscissae and lower/upper elevations (``hi < lo`` gives zero).
        moment : bool
            Also return the first moment ``∫ y dy`` over the part in each zone.
        edge_y : ndarray (P, E), optional
            ``self._edge_y(x)`` when the caller already has it for these ``x``
            (the same values: a caller reading several columns at one x computes them once).

        Returns
        -------
        length : ndarray (P, Z), m
        first_moment : ndarray (P, Z), m², only when ``moment`` is True.
        """
        ye = self._edge_y(x) if edge_y is None else edge_y
        lo = np.asarray(lo, dtype=float)[..., None]
        hi = np.maximum(np.asarray(hi, dtype=float)[..., None], lo)
        c = np.clip(ye, lo, hi)
        np.copyto(c, 0.0, where=np.isnan(ye))
        length = c @ self._e_sign_zone
        if not moment:
            return length
        return length, (0.5 * c * c) @ self._e_sign_zone

    def zone_at(self, x, y, *, edge_y=None) -> np.ndarray:
        """Index of the zone containing each point (x, y), -1 where none (``edge_y`` as for
        :meth:`column_lengths`)."""
        ye = self._edge_y(x) if edge_y is None else edge_y
        above = (ye > np.asarray(y, dtype=float)[..., None]).astype(float)    # NaN (edge not over x): False
        inside = above @ self._e_sign_zone  # 1 inside a CCW polygon, 0 outside
        idx = np.argmax(inside > 0.5, axis=-1)
        return np.where(np.any(inside > 0.5, axis=-1), idx, -1)

    # ---------------------------------------------------------------- validation
    def _check_tiling(self):
        g = self.ground
        domain = float(np.sum(0.5 * (g[1:, 1] + g[:-1, 1] - 2 * self.base_y) * np.diff(g[:, 0])))
        for z in self.zones:
            p = z.polygon
            if p[:, 0].min() < self.x_min - _TOL or p[:, 0].max() > self.x_max + _TOL:
                raise InputError(
                    f"zone '{z.name}' extends beyond the ends of the ground line "
                    f"(x from {self.x_min:g} to {self.x_max:g} m); clip it to that range"
                )
            above = p[:, 1] - self.ground_y(p[:, 0])
            if np.any(above > 1e-6 * max(1.0, np.ptp(g[:, 1]))):
                i = int(np.argmax(above))
                raise InputError(
                    f"zone '{z.name}' rises above the ground line at vertex {tuple(p[i])}; "
                    "move it onto or below the ground line"
                )
            if p[:, 1].min() < self.base_y - _TOL:
                raise InputError(
                    f"zone '{z.name}' extends below the section base y = {self.base_y:g} m; "
                    "lower base_y or clip the zone"
                )
        total = sum(z.area for z in self.zones)
        # Grid check locates gaps and overlaps; the area balance catches thin ones.
        nx, ny = 241, 121
        xs = np.linspace(self.x_min, self.x_max, nx + 2)[1:-1]
        ys = np.linspace(self.base_y, g[:, 1].max(), ny + 2)[1:-1]
        X, Y = np.meshgrid(xs, ys, indexing="ij")
        X, Y = X.ravel(), Y.ravel()
        below = Y < self.ground_y(X) - 1e-9
        ye = self._edge_y(X)
        above = np.where(np.isnan(ye), 0.0, (ye > Y[:, None]).astype(float))
        count = (above @ self._e_sign_zone > 0.5).sum(axis=1)
        over = below & (count > 1)
        if np.any(over):
            i = int(np.argmax(over))
            inz = np.nonzero((above @ self._e_sign_zone)[i] > 0.5)[0]
            raise InputError(
                f"zones {[self.zones[k].name for k in inz]} overlap near ({X[i]:.3g}, {Y[i]:.3g}) m; "
                "make every point below the ground belong to exactly one zone"
            )
        gap = below & (count == 0)
        if np.any(gap):
            i = int(np.argmax(gap))
            raise InputError(
                f"section: no zone covers the point ({X[i]:.3g}, {Y[i]:.3g}) m below the ground line; "
                "extend a zone or add one so the zones cover the whole section down to base_y"
            )
        if abs(total - domain) > 1e-6 * max(domain, 1.0):
            kind = "overlap" if total > domain else "leave gaps"
            raise InputError(
                f"section: the zones {kind}: their areas sum to {total:.6g} m² but the section below "
                f"the ground line down to base_y = {self.base_y:g} m has {domain:.6g} m²; "
                "make every point below the ground belong to exactly one zone"
            )

    # ------------------------------------------------------------- construction
    @classmethod
    def from_layers(cls, ground, layers, materials, base_y, water=None, loads=None) -> "Section":
        """Build a section from layer boundaries, listed from the top down.

        Parameters
        ----------
        ground : array_like (k, 2), m
            Ground polyline, x increasing.
        layers : sequence of (name, material, bottom)
            ``bottom`` is the layer's lower boundary: an elevation (m) or a
            polyline ``[(x, y), ...]`` held level beyond its ends. The last
            layer ends at ``base_y`` (its ``bottom`` may be None). A boundary
            above the ground line is cut off by it; a layer may thin out.
        materials : mapping str -> Material
        base_y : float, m
            Elevation of the section base.

        Returns
        -------
        Section
        """
        g = _as_points("ground line", ground)
        if len(layers) == 0:
            raise InputError("layers: give at least one (name, material, bottom) layer")
        base_y = float(base_y)
        bounds = []
        for i, lay in enumerate(layers):
            if len(lay) != 3:
                raise InputError(f"layer {i}: expected (name, material, bottom), got {lay!r}")
            name, mat, bottom = lay
            if i == len(layers) - 1 or bottom is None:
                if bottom is not None and not np.isscalar(bottom):
                    bottom = None
                bnd = np.array([[g[0, 0], base_y], [g[-1, 0], base_y]]) if bottom is None else \
                    np.array([[g[0, 0], float(bottom)], [g[-1, 0], float(bottom)]])
                if i < len(layers) - 1:
                    raise InputError(f"layer '{name}': only the last layer may omit its bottom boundary")
            elif np.isscalar(bottom):
                bnd = np.array([[g[0, 0], float(bottom)], [g[-1, 0], float(bottom)]])
            else:
                bnd = _as_points(f"layer '{name}' bottom boundary", bottom)
                if np.any(np.diff(bnd[:, 0]) <= 0):
                    raise InputError(f"layer '{name}' bottom boundary: x must increase strictly")
            bounds.append((str(name), str(mat), bnd))
        # common abscissae: all vertices plus every crossing between boundaries and the ground
        lines = [g] + [b for _, _, b in bounds]
        xs = set(np.concatenate([ln[:, 0] for ln in lines]).tolist())
        for a in range(len(lines)):
            for b in range(a + 1, len(lines)):
                xs.update(_crossings(lines[a], lines[b]))
        xs = np.array(sorted(x for x in xs if g[0, 0] - _TOL <= x <= g[-1, 0] + _TOL))
        xs = np.clip(xs, g[0, 0], g[-1, 0])
        xs = np.unique(xs)

        def interp(line):
            return np.interp(xs, line[:, 0], line[:, 1])

        gy = interp(g)
        top = gy
        zones = []
        for i, (name, mat, bnd) in enumerate(bounds):
            bot = np.minimum(np.maximum(interp(bnd), base_y), top)
            if i == len(bounds) - 1:
                bot = np.full_like(xs, base_y)
            if np.any(bot > top + _TOL):
                raise InputError(f"layer '{name}': its bottom boundary is above the layer above it")
            if np.all(top - bot < _TOL):
                raise InputError(f"layer '{name}' has no thickness anywhere below the ground line; remove it")
            poly = np.concatenate([np.c_[xs, bot], np.c_[xs[::-1], top[::-1]]])
            # remove zero-length edges where the layer thins out at the ends
            poly = np.concatenate([poly, poly[:1]])
            zones.append(Zone(name, mat, poly))
            top = bot
        return cls(g, zones, materials, water=water, loads=loads, base_y=base_y)


def _crossings(a: np.ndarray, b: np.ndarray) -> list:
    """Abscissae where polylines a and b (x increasing) cross."""
    xs = np.union1d(a[:, 0], b[:, 0])
    d = np.interp(xs, a[:, 0], a[:, 1]) - np.interp(xs, b[:, 0], b[:, 1])
    out = []
    for i in range(len(xs) - 1):
        if d[i] * d[i + 1] < 0:
            out.append(xs[i] + (xs[i + 1] - xs[i]) * d[i] / (d[i] - d[i + 1]))
    return out
