"""Benchmark of the random limit-equilibrium simulator (issue 5).

Two-zone c'-φ' section (``slope.examples.two_zone_section``, invented),
random c' and φ' in both zones (lognormal, COV 0.3 / 0.1, θh = 20 m,
θv = 2 m, Markov), fields on 0.5 m cells, a centre-lattice bank of ≥ 1,000
valid circles, Bishop. Prints, measured side by side in one run:

* wall time and realisations/s of ``simulate`` at 1,000 and 10,000
  realisations, each in its own subprocess, with that subprocess's peak RSS
  (memory should stay flat: results are reduced per batch, never stored
  per surface);
* the ratio against re-running the full deterministic search from scratch
  for every realisation (slice bank rebuilt, strengths mapped, all circles
  evaluated), both sides timed per realisation on one core in one process,
  interleaved five times (median and spread), so load hits both alike.

Usage: python scripts/bench_rlem.py [n_jobs] [batch]
"""
import json
import math
import os
import resource
import subprocess
import sys
import time

import numpy as np

from slipfield.fields.marginals import make_marginal
from slipfield.slope.examples import two_zone_section
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import RandomProblem, RandomProperty, simulate
from slipfield.slope.simulate.engine import batch_fs
from slipfield.slope.surfaces import Circle


def build_problem():
    sec = two_zone_section()
    # 2,016 circles, 1,077 of them valid (issue 17: >= 1,000 valid; the former
    # 12 x 10 x 9 lattice had 577 of 1,080)
    circ = lattice_circles(sec, nx=16, ny=14, n_radii=9)
    surfaces = [Circle(float(x), float(y), float(r)) for x, y, r in zip(circ.xc, circ.yc, circ.radius)]
    props = []
    for m in ("fill", "clay"):
        mat = sec.materials[m]
        props.append(RandomProperty(m, "c", make_marginal("lognormal", mean=mat.c, cov=0.3), 20.0, 2.0))
        props.append(RandomProperty(m, "phi", make_marginal("lognormal", mean=mat.phi, cov=0.1), 20.0, 2.0))
    return RandomProblem(sec, "drained", "bishop", props, surfaces, 0, n_slices=20, cell=0.5)


def peak_rss_mb(who):
    # ru_maxrss is in kB on Linux
    return resource.getrusage(who).ru_maxrss / 1024.0


def worker_peak_rss_mb():
    """Peak RSS (VmHWM) of this process's live descendants, e.g. joblib's loky workers.

    Those workers outlive ``simulate`` (they are reused), so RUSAGE_CHILDREN,
    which only counts reaped children, misses them; /proc has their high-water mark.
    """
    me, kids, out = os.getpid(), {}, []
    for d in os.listdir("/proc"):
        if d.isdigit():
            try:
                with open(f"/proc/{d}/status") as fh:
                    st = dict(line.split(":", 1) for line in fh if ":" in line)
                kids[int(d)] = (int(st["PPid"]), st.get("VmHWM", "0 kB"))
            except (OSError, KeyError, ValueError):
                pass
    todo = [me]
    while todo:
        parent = todo.pop()
        for pid, (ppid, hwm) in kids.items():
            if ppid == parent:
                todo.append(pid)
                out.append(int(hwm.split()[0]) / 1024.0)
    return max(out, default=0.0), len(out)


def child(n, n_jobs, batch):
    p = build_problem()
    t = time.perf_counter()
    r = simulate(p, n, seed=1, n_jobs=n_jobs, batch=batch)
    dt = time.perf_counter() - t
    wpeak, nworkers = worker_peak_rss_mb()
    print(json.dumps({"workers_peak_mb": wpeak, "n_workers": nworkers, "n": n, "wall_s": dt, "per_s": n / dt, "pf": r.pf, "pf_ci": list(r.pf_interval),
                      "n_surfaces": int(p.bank.n_surfaces), "n_valid": int(np.sum(p.bank.valid)),
                      "rss_self_mb": peak_rss_mb(resource.RUSAGE_SELF),
                      "no_valid": r.n_no_valid, "nonconv": r.n_nonconverged, "inadm": r.n_inadmissible}))


def from_scratch(p, ks):
    """Seconds per realisation when the whole search is redone for each one."""
    t = time.perf_counter()
    for k in ks:
        q = RandomProblem(p.section, p.hypothesis, p.method, p.properties, p.surfaces, p.fixed_index,
                          n_slices=p.n_slices, cell=p.cell)
        q._gens = p._gens
        batch_fs(q, 1, [k])   # builds the slice bank, maps strengths, evaluates every circle
    return (time.perf_counter() - t) / len(ks)


def vectorised(p, ks):
    """Seconds per realisation of the simulator's path (bank and stencil built once), one process."""
    t = time.perf_counter()
    batch_fs(p, 1, ks)
    return (time.perf_counter() - t) / len(ks)


def loop_versus_vector(repeats=5, n_scratch=3, n_vector=200):
    """Ratio of the from-scratch search to the simulator, per realisation, in one process.

    Both sides run on one core in this process, interleaved ``repeats``
    times on the same warm caches (field generators built and numba compiled
    before the first timing), so machine load hits both alike; the median
    ratio and its spread over the repeats are reported. The former figure
    (12 times swung from 412x to 11,858x between runs) divided a 4-realisation
    one-core timing by a two-worker pool's wall time that included starting
    the pool.
    """
    p = build_problem()
    p.generator(0)
    vectorised(p, range(10))          # warm: stencil, compilation
    from_scratch(p, [0])
    ratios, sc, ve = [], [], []
    for r in range(repeats):
        a = from_scratch(p, range(r * n_scratch, (r + 1) * n_scratch))
        b = vectorised(p, range(r * n_vector, (r + 1) * n_vector))
        sc.append(a)
        ve.append(b)
        ratios.append(a / b)
    return np.median(sc), np.median(ve), np.median(ratios), min(ratios), max(ratios)


def main():
    n_jobs = int(sys.argv[1]) if len(sys.argv) > 1 else 2
    batch = int(sys.argv[2]) if len(sys.argv) > 2 else 50
    rows = []
    for n in (1000, 10000):
        out = subprocess.run([sys.executable, __file__, "--child", str(n), str(n_jobs), str(batch)],
                             capture_output=True, text=True, check=True)
        rows.append(json.loads(out.stdout.strip().splitlines()[-1]))
    per_scratch, per_vector, ratio, rmin, rmax = loop_versus_vector()
    r = rows[0]
    print(f"two-zone c'-phi' section, {r['n_surfaces']} circles ({r['n_valid']} valid), 20 slices, Bishop, "
          f"4 random fields on 0.5 m cells, n_jobs={n_jobs}, batch={batch}")
    print(f"{'n':>7} {'wall s':>8} {'real/s':>8} {'pf':>8} {'95% CI':>18} {'peak RSS MB':>12} {'worker peak MB':>15}")
    for r in rows:
        print(f"{r['n']:>7} {r['wall_s']:>8.1f} {r['per_s']:>8.0f} {r['pf']:>8.4f} "
              f"[{r['pf_ci'][0]:.4f}, {r['pf_ci'][1]:.4f}] {r['rss_self_mb']:>12.0f} {r['workers_peak_mb']:>9.0f} (x{r['n_workers']})")
    big = rows[-1]
    print(f"per realisation, one core, same process, 5 interleaved repeats: full search from scratch "
          f"{per_scratch * 1e3:.1f} ms, simulator path {per_vector * 1e3:.2f} ms -> {ratio:.0f}x "
          f"(repeats {rmin:.0f}x to {rmax:.0f}x)")
    print(f"peak RSS ratio 10,000 / 1,000: {rows[1]['rss_self_mb'] / rows[0]['rss_self_mb']:.2f} (main), "
          f"{rows[1]['workers_peak_mb'] / max(rows[0]['workers_peak_mb'], 1e-9):.2f} (workers)")
    print(f"10,000 run: lowest surface excluded as non-converged {big['nonconv']}, inadmissible {big['inadm']}; "
          f"no valid surface {big['no_valid']}")
    print(f"target 10,000 realisations < 60 s: {'met' if big['wall_s'] < 60 else 'NOT met'}")


if __name__ == "__main__":
    if len(sys.argv) > 1 and sys.argv[1] == "--child":
        child(int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4]))
    else:
        main()
