"""Infinite-slope limit state (closed form), for checks and benchmarks.

F = c'/(γ z sinβ cosβ) + (1 − r_u sec²β) tanφ'/tanβ
(Skempton & DeLory 1957; Duncan, Wright & Brandon 2014, *Soil Strength and
Slope Stability*, 2nd ed.), with slope angle β, depth z of the slip plane,
unit weight γ and pore-pressure ratio r_u. F is linear in c' and tanφ', so
pf can be computed exactly for normal inputs and by a 1-D integral otherwise.
"""
from __future__ import annotations

import math

import numpy as np

from ..errors import InputError

__all__ = ["InfiniteSlope"]


class InfiniteSlope:
    """Vectorised infinite-slope limit state ``g(X) -> FS``.

    Parameters
    ----------
    slope_angle : float
        β, degrees (0 < β < 90).
    depth : float
        Vertical depth z of the slip plane, m (> 0).
    unit_weight : float
        γ, kN/m³ (> 0), used when it is not one of the variables.
    ru : float
        Pore-pressure ratio r_u (dimensionless, 0 ≤ r_u < cos²β).
    columns : dict
        Column of ``X`` holding each variable: ``"c"`` (c', kPa) and one of
        ``"tan_phi"`` (tanφ') or ``"phi"`` (φ', degrees); optionally
        ``"unit_weight"`` (kN/m³). Default ``{"c": 0, "tan_phi": 1}``.
    """

    def __init__(self, slope_angle, depth, unit_weight=18.0, ru=0.0, columns=None):
        if not 0.0 < float(slope_angle) < 90.0:
            raise InputError(f"slope_angle must be between 0 and 90 degrees, got {slope_angle}")
        if float(depth) <= 0:
            raise InputError(f"depth of the slip plane must be > 0 m, got {depth}")
        if float(unit_weight) <= 0:
            raise InputError(f"unit_weight must be > 0 kN/m3, got {unit_weight}")
        b = math.radians(float(slope_angle))
        if not 0.0 <= float(ru) < math.cos(b) ** 2:
            raise InputError(f"ru must be in [0, cos^2(beta)) = [0, {math.cos(b)**2:.3f}), got {ru}")
        cols = dict(columns or {"c": 0, "tan_phi": 1})
        if "c" not in cols or ("tan_phi" in cols) == ("phi" in cols):
            raise InputError("columns must name 'c' and exactly one of 'tan_phi' or 'phi'")
        self.beta = b
        self.depth = float(depth)
        self.unit_weight = float(unit_weight)
        self.ru = float(ru)
        self.columns = cols

    def coefficients(self, unit_weight=None):
        """(a, b) with F = a c' + b tanφ' (a in 1/kPa)."""
        g = self.unit_weight if unit_weight is None else unit_weight
        s, c = math.sin(self.beta), math.cos(self.beta)
        a = 1.0 / (g * self.depth * s * c)
        b = (1.0 - self.ru / c**2) / math.tan(self.beta)
        return a, b

    def __call__(self, X):
        X = np.atleast_2d(np.asarray(X, dtype=float))
        c = X[:, self.columns["c"]]
        if "tan_phi" in self.columns:
            t = X[:, self.columns["tan_phi"]]
        else:
            t = np.tan(np.radians(X[:, self.columns["phi"]]))
        g = X[:, self.columns["unit_weight"]] if "unit_weight" in self.columns else self.unit_weight
        s, co = math.sin(self.beta), math.cos(self.beta)
        return c / (g * self.depth * s * co) + (1.0 - self.ru / co**2) * t / math.tan(self.beta)
