"""Slices of many trial surfaces, computed once: the *slice bank*.

The bank is the contract between the geometry side (section, water, loads,
surfaces) and the methods of slices. Every array has shape
``(n_surfaces, n_slices)`` unless stated; every surface has the same number of
slices, so kernels vectorise over surfaces and strength samples at once.

Sliding frame
-------------
All x-coordinates in the bank are in the *sliding frame* ``x' = direction * x``
where ``direction`` (+1 or -1 per surface) is the sense of motion of the
sliding mass along the section's x axis. In the sliding frame the mass always
moves toward +x', slices are ordered by increasing x' (slice 0 is the upslope
end, under the crest) and a mirror-image section gives identical arrays.

``alpha`` is the base inclination in radians, **positive where the base
descends in the direction of motion** (the driving part of a circle, under
the crest) and negative near the toe of a deep circle.

Units: m, kN/m (forces per metre run), kPa, radians.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["SliceBank"]


@dataclass
class SliceBank:
    """Slice geometry, weights, water and loads of many trial surfaces.

    Attributes (shape ``(m, n)`` unless stated; sliding frame)
    ----------
    direction : (m,) int
        +1 if the mass moves toward +x of the section, -1 otherwise.
    x_left, x_right, width, x_mid : m
        Slice side abscissae, width ``b`` and midpoint abscissa (sliding frame).
    y_base_left, y_base_right, y_base : m
        Base elevation at the sides and at the midpoint.
    y_top_left, y_top_right, y_top : m
        Ground (top of slice) elevation at the sides and at the midpoint.
    alpha : rad
        Base inclination, positive where the base descends toward +x'.
    base_length : m
        ``width / cos(alpha)``.
    weight : kN/m
        Total weight of the slice (moist above the phreatic surface, saturated
        below; ponded water is *not* included, see ``q_v``).
    y_centroid : m
        Elevation of the slice's centre of gravity (lever arm of seismic force).
    u_base : kPa
        Pore-water pressure at the base midpoint.
    sigma_v_eff : kPa
        Vertical effective stress at the base midpoint before failure
        (overburden incl. surcharge and ponded water minus pore pressure);
        used by the su/σ'v strength law.
    depth : m
        ``y_top - y_base`` (depth of the base midpoint below ground).
    zone : int
        Index into ``zone_names`` of the zone at the base midpoint.
    q_v : kN/m
        External vertical force on the slice top, downward positive
        (surcharge, weight of ponded water).
    q_h : kN/m
        External horizontal force on the slice top, positive toward +x'
        (ponded water on an inclined face pushes toward the slope: negative).
    x_q, y_q : m
        Point of application of ``(q_h, q_v)``.
    kh : float
        Pseudo-static horizontal seismic coefficient; force ``kh * weight``
        acts toward +x' at ``y_centroid``.
    crack_force : (m,) kN/m
        Horizontal water force in a tension crack at the upslope end,
        positive toward +x' (driving); zero when dry or absent.
    crack_y : (m,) m
        Elevation of the line of action of ``crack_force``.
    centre_x, centre_y, radius : (m,) m
        Circle centre (sliding frame) and radius; NaN for non-circular surfaces.
    valid : (m,) bool
        False for surfaces rejected at construction (``reason`` says why).
    reason : (m,) object
        Empty string for valid surfaces, else a short reason.
    zone_names : list of str
        Names of the zones referenced by ``zone``.
    zone_materials : list of str
        Material name of each zone in ``zone_names`` (added by the geometry
        side so :func:`slope.strength.base_strength` can map zones to
        materials).
    """

    direction: np.ndarray
    x_left: np.ndarray
    x_right: np.ndarray
    width: np.ndarray
    x_mid: np.ndarray
    y_base_left: np.ndarray
    y_base_right: np.ndarray
    y_base: np.ndarray
    y_top_left: np.ndarray
    y_top_right: np.ndarray
    y_top: np.ndarray
    alpha: np.ndarray
    base_length: np.ndarray
    weight: np.ndarray
    y_centroid: np.ndarray
    u_base: np.ndarray
    sigma_v_eff: np.ndarray
    depth: np.ndarray
    zone: np.ndarray
    q_v: np.ndarray
    q_h: np.ndarray
    x_q: np.ndarray
    y_q: np.ndarray
    kh: float
    crack_force: np.ndarray
    crack_y: np.ndarray
    centre_x: np.ndarray
    centre_y: np.ndarray
    radius: np.ndarray
    valid: np.ndarray
    reason: np.ndarray
    zone_names: list = field(default_factory=list)
    zone_materials: list = field(default_factory=list)

    @property
    def n_surfaces(self) -> int:
        return int(self.width.shape[0])

    @property
    def n_slices(self) -> int:
        return int(self.width.shape[1])

    def base_points_section_frame(self, n_per_base: int = 1):
        """Points along each slice base in the *section* frame.

        Parameters
        ----------
        n_per_base : int
            Points per base, at the centres of ``n_per_base`` equal parts
            (1 gives the base midpoint).

        Returns
        -------
        x, y : ndarray, shape (m, n, n_per_base), m
        """
        t = (np.arange(n_per_base) + 0.5) / n_per_base
        xl, xr = self.x_left[..., None], self.x_right[..., None]
        yl, yr = self.y_base_left[..., None], self.y_base_right[..., None]
        xs = xl + (xr - xl) * t
        ys = yl + (yr - yl) * t
        return self.direction[:, None, None] * xs, ys

    def subset(self, index) -> "SliceBank":
        """A bank holding only the surfaces ``index`` (any numpy index)."""
        out = {}
        for name, value in self.__dict__.items():
            if isinstance(value, np.ndarray) and value.ndim >= 1 and value.shape[0] == self.n_surfaces:
                out[name] = value[index]
            else:
                out[name] = value
        return SliceBank(**out)
