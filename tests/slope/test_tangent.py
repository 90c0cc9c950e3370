"""tan φ of the strength law: the C library's tan, as in the compiled strength pass.

Reference: Python's ``math.tan``, which calls the C library's ``tan``
(the function numba's compiled kernels call). NumPy's ``np.tan`` may not
match it on CPUs with AVX-512; the strength law must, or the simulator's
compiled pass and its array path give different FS for the same realisation.
"""
import math

import numpy as np

from slipfield.slope.examples import two_zone_section
from slipfield.slope.bank import build_bank
from slipfield.slope.search import lattice_circles
from slipfield.slope.strength import base_strength
from slipfield.slope.surfaces import Circle
from slipfield.slope.tangent import tan_degrees


def test_tan_degrees_is_the_c_library_tan_bit_for_bit():
    phi = np.random.default_rng(7).uniform(0.0, 60.0, 100_000)
    expected = np.array([math.tan(math.radians(v)) for v in phi])
    got = tan_degrees(phi.reshape(400, 250))
    assert got.shape == (400, 250)
    np.testing.assert_array_equal(got.reshape(-1), expected)
    assert np.isnan(tan_degrees([np.nan]))[0]


def test_strength_law_takes_its_tan_from_the_c_library():
    sec = two_zone_section()
    circ = lattice_circles(sec, nx=3, ny=3, n_radii=2)
    bank = build_bank(sec, [Circle(float(x), float(y), float(r)) for x, y, r in zip(circ.xc, circ.yc, circ.radius)],
                      n_slices=10)
    phi = np.random.default_rng(3).uniform(15.0, 40.0, (50,) + bank.zone.shape)
    _, tan_phi = base_strength(bank, sec.materials, "drained", overrides={"phi": phi})
    expected = np.vectorize(lambda v: math.tan(math.radians(v)))(phi)
    used = np.asarray(bank.zone) >= 0
    np.testing.assert_array_equal(tan_phi[:, used], expected[:, used])
