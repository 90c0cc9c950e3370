"""Benchmark: the checks of the bank's non-circular surfaces and the Morgenstern-Price retry, side by side.

Part 1 (slope.simulate.bank_checks): an invented 10 m cut (c' = 8 kPa with
COV 0.2, phi' = 25 deg clay over stiffer soil) whose bank holds one circle
and blocks along the clay's bottom, so a block is the lowest surface in
most realisations (the worst case: every realisation is judged). The same
realisations are simulated with the checks keeping each surface's geometry
(bank row and terms, slice-boundary geometry, grid cells and weights:
bank_checks.KEEP_SURFACE_GEOMETRY, the default), with the checks computing it
in every realisation (the path before it was kept), and without the checks,
alternated; CPU ms per realisation of this process, one numba thread. The
two check paths must give the same bits (FS and critical surface of every
realisation; the script says so).

Part 2 (slope.search.interslice_retry): the dam demo's undrained
simulation (cases/dam_layered_foundation.toml, its settings, per-realisation
search on) with the retry and without (no function to retry with),
alternated: CPU seconds, pf, realisations lowered.

Run: NUMBA_NUM_THREADS=1 python scripts/bench_bank_checks.py [n_realisations] [repeats]
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

from slipfield.fields.marginals import make_marginal
from slipfield.slope.search.block import block_polylines
from slipfield.slope.examples import clay_over_stiff_cut
from slipfield.slope.simulate import RandomProblem, RandomProperty, simulate
from slipfield.slope.surfaces import Circle

ROOT = Path(__file__).resolve().parent.parent


def _block_bank():
    sec = clay_over_stiff_cut()
    blocks = block_polylines(sec, "upper", entry=(0.0, 10.0), exit=(16.0, 21.0), points=3)
    prop = RandomProperty("clay", "c", make_marginal("lognormal", mean=8.0, cov=0.2), 10.0, 2.0)
    return RandomProblem(sec, "drained", "spencer", [prop], [Circle(24.0, 16.0, 13.0)] + blocks, 0,
                         n_slices=20, cell=1.0)


def part1(n, repeats):
    import slipfield.slope.simulate.bank_checks as checks
    import slipfield.slope.simulate.driver as driver

    prob = _block_bank()
    on = driver.bank_checks_apply
    simulate(prob, 10, 1)   # compile (and keep the geometry of the surfaces judged in these 10)
    rows, got = [], {}
    paths = (("kept", on, True), ("per real.", on, False), ("off", lambda p: False, True))
    for _ in range(repeats):
        for name, fn, keep in paths:
            driver.bank_checks_apply, checks.KEEP_SURFACE_GEOMETRY = fn, keep
            t = time.process_time()
            r = simulate(prob, n, 7)
            rows.append((name, 1e3 * (time.process_time() - t) / n, r.bank_rejected, r.bank_retried))
            got[name] = r
    driver.bank_checks_apply, checks.KEEP_SURFACE_GEOMETRY = on, True
    print(f"Part 1: block bank, {n} realisations, CPU ms per realisation (checks: geometry kept per surface / "
          "computed per realisation as before / checks off)")
    for name, ms, rej, ret in rows:
        print(f"  {name:10s} {ms:7.2f}  refused {rej}  retried {ret}")
    ms = {name: [v for k, v, *_ in rows if k == name] for name, *_ in paths}
    same = (np.array_equal(got["kept"].fs, got["per real."].fs, equal_nan=True)
            and np.array_equal(got["kept"].critical_index, got["per real."].critical_index))
    print(f"  before | after (min of {repeats}): {min(ms['per real.']):.2f} | {min(ms['kept']):.2f} ms "
          f"({min(ms['per real.']) / min(ms['kept']):.2f}x); without checks {min(ms['off']):.2f} ms")
    print(f"  checks' own cost before | after: {min(ms['per real.']) - min(ms['off']):.2f} | "
          f"{min(ms['kept']) - min(ms['off']):.2f} ms per realisation; same FS and surfaces: {'yes' if same else 'NO'}")


def part2(repeats):
    import slipfield.slope.search.interslice_retry as retry
    from slipfield.slope import load_case
    from slipfield.slope.case.analyses import deterministic, random_problem
    from slipfield.slope.simulate.refinement import RefineSettings

    case = load_case(ROOT / "cases" / "dam_layered_foundation.toml")
    sim = case.data["simulation"]
    prob = random_problem(case, deterministic(case), "undrained")
    st = RefineSettings.from_case(sim)
    funcs = retry.RETRY_FUNCTIONS
    simulate(prob, 10, 1, refine=st)
    print(f"Part 2: dam demo, undrained, {sim['realisations']} realisations, per-realisation search on")
    for _ in range(repeats):
        for name, fs in (("retry on", funcs), ("retry off", ())):
            retry.RETRY_FUNCTIONS = fs
            t = time.process_time()
            r = simulate(prob, int(sim["realisations"]), int(sim["seed"]), refine=st)
            print(f"  {name:9s} CPU {time.process_time() - t:6.2f} s  pf {r.pf:.4f}  lowered {r.n_refined}")
    retry.RETRY_FUNCTIONS = funcs


if __name__ == "__main__":
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 100
    reps = int(sys.argv[2]) if len(sys.argv) > 2 else 2
    np.seterr(all="ignore")
    part1(n, reps)
    part2(reps)
