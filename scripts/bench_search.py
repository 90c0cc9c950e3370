"""Benchmark: a full centre-lattice circular search vs the same circles one at a time.

Section: slope.examples.two_zone_section (invented). One set of strengths
(the materials' own c', phi'), Bishop, 40 slices. The search builds the bank
of >= 2,000 trial circles and evaluates them in one vectorised call; the
comparison evaluates the same circles one per call to evaluate_surfaces.
Wall time is the median of several runs (other jobs share the machine).

Target (issue 3): full search < 1 s. Run: python scripts/bench_search.py
"""
import time

import numpy as np

from slipfield.slope.examples import two_zone_section
from slipfield.slope.search import centre_lattice, evaluate_surfaces, lattice_circles
from slipfield.slope.surfaces import Circle

NX, NY, NR = 16, 16, 10  # 2,560 trial circles


def main():
    sec = two_zone_section()
    times = []
    for _ in range(5):
        t0 = time.perf_counter()
        r = centre_lattice(sec, nx=NX, ny=NY, n_radii=NR, method="bishop")
        times.append(time.perf_counter() - t0)
    t_full = float(np.median(times))
    circ = lattice_circles(sec, nx=NX, ny=NY, n_radii=NR)
    # one at a time on a subset, scaled to the whole lattice
    k = 200
    sel = np.linspace(0, len(circ) - 1, k).astype(int)
    t0 = time.perf_counter()
    for i in sel:
        evaluate_surfaces(sec, Circle(float(circ.xc[i]), float(circ.yc[i]), float(circ.radius[i])), method="bishop")
    t_one = (time.perf_counter() - t0) / k * len(circ)
    print(f"two_zone_section, Bishop: {r.n_trials} trial circles, {int(r.counted.sum())} counted, "
          f"FS min = {r.fs_min:.4f}")
    print(f"rejected: {r.rejected}")
    print(f"{'full search (median of 5) s':>30} {'one at a time s (scaled from 200)':>36} {'ratio':>7}")
    print(f"{t_full:30.3f} {t_one:36.2f} {t_one / t_full:7.1f}")
    print(f"{'PASS' if t_full < 1.0 else 'FAIL'}  full search of {r.n_trials} circles < 1 s")


if __name__ == "__main__":
    main()
