"""Benchmark: cost of conditioning the simulator's fields on site data (issue 16).

Two-zone c'-φ' section (``slope.examples.two_zone_section``, invented),
random c' and φ' in both zones (lognormal, COV 0.3 / 0.1, θh = 20 m,
θv = 2 m, Markov) on 0.5 m cells, a centre-lattice bank of circles, Bishop.
The same realisations are computed without data and with 50, 200 and 500
readings of the clay's c' (invented values at random places in the clay),
side by side in one run; the kriging weights are built once per problem
(timed apart as set-up) and each realisation then costs one update of the
cells its slice bases touch.

Target (issue 16): a realisation with conditioning on up to 500 data at
most 2× slower than without (the ``ratio`` column).

Usage: python scripts/bench_conditioning.py [realisations] [batch]
"""
import sys
import time

import numpy as np

from slipfield.fields.marginals import make_marginal
from slipfield.slope.examples import two_zone_section
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import RandomProblem, RandomProperty
from slipfield.slope.simulate.engine import batch_fs
from slipfield.slope.surfaces import Circle


def build_problem(site_data):
    sec = two_zone_section()
    circ = lattice_circles(sec, nx=10, ny=8, n_radii=6)
    surfaces = [Circle(float(x), float(y), float(r)) for x, y, r in zip(circ.xc, circ.yc, circ.radius)]
    props = []
    for m in ("fill", "clay"):
        mat = sec.materials[m]
        props.append(RandomProperty(m, "c", make_marginal("lognormal", mean=mat.c, cov=0.3), 20.0, 2.0))
        props.append(RandomProperty(m, "phi", make_marginal("lognormal", mean=mat.phi, cov=0.1), 20.0, 2.0))
    return RandomProblem(sec, "drained", "bishop", props, surfaces, 0, n_slices=20, cell=0.5,
                         site_data=site_data)


def clay_points(sec, n, rng):
    """n random places in the clay zone (m)."""
    out = []
    clay = [k for k, z in enumerate(sec.zones) if z.material == "clay"][0]
    while len(out) < n:
        x, y = rng.uniform(0, 80), rng.uniform(-15, 12)
        if sec.zone_at(np.array([x]), np.array([y]))[0] == clay:
            out.append((x, y))
    return np.array(out)


def timed(problem, n, batch):
    t0 = time.perf_counter()
    batch_fs(problem, 0, range(0, min(batch, n)))  # stencil and weights built here
    setup = time.perf_counter() - t0
    t0 = time.perf_counter()
    for start in range(0, n, batch):
        batch_fs(problem, 1, range(start, min(n, start + batch)))
    return setup, (time.perf_counter() - t0) / n


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 200
    batch = int(sys.argv[2]) if len(sys.argv) > 2 else 50
    rng = np.random.default_rng(16)
    base = build_problem({})
    setup0, t0 = timed(base, n, batch)
    print(f"{n} realisations, batch {batch}; grid {base.grid.nx}x{base.grid.ny} cells, "
          f"{len(base.surfaces)} circles")
    print(f"{'data':>6} {'set-up (s)':>11} {'ms/realisation':>15} {'ratio':>7}")
    print(f"{0:>6} {setup0:>11.2f} {1e3 * t0:>15.2f} {1.0:>7.2f}")
    for nd in (50, 200, 500):
        pts = clay_points(base.section, nd, rng)
        z = rng.standard_normal(nd)
        p = build_problem({"clay.c": (pts, z, np.full(nd, 0.05))})
        setup, t = timed(p, n, batch)
        print(f"{nd:>6} {setup:>11.2f} {1e3 * t:>15.2f} {t / t0:>7.2f}")


if __name__ == "__main__":
    main()
