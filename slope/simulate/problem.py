"""What the simulator consumes: a slice bank, materials and random properties.

Units: m, kPa, degrees, kN/m³.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

from ..errors import InputError

PROPERTY_NAMES = ("c", "phi", "su", "su_ratio")


@dataclass(frozen=True)
class RandomProperty:
    """One spatially random strength property of one material.

    Parameters
    ----------
    material : str
        Material name (must be a key of the problem's materials).
    name : {"c", "phi", "su", "su_ratio"}
        kPa, degrees, kPa, - respectively.
    mean, cov : float
        Mean (units of the property) and coefficient of variation (-).
    theta_h, theta_v : float, m
        Vanmarcke scales of fluctuation; ``math.inf`` makes the property one
        random variable per zone and realisation.
    distribution, model, angle
        Marginal name (``fields.marginals``), correlation model name, rotation (degrees).
    """

    material: str
    name: str
    mean: float
    cov: float
    theta_h: float = math.inf
    theta_v: float | None = None
    distribution: str = "lognormal"
    model: str = "exponential"
    angle: float = 0.0

    def __post_init__(self):
        if self.name not in PROPERTY_NAMES:
            raise InputError(f"random property name {self.name!r}: use one of {PROPERTY_NAMES}")
        tv = self.theta_h if self.theta_v is None else self.theta_v
        object.__setattr__(self, "theta_v", float(tv))
        for lab in ("theta_h", "theta_v"):
            v = float(getattr(self, lab))
            if not v > 0:
                raise InputError(f"random property {self.material}.{self.name}: {lab} must be > 0 m "
                                 f"(or inf for a single random variable), got {v}")


@dataclass
class RandomProblem:
    """A slope with spatially random strengths.

    Parameters
    ----------
    bank : SliceBank
        Candidate surfaces (geometry computed once), from ``slope.bank.build_bank``.
    materials : dict str -> Material
    properties : sequence of RandomProperty
    hypothesis : {"drained", "undrained"}
    method : str
        Method of slices for ``slope.methods.factor_of_safety``.
    cell_size : float, m
        Spacing of the field grid.
    mapping : {"average", "midpoint"}
        See :mod:`slope.simulate.mapping`.
    n_per_base : int
        Points per base for ``average``.
    fixed_index : int, optional
        Bank row of the deterministic critical surface (default: lowest mean-strength FS).
    """

    bank: object
    materials: dict
    properties: tuple
    hypothesis: str = "drained"
    method: str = "bishop"
    cell_size: float = 0.5
    mapping: str = "average"
    n_per_base: int = 3
    fixed_index: int | None = None
    generator: str = "fft"
    extra: dict = field(default_factory=dict)

    def __post_init__(self):
        self.properties = tuple(self.properties)
        for p in self.properties:
            if p.material not in self.materials:
                raise InputError(f"random property {p.material}.{p.name}: no material named "
                                 f"{p.material!r}; use one of {sorted(self.materials)}")
        if self.mapping not in ("average", "midpoint"):
            raise InputError(f"mapping must be 'average' or 'midpoint', got {self.mapping!r}")
        if not self.cell_size > 0:
            raise InputError(f"cell_size must be > 0 m, got {self.cell_size}")
