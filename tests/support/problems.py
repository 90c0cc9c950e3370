"""Problems shared by several test modules (built from published geometries)."""
import numpy as np

from slipfield.fields.marginals import make_marginal
from slipfield.slope.bank import build_bank
from slipfield.slope.examples import simple_slope
from slipfield.slope.methods import factor_of_safety
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import RandomProblem, RandomProperty
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Circle


def gf_problem(theta, cov, mean_c=0.25, H=10.0, gamma=20.0, nx=6, ny=6, n_radii=4):
    """Griffiths & Fenton (2004) geometry: 2H:1V, D = 2, su = C·γH, lognormal, isotropic Markov."""
    su = mean_c * gamma * H
    mat = Material("clay", unit_weight=gamma, su_model="constant", su=su)
    sec = simple_slope(height=H, cot_beta=2.0, depth_factor=2.0, material=mat, crest=2 * H, toe=2 * H)
    c = lattice_circles(sec, nx=nx, ny=ny, n_radii=n_radii)
    surfaces = [Circle(float(x), float(y), float(r)) for x, y, r in zip(c.xc, c.yc, c.radius)]
    unit = factor_of_safety(build(sec, surfaces), 1.0, 0.0, method="bishop")
    ok = np.asarray(unit.converged & ((unit.flags & ~5) == 0))[0]  # tolerated as in the search: negative-normal (1), thrust-outside (4)
    fs_unit = np.where(ok, unit.fs[0], np.inf)
    prop = RandomProperty("clay", "su", make_marginal("lognormal", mean=su, cov=cov), theta, theta)
    p = RandomProblem(sec, "undrained", "bishop", [prop], surfaces, int(np.argmin(fs_unit)), n_slices=20,
                      cell=1.0)
    return p, float(fs_unit.min()) * su


def build(sec, surfaces):
    return build_bank(sec, surfaces, 20)
