"""Sections for demos, benchmarks and tests — scenarios of our own invention.

None of these is a real site. Units: m, kPa, kN/m³, degrees.
"""
from __future__ import annotations

import numpy as np

from .loads import Loads
from .section import Section, Zone
from .strength import Material
from .water import Water

__all__ = ["simple_slope", "two_zone_section", "layered_weak_section", "clay_over_stiff_cut"]


def simple_slope(height=10.0, cot_beta=2.0, depth_factor=2.0, crest=None, toe=None,
                 material=None, water=None, loads=None) -> Section:
    """A homogeneous slope: toe at (0, 0), crest at (cot β · H, H), firm base at depth.

    Parameters
    ----------
    height : float, m
        Slope height H.
    cot_beta : float
        Horizontal : vertical of the face (2 for a 2H:1V slope).
    depth_factor : float
        D: the section base lies at y = H − D·H (D = 1 puts it at toe level).
    crest, toe : float, optional, m
        Length of level ground beyond the crest and in front of the toe
        (default 3H each).
    material : Material, optional
        Default c' = 10 kPa, φ' = 25°, γ = 20 kN/m³.

    Returns
    -------
    Section
        The face rises to the right, so failing masses move toward -x
        (mirror it with ``mirror_section`` in tests).
    """
    H = float(height)
    crest = 3 * H if crest is None else float(crest)
    toe = 3 * H if toe is None else float(toe)
    L = cot_beta * H
    ground = np.array([[-toe, 0.0], [0.0, 0.0], [L, H], [L + crest, H]])
    base_y = H - depth_factor * H
    mat = material or Material("soil", unit_weight=20.0, c=10.0, phi=25.0)
    poly = np.vstack([ground, [[L + crest, base_y], [-toe, base_y], [-toe, 0.0]]])
    return Section(ground, [Zone("soil", mat.name, poly)], {mat.name: mat}, water=water, loads=loads,
                   base_y=base_y)


def two_zone_section() -> Section:
    """A 12 m high 2H:1V embankment of sandy fill on a clay foundation with a water table.

    Invented scenario used by the benchmarks: fill c' = 5 kPa, φ' = 32°,
    γ = 19/20 kN/m³; clay c' = 12 kPa, φ' = 24°, su = 45 kPa + 1.5 kPa/m,
    γ = 18/19 kN/m³; the phreatic surface falls from 8 m under the crest to
    the toe. Face descends to the right (mass moves toward +x).
    """
    fill = Material("fill", unit_weight=19.0, unit_weight_sat=20.0, c=5.0, phi=32.0)
    clay = Material("clay", unit_weight=18.0, unit_weight_sat=19.0, c=12.0, phi=24.0,
                    su_model="depth", su=45.0, su_gradient=1.5)
    ground = [[0.0, 12.0], [20.0, 12.0], [44.0, 0.0], [80.0, 0.0]]
    # the fill ends where the face meets y = 4 m (x = 36)
    fill_poly = [[0.0, 4.0], [36.0, 4.0], [20.0, 12.0], [0.0, 12.0], [0.0, 4.0]]
    clay_poly = [[0.0, -15.0], [80.0, -15.0], [80.0, 0.0], [44.0, 0.0], [36.0, 4.0], [0.0, 4.0], [0.0, -15.0]]
    water = Water(phreatic=[[0.0, 8.0], [20.0, 7.0], [44.0, 0.0], [80.0, 0.0]])
    return Section(ground, [Zone("fill", "fill", fill_poly), Zone("clay", "clay", clay_poly)],
                   {"fill": fill, "clay": clay}, water=water, base_y=-15.0)


def layered_weak_section() -> Section:
    """A 10 m high 2H:1V slope cut in stiff clay over a thin weak seam (invented).

    Stiff clay c' = 20 kPa, φ' = 28°; a 0.6 m seam at y = -1.0 to -0.4 m with
    c' = 0, φ' = 12°; stiff clay below. γ = 20 kN/m³ throughout, dry.
    """
    stiff = Material("stiff clay", unit_weight=20.0, c=20.0, phi=28.0)
    seam = Material("seam", unit_weight=20.0, c=0.0, phi=12.0)
    ground = [[0.0, 10.0], [25.0, 10.0], [45.0, 0.0], [75.0, 0.0]]
    layers = [("upper", "stiff clay", -0.4), ("seam", "seam", -1.0), ("lower", "stiff clay", None)]
    return Section.from_layers(ground, layers, {"stiff clay": stiff, "seam": seam}, base_y=-12.0)


def clay_over_stiff_cut() -> Section:
    """A 10 m high cut (crest 0-10 m, toe at 25 m) in clay down to y = 2 m over stiffer soil (invented).

    Clay c' = 8 kPa, φ' = 25°, γ = 18 kN/m³ (zone ``upper``); stiff soil
    c' = 15 kPa, φ' = 30°, γ = 19 kN/m³ (zone ``lower``); dry. Blocks along
    the clay's bottom need more interslice shear than the clay carries when
    they enter near the crest's end: the section of the interslice-strength
    tests and of ``scripts/bench_bank_checks.py``.
    """
    mats = {"clay": Material("clay", unit_weight=18.0, c=8.0, phi=25.0),
            "stiff": Material("stiff", unit_weight=19.0, c=15.0, phi=30.0)}
    ground = [[0.0, 10.0], [10.0, 10.0], [25.0, 0.0], [40.0, 0.0]]
    return Section.from_layers(ground, [("upper", "clay", 2.0), ("lower", "stiff", None)], mats, base_y=-5.0)
