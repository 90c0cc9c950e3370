"""Cross-section validation and the vertical-column integrals.

Areas are checked against the shoelace formula and trapezoids (closed forms).
"""
import numpy as np
import pytest

from slipfield.slope.errors import InputError
from slipfield.slope.examples import layered_weak_section, simple_slope, two_zone_section
from slipfield.slope.section import Section, Zone, polygon_area
from slipfield.slope.strength import Material

SOIL = {"soil": Material("soil", unit_weight=20.0, c=10.0, phi=25.0)}
GROUND = [[0.0, 10.0], [10.0, 10.0], [30.0, 0.0], [40.0, 0.0]]


def _box_zones():
    upper = [[0, 5], [20, 5], [30, 0], [40, 0], [40, -5], [0, -5], [0, 5]]
    lower = None
    whole = [[0, -5], [40, -5], [40, 0], [30, 0], [10, 10], [0, 10], [0, -5]]
    return whole, upper, lower


def test_examples_build_and_tile():
    # Zone areas must add up to the region between the ground and base_y
    # (trapezoid rule on the straight-segment ground line: exact).
    for sec in (simple_slope(), two_zone_section(), layered_weak_section()):
        g = sec.ground
        domain = np.sum(0.5 * (g[1:, 1] + g[:-1, 1] - 2 * sec.base_y) * np.diff(g[:, 0]))
        assert sum(z.area for z in sec.zones) == pytest.approx(domain, rel=1e-12)


def test_from_layers_areas_closed_form():
    # layered_weak_section: ground 0..75 m; upper layer above y = -0.4:
    # 25·10 + 20·10/2 + 75·0.4 = 380 m²; seam 0.6·75 = 45 m²; lower 11·75 = 825 m².
    sec = layered_weak_section()
    assert [z.area for z in sec.zones] == pytest.approx([380.0, 45.0, 825.0], rel=1e-12)


def test_layer_boundary_cut_by_ground():
    # A boundary that crosses the face: the upper layer thins out to nothing.
    # Upper layer = region above y = 5 below the ground: 10·5 + 10·5/2 = 75 m².
    sec = Section.from_layers(GROUND, [("top", "soil", 5.0), ("rest", "soil", None)], SOIL, base_y=-5)
    assert sec.zones[0].area == pytest.approx(75.0, rel=1e-12)


def test_unclosed_polygon_named():
    with pytest.raises(InputError, match="zone 'a' polygon is not closed"):
        Zone("a", "soil", [[0, 0], [1, 0], [1, 1]] + [[0, 1]])


def test_self_intersecting_polygon():
    with pytest.raises(InputError, match="intersects itself"):
        Zone("bow", "soil", [[0, 0], [1, 1], [1, 0], [0, 1], [0, 0]])


def test_ground_must_increase():
    whole = [[0, -5], [40, -5], [40, 0], [30, 0], [10, 10], [0, 10], [0, -5]]
    with pytest.raises(InputError, match="ground line: x must increase"):
        Section([[0, 10], [10, 10], [10, 0], [40, 0]], [Zone("z", "soil", whole)], SOIL)


def test_undefined_material_named():
    whole, _, _ = _box_zones()
    with pytest.raises(InputError, match="zone 'z' refers to material 'clay'"):
        Section(GROUND, [Zone("z", "clay", whole)], SOIL)


def test_overlap_and_gap_detected():
    whole, _, _ = _box_zones()
    block = [[0, -5], [40, -5], [40, -2], [0, -2], [0, -5]]
    with pytest.raises(InputError, match="overlap"):
        Section(GROUND, [Zone("z", "soil", whole), Zone("b", "soil", block)], SOIL)
    upper = [[0, -2], [40, -2], [40, 0], [30, 0], [10, 10], [0, 10], [0, -2]]
    lower = [[0, -5], [40, -5], [40, -3], [0, -3], [0, -5]]
    with pytest.raises(InputError, match="no zone covers"):
        Section(GROUND, [Zone("u", "soil", upper), Zone("l", "soil", lower)], SOIL)


def test_thin_overlap_caught_by_area_balance():
    # An overlap 1 cm thick slips between grid rows; the area balance still sees it.
    upper = [[0, -2.0], [40, -2.0], [40, 0], [30, 0], [10, 10], [0, 10], [0, -2.0]]
    lower = [[0, -5], [40, -5], [40, -1.99], [0, -1.99], [0, -5]]
    with pytest.raises(InputError, match="overlap"):
        Section(GROUND, [Zone("u", "soil", upper), Zone("l", "soil", lower)], SOIL, base_y=-5)


def test_zone_above_ground():
    poly = [[0, -5], [40, -5], [40, 3], [30, 3], [10, 10], [0, 10], [0, -5]]
    with pytest.raises(InputError, match="rises above the ground line"):
        Section(GROUND, [Zone("z", "soil", poly)], SOIL)


def test_bad_material_values():
    with pytest.raises(InputError, match="unit_weight must be positive"):
        Material("m", unit_weight=-18.0)
    with pytest.raises(InputError, match="cohesion c must be >= 0"):
        Material("m", unit_weight=18.0, c=-1.0)
    with pytest.raises(InputError, match="phi must be in"):
        Material("m", unit_weight=18.0, phi=95.0)
    with pytest.raises(InputError, match="su_model"):
        Material("m", unit_weight=18.0, su_model="linear")


def test_column_lengths_and_zone_at():
    # Two-zone section: fill above y = 4 (x < 36), clay below. At x = 10 the
    # column from y = -15 to 12 has 8 m of fill and 19 m of clay.
    sec = two_zone_section()
    L, M = sec.column_lengths(np.array([10.0]), np.array([-15.0]), np.array([12.0]), moment=True)
    assert L[0] == pytest.approx([8.0, 19.0])
    # first moments ∫y dy: fill (12² − 4²)/2 = 64, clay (4² − 15²)/2 = −104.5
    assert M[0] == pytest.approx([64.0, -104.5])
    assert list(sec.zone_at(np.array([10.0, 10.0, 60.0]), np.array([5.0, 3.0, 20.0]))) == [0, 1, -1]


def test_polygon_area_shoelace():
    # unit square counter-clockwise: +1; clockwise: −1
    sq = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float)
    assert polygon_area(sq) == pytest.approx(1.0)
    assert polygon_area(sq[::-1]) == pytest.approx(-1.0)
