"""Pore-water pressures: phreatic surface, ru, piezometric lines, ponding.

Which rule sets the pore pressure u at a point in zone Z (first that applies):

1. a piezometric line given for zone Z: u = γw (y_p(x) − y), the head read
   straight off the line (no inclination correction);
2. a pore-pressure ratio ru for zone Z (or for all zones): u = ru · σv, σv the
   total vertical stress of the soil column above the point (ru = u/(γ z),
   Bishop & Morgenstern 1960);
3. the phreatic surface: u = γw (y_w(x) − y) cos²β, where β is the local
   inclination of the phreatic surface. This is the usual correction for
   seepage: with flow lines parallel to a straight phreatic surface the
   equipotentials are normal to it, so the pressure head at depth
   h = y_w − y below it is h cos²β (exact for an infinite slope with parallel
   seepage). ``inclination_correction=False`` uses the hydrostatic
   u = γw (y_w − y).

Negative pressures (suction) are set to zero. The phreatic surface also sets
unit weights (saturated below it) and ponding: where it lies above the ground
line the water is ponded, and its weight and thrust act on the slice tops
(see :mod:`slope.bank`), never in the slice weight.

Units: m, kPa, kN/m³.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from .errors import InputError

__all__ = ["Water", "GAMMA_W"]

GAMMA_W = 9.81  # kN/m³, unit weight of water


def _line(name, pts):
    from .section import _as_points

    arr = _as_points(name, pts)
    if np.any(np.diff(arr[:, 0]) <= 0):
        raise InputError(f"{name}: x must increase strictly along the line; give it from left to right")
    return arr


@dataclass
class Water:
    """Water conditions of a section.

    Parameters
    ----------
    phreatic : array_like (k, 2), optional, m
        Phreatic surface polyline, x increasing; held level beyond its ends.
        Where it is above the ground line the water is ponded.
    ru : float or mapping zone-name -> float, optional
        Pore-pressure ratio, for all zones (float) or per zone.
    piezometric : mapping zone-name -> array_like (k, 2), optional, m
        Piezometric line per zone.
    inclination_correction : bool
        Apply the cos²β seepage correction to phreatic pressures (default).
    gamma_w : float, kN/m³
        Unit weight of water.
    """

    phreatic: np.ndarray | None = None
    ru: float | Mapping | None = None
    piezometric: Mapping = field(default_factory=dict)
    inclination_correction: bool = True
    gamma_w: float = GAMMA_W

    def __post_init__(self):
        if self.phreatic is not None:
            self.phreatic = _line("phreatic surface", self.phreatic)
        self.piezometric = {str(k): _line(f"piezometric line of zone '{k}'", v)
                            for k, v in dict(self.piezometric or {}).items()}
        if not self.gamma_w > 0:
            raise InputError(f"water: gamma_w must be positive (kN/m³), got {self.gamma_w}")
        if self.ru is not None:
            values = self.ru.values() if isinstance(self.ru, Mapping) else [self.ru]
            for v in values:
                if not 0 <= float(v) < 1:
                    raise InputError(f"water: ru must be in [0, 1), got {v}")

    def validate(self, section):
        """Check that zone names referenced here exist in ``section``."""
        names = set(section.zone_names)
        refs = list(self.piezometric) + (list(self.ru) if isinstance(self.ru, Mapping) else [])
        for k in refs:
            if k not in names:
                raise InputError(
                    f"water: zone '{k}' (piezometric line or ru) is not a zone of the section; "
                    f"use one of {sorted(names)}"
                )

    # -------------------------------------------------------------- evaluation
    def phreatic_y(self, x) -> np.ndarray:
        """Phreatic elevation at x (m); -inf everywhere when there is none."""
        x = np.asarray(x, dtype=float)
        if self.phreatic is None:
            return np.full(x.shape, -np.inf)
        return np.interp(x, self.phreatic[:, 0], self.phreatic[:, 1])

    def phreatic_cos2(self, x) -> np.ndarray:
        """cos²β of the phreatic surface's inclination at x (1 when uncorrected)."""
        x = np.asarray(x, dtype=float)
        if self.phreatic is None or not self.inclination_correction or len(self.phreatic) < 2:
            return np.ones(x.shape)
        px, py = self.phreatic[:, 0], self.phreatic[:, 1]
        s = np.diff(py) / np.diff(px)
        i = np.searchsorted(px, x, side="right") - 1
        slope = np.where((i < 0) | (i >= len(s)), 0.0, s[np.clip(i, 0, len(s) - 1)])
        return 1.0 / (1.0 + slope * slope)

    def pore_pressure(self, x, y, zone, zone_names, sigma_v_soil) -> np.ndarray:
        """Pore pressure (kPa) at points (x, y) in zones ``zone``.

        Parameters
        ----------
        x, y : ndarray, m
        zone : ndarray of int
            Zone index of each point (-1 outside every zone gives u = 0).
        zone_names : list of str
        sigma_v_soil : ndarray, kPa
            Total vertical stress of the soil column above each point (for ru).
        """
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        u = self.gamma_w * (self.phreatic_y(x) - y) * self.phreatic_cos2(x)
        u = np.where(np.isfinite(u), u, 0.0)
        if self.ru is not None:
            if isinstance(self.ru, Mapping):
                for name, r in self.ru.items():
                    k = zone_names.index(name)
                    u = np.where(zone == k, float(r) * sigma_v_soil, u)
            else:
                u = float(self.ru) * sigma_v_soil
        for name, line in self.piezometric.items():
            k = zone_names.index(name)
            up = self.gamma_w * (np.interp(x, line[:, 0], line[:, 1]) - y)
            u = np.where(zone == k, up, u)
        return np.maximum(u, 0.0)
