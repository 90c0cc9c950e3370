"""External loads: strip surcharges, pseudo-static seismic coefficient, tension crack.

- A strip surcharge is a vertical pressure (kPa) on the ground line between
  two abscissae, uniform or varying linearly; it acts on the slice tops
  (``q_v``) and adds to the vertical stress σv at the slice bases below it.
- ``kh`` is the pseudo-static horizontal seismic coefficient: every slice
  carries a horizontal force kh·W at its centre of gravity, in the direction
  of sliding.
- A tension crack of depth ``depth`` (m) truncates the upslope end of every
  trial surface at the point where the surface first lies ``depth`` below the
  ground; the crack carries no shear. When ``water_filled`` the crack holds
  water to the fraction ``fill`` of its depth, pushing the mass downslope with
  γw h²/2 at h/3 above the crack bottom.

Units: m, kPa, kN/m.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from .errors import InputError

__all__ = ["StripLoad", "TensionCrack", "Loads"]


@dataclass(frozen=True)
class StripLoad:
    """Vertical pressure on the ground between ``x1`` and ``x2``.

    Parameters
    ----------
    x1, x2 : float, m
        Ends of the strip, ``x1 < x2`` (section frame).
    q : float, kPa
        Pressure at ``x1`` (downward positive).
    q2 : float, optional, kPa
        Pressure at ``x2`` for a linearly varying strip; defaults to ``q``.
    """

    x1: float
    x2: float
    q: float
    q2: float | None = None

    def __post_init__(self):
        if not self.x2 > self.x1:
            raise InputError(f"strip load: x2 ({self.x2}) must be greater than x1 ({self.x1})")
        if self.q2 is None:
            object.__setattr__(self, "q2", float(self.q))
        if self.q < 0 or self.q2 < 0:
            raise InputError(f"strip load: pressures q and q2 must be >= 0 kPa, got {self.q}, {self.q2}")

    def pressure(self, x) -> np.ndarray:
        """Pressure (kPa) at abscissae x (zero outside the strip)."""
        x = np.asarray(x, dtype=float)
        t = (x - self.x1) / (self.x2 - self.x1)
        inside = (x >= self.x1) & (x <= self.x2)
        return np.where(inside, self.q + (self.q2 - self.q) * t, 0.0)

    def force_on(self, a, b):
        """Resultant (kN/m) and its abscissa on the interval [a, b] (section frame)."""
        lo = np.clip(np.minimum(a, b), self.x1, self.x2)
        hi = np.clip(np.maximum(a, b), self.x1, self.x2)
        s = (self.q2 - self.q) / (self.x2 - self.x1)
        # ∫ (q + s (x - x1)) dx and ∫ x (...) dx over [lo, hi], closed form
        f = self.q * (hi - lo) + 0.5 * s * ((hi - self.x1) ** 2 - (lo - self.x1) ** 2)
        m = (self.q - s * self.x1) * 0.5 * (hi ** 2 - lo ** 2) + s * (hi ** 3 - lo ** 3) / 3.0
        xc = np.where(f > 0, m / np.where(f > 0, f, 1.0), 0.5 * (lo + hi))
        return f, xc


@dataclass(frozen=True)
class TensionCrack:
    """Tension crack at the upslope end of every trial surface.

    Parameters
    ----------
    depth : float, m
        Crack depth below the ground line (> 0).
    water_filled : bool
        Whether the crack holds water.
    fill : float
        Fraction of the depth filled with water when ``water_filled`` (0-1].
    """

    depth: float
    water_filled: bool = False
    fill: float = 1.0

    def __post_init__(self):
        if not self.depth > 0:
            raise InputError(f"tension crack: depth must be > 0 m, got {self.depth}")
        if not 0 < self.fill <= 1:
            raise InputError(f"tension crack: fill must be in (0, 1], got {self.fill}")


@dataclass
class Loads:
    """External loads of a section.

    Parameters
    ----------
    strips : sequence of StripLoad
    kh : float
        Pseudo-static horizontal seismic coefficient (0 ≤ kh < 1).
    crack : TensionCrack, optional
    """

    strips: Sequence[StripLoad] = field(default_factory=list)
    kh: float = 0.0
    crack: TensionCrack | None = None

    def __post_init__(self):
        self.strips = list(self.strips)
        if not 0 <= self.kh < 1:
            raise InputError(f"loads: kh must be in [0, 1), got {self.kh}")

    def validate(self, section):
        for s in self.strips:
            if s.x1 < section.x_min - 1e-9 or s.x2 > section.x_max + 1e-9:
                raise InputError(
                    f"strip load [{s.x1:g}, {s.x2:g}] m lies beyond the ground line "
                    f"({section.x_min:g} to {section.x_max:g} m); move it onto the section"
                )

    def surcharge(self, x) -> np.ndarray:
        """Total strip pressure (kPa) at abscissae x (section frame)."""
        x = np.asarray(x, dtype=float)
        out = np.zeros(x.shape)
        for s in self.strips:
            out = out + s.pressure(x)
        return out
