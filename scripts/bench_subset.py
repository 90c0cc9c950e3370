"""Subset simulation with random fields: FS evaluations against crude Monte Carlo, and the drained levee.

Part 1: a long block on a plane in φ = 0 soil with an anisotropic Markov su
field, mean su set so that pf = 1e-5 by the closed form through the variance
function along the plane (Vanmarcke 1983). Several seeds are run; the CoV of
the estimate is measured from their spread (and printed beside Au & Beck's
reported CoV), and crude Monte Carlo's sample size for that CoV,
n = (1 − pf)/(pf·CoV²), is set beside subset simulation's FS evaluations.
Target: ratio ≥ 100.

Part 2: the drained levee demo (cases/levee_soft_clay.toml) by subset
simulation on 2 processes: time per level, the level where the reached
probability passes 1e-6, and peak memory beside the size of the states of
one level (what "memory bounded by one level" compares with).

Usage: python scripts/bench_subset.py [--seeds 8] [--n 1000] [--levee-n 500] [--skip-levee]
"""
from __future__ import annotations

import argparse
import math
import resource
import sys
import time
from pathlib import Path

import numpy as np
from scipy.stats import norm

from slipfield.fields import get_model, variance_function
from slipfield.fields.marginals import make_marginal
from slipfield.slope.methods import factor_of_safety
from slipfield.slope.section import Section, Zone
from slipfield.slope.simulate import RandomProblem, RandomProperty
from slipfield.slope.simulate.engine import stencil
from slipfield.slope.simulate.rare import NoiseLayout, SubsetSettings, subset_simulate
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Polyline

ROOT = Path(__file__).resolve().parents[1]
TAN_B, Z, LF, GAMMA, COV, TH, TV = 0.5, 1.5, 30.0, 20.0, 0.15, 40.0, 4.0


def block_problem(mean):
    H = LF * TAN_B
    ground = np.array([[-4.0, 0.0], [0.0, 0.0], [LF, H], [LF + 4.0, H]])
    poly = np.vstack([ground, [[LF + 4.0, -3.0], [-4.0, -3.0], [-4.0, 0.0]]])
    sec = Section(ground, [Zone("clay", "clay", poly)],
                  {"clay": Material("clay", unit_weight=GAMMA, su_model="constant", su=50.0)}, base_y=-3.0)
    surf = Polyline(np.array([[-0.1, 0.01], [0.1, 0.1 * TAN_B - Z], [LF - 0.1, (LF - 0.1) * TAN_B - Z],
                              [LF + 0.1, LF * TAN_B + 0.01]]))
    prop = RandomProperty("clay", "su", make_marginal("normal", mean=mean, cov=COV), TH, TV)
    return RandomProblem(sec, "undrained", "ordinary", [prop], [surf], 0, n_slices=20, cell=1.0)


def part1(seeds, n):
    p = block_problem(50.0)
    st = stencil(p)
    m = st.bank.n_slices
    fs1 = float(sum(factor_of_safety(st.terms, np.eye(m)[i][None], 0.0, method="ordinary").fs[0, 0]
                    for i in range(m)))
    T = float(st.bank.base_length.sum())
    b = math.atan(TAN_B)
    th = 1.0 / math.sqrt(math.cos(b) ** 2 / TH ** 2 + math.sin(b) ** 2 / TV ** 2)
    g = float(variance_function(get_model("exponential", theta_h=th, theta_v=th), T))
    mean = 1.0 / (fs1 * (1.0 - (-norm.ppf(1e-5)) * COV * math.sqrt(g)))
    print(f"Part 1: block on a plane, theta along the plane {th:.2f} m, T {T:.1f} m, gamma(T) {g:.4f}, "
          f"mean FS {fs1 * mean:.3f}, closed-form pf 1e-5; {seeds} seeds x {n} samples per level")
    runs = []
    t0 = time.perf_counter()
    for k in range(seeds):
        r = subset_simulate(block_problem(mean), SubsetSettings(0.1, n), seed=1000 + k, batch=200)
        runs.append(r)
        print(f"  seed {1000 + k}: pf {r.pf:.3g}  reported CoV {r.cov:.2f} (upper {r.cov_upper:.2f})  "
              f"levels {len(r.levels)}  FS evaluations {r.n_evaluations}", flush=True)
    pf = np.array([r.pf for r in runs])
    cov_measured = pf.std(ddof=1) / pf.mean()
    cov_reported = float(np.mean([r.cov for r in runs]))
    evals = float(np.mean([r.n_evaluations for r in runs]))
    pf_ref = 1e-5
    n_mc = (1 - pf_ref) / (pf_ref * cov_measured ** 2)
    print(f"  mean pf {pf.mean():.3g} (closed form 1e-5), CoV measured over seeds {cov_measured:.2f}, "
          f"reported (mean) {cov_reported:.2f}; {time.perf_counter() - t0:.1f} s")
    n_mc_rep = (1 - pf_ref) / (pf_ref * cov_reported ** 2)
    print(f"  FS evaluations: subset {evals:.0f}   crude MC for the same CoV (1-pf)/(pf CoV^2) {n_mc:.3g}   "
          f"ratio {n_mc / evals:.0f}x (target >= 100x)")
    print(f"  with the reported (Au & Beck) CoV instead: crude MC {n_mc_rep:.3g}, ratio {n_mc_rep / evals:.0f}x")


def part2(n, jobs):
    from slipfield.slope.case.analyses import random_problem, trial_surfaces
    from slipfield.slope.case.build import load_case

    case = load_case(ROOT / "cases" / "levee_soft_clay.toml")
    hyp = "drained"
    det = {hyp: {"bank": trial_surfaces(case, hyp, case.analysis["method"])}}
    prob = random_problem(case, det, hyp)
    lay = NoiseLayout(prob)
    st = SubsetSettings(0.1, n)
    level_mb = n * lay.size * 8 / 1e6
    print(f"\nPart 2: drained levee demo, {len(prob.surfaces)} trial surfaces re-searched per sample, "
          f"{lay.size} standard normals per sample; {n} samples per level, {jobs} processes")
    print(f"  all states of one level would take {level_mb:.0f} MB; seeds of one level "
          f"{st.n_chains * lay.size * 8 / 1e6:.0f} MB")
    stencil(prob)
    rss0 = _rss_mb()
    t0 = time.perf_counter()
    r = subset_simulate(prob, st, int(case.simulation["seed"]), n_jobs=jobs, batch=int(case.simulation["batch"]),
                        progress=True)
    wall = time.perf_counter() - t0
    reached = np.cumprod([lv["probability"] for lv in r.levels])
    k6 = next((i for i, q in enumerate(reached) if q <= 1.5e-6), None)
    per_level = wall / max(len(r.levels), 1)
    print(f"  {r.status}: {r.message}")
    if r.pf is not None:
        lo, hi = r.interval_95
        print(f"  pf {r.pf:.3g} [95 % {lo:.3g}, {hi:.3g}] CoV {r.cov:.2f}")
    print(f"  {len(r.levels)} levels, {r.n_evaluations} FS evaluations, {wall:.0f} s ({per_level:.0f} s per level)")
    if k6 is not None:
        print(f"  reached P(FS <= {r.levels[k6]['threshold']:.3f}) = {reached[k6]:.2g} at level {k6}: about "
              f"{per_level * (k6 + 1):.0f} s for a pf of order 1e-6")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"  memory of the driving process: {rss0:.0f} MB with the problem built, peak {peak:.0f} MB during the "
          f"run: +{peak - rss0:.0f} MB for {len(r.levels)} levels (all states of one level: {level_mb:.0f} MB; "
          f"each worker holds only its chains)")


def _rss_mb():
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith("VmRSS:"):
                return float(line.split()[1]) / 1024
    return float("nan")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", type=int, default=8)
    ap.add_argument("--n", type=int, default=1000)
    ap.add_argument("--levee-n", type=int, default=500)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--skip-levee", action="store_true")
    a = ap.parse_args(argv)
    part1(a.seeds, a.n)
    if not a.skip_levee:
        part2(a.levee_n, a.jobs)


if __name__ == "__main__":
    sys.exit(main())
