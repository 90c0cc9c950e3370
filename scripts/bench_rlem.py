"""Benchmark of the random limit-equilibrium simulator (issue 5), first cut.

Two-zone c'-phi' section, fields on 0.5 m cells, a bank of centre-lattice
circles, Bishop. Prints wall time and realisations per second.
Usage: python scripts/bench_rlem.py [n_realisations] [n_jobs]
"""
import sys
import time

from slope.bank import build_bank
from slope.examples import two_zone_section
from slope.search import lattice_circles
from slope.simulate import RandomProblem, RandomProperty, simulate

n = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
jobs = int(sys.argv[2]) if len(sys.argv) > 2 else 2
sec = two_zone_section()
bank = build_bank(sec, lattice_circles(sec, nx=12, ny=10, n_radii=9), n_slices=40)
props = [RandomProperty(m, "c", mean=sec.materials[m].c, cov=0.3, theta_h=20.0, theta_v=2.0) for m in ("fill", "clay")]
props += [RandomProperty(m, "phi", mean=sec.materials[m].phi, cov=0.1, theta_h=20.0, theta_v=2.0) for m in ("fill", "clay")]
p = RandomProblem(bank, sec.materials, props, cell_size=0.5)
t = time.perf_counter()
r = simulate(p, n, seed=1, block_size=100, n_jobs=jobs)
dt = time.perf_counter() - t
print(f"bank {bank.n_surfaces} circles ({int(bank.valid.sum())} valid), {n} realisations, n_jobs={jobs}: "
      f"{dt:.1f} s, {n / dt:.0f} realisations/s, pf(system) = {(r['fs_crit'] < 1).mean():.4f}")
