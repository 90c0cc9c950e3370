"""Random fields drawn in physical units: the su/σ'v ratio field shown as su in kPa (issue 13 item 6).

The σ'v used is checked against Terzaghi's effective stress principle for
level ground with a hydrostatic water table, σ'v = q + γ d_w + (γsat − γw)(z − d_w)
(e.g. Craig's Soil Mechanics, 7th ed., Knappett & Craig 2012, §3.4), across
two layers of different unit weight.
"""
from types import SimpleNamespace

import numpy as np

from slipfield.slope.bank import vertical_effective_stress
from slipfield.slope.loads import Loads, StripLoad
from slipfield.slope.section import Section, Zone
from slipfield.slope.strength import Material
from slipfield.slope.water import Water

GW = 9.81


def _level_ground(q=12.0, dw=2.0):
    """Level ground at y = 0 over 40 m: 3 m of crust (γ 17, γsat 19) on clay (γ 16, γsat 18) to y = −15 m."""
    ground = np.array([[0.0, 0.0], [40.0, 0.0]])
    crust = np.array([[0, 0], [40, 0], [40, -3], [0, -3], [0, 0]], float)
    clay = np.array([[0, -3], [40, -3], [40, -15], [0, -15], [0, -3]], float)
    mats = {"crust": Material("crust", unit_weight=17.0, unit_weight_sat=19.0, c=5.0, phi=30.0),
            "clay": Material("clay", unit_weight=16.0, unit_weight_sat=18.0, su_model="ratio", su_ratio=0.3,
                             su_min=8.0)}
    water = Water(phreatic=np.array([[0.0, -dw], [40.0, -dw]]), gamma_w=GW)
    loads = Loads(strips=[StripLoad(10.0, 30.0, q)])
    return Section(ground, [Zone("crust", "crust", crust), Zone("clay", "clay", clay)], mats, water=water,
                   loads=loads, base_y=-15.0)


def test_vertical_effective_stress_is_terzaghis_for_level_ground():
    sec = _level_ground()
    z = np.array([1.0, 2.5, 3.0, 7.0, 14.0])
    x = np.full_like(z, 20.0)  # under the strip load
    got = vertical_effective_stress(sec, x, -z)
    # by hand: moist crust to the water table at 2 m, saturated crust to 3 m, saturated clay below
    sat_crust = np.clip(z - 2.0, 0, 1.0)
    sat_clay = np.clip(z - 3.0, 0, None)
    want = 12.0 + 17.0 * np.minimum(z, 2.0) + 19.0 * sat_crust + 18.0 * sat_clay - GW * np.maximum(z - 2.0, 0)
    np.testing.assert_allclose(got, want, rtol=1e-9)
    off = vertical_effective_stress(sec, np.array([5.0]), np.array([-7.0]))  # outside the strip: no q
    np.testing.assert_allclose(off, want[3] - 12.0, rtol=1e-9)
    assert np.isnan(vertical_effective_stress(sec, np.array([20.0]), np.array([-20.0])))[0]  # below the section


def test_ratio_field_is_drawn_as_su_in_kpa():
    from slipfield.slope.report.figures.catalogue import _physical

    sec = _level_ground()
    grid = SimpleNamespace(x=np.array([20.0]), y=np.array([-14.0, -7.0, -3.5]))
    factor = np.array([[0.5, 1.0, 2.0]])
    prop = SimpleNamespace(prop="su_ratio", multiplier=True, material="clay")
    values, label, units, note = _physical(SimpleNamespace(section=sec), prop, grid, factor)
    sv = vertical_effective_stress(sec, np.full(3, 20.0), grid.y)
    np.testing.assert_allclose(values[0], factor[0] * np.maximum(0.3 * sv, 8.0), rtol=1e-12)
    assert units == "kPa" and "0.3" in label and "su/σ'v" in note
    assert values.min() > 10.0  # tens of kPa at these depths, not a ratio below 1
