"""Benchmark: the per-realisation dynamic-programming search on the levee demo, one core.

Case: cases/levee_soft_clay.toml (invented), undrained hypothesis, its bank
of circles (Bishop). The bank is re-searched for a batch of realisations;
the realisations with the lowest bank FS are then searched by dynamic
programming after Baker (1980) (slope.simulate.mechanisms, the settings of
``RefineSettings(search="dynamic-programming")``) and by the Nelder-Mead
refinement (the previous per-realisation search), side by side on the same
realisations. Times are CPU seconds of this process (one thread: the
machine is shared, wall time would count the other jobs) per refined
realisation, in run order after one warm-up realisation (numba
compilation): a realisation whose start surface was met before reuses its
first band (kept per process), one whose start is new builds it, as in a run.

Target (issue 15): <= 50 ms per refined realisation on one core.
Run: python scripts/bench_mechanisms.py [n_bank] [n_refined]
"""
import os
import sys
import time

os.environ.setdefault("NUMBA_NUM_THREADS", "1")  # one core, as the target says
os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402

from slipfield.slope.case.analyses import deterministic, random_problem  # noqa: E402
from slipfield.slope.case.build import load_case  # noqa: E402
from slipfield.slope.simulate.engine import batch_fs  # noqa: E402
from slipfield.slope.simulate.mechanisms import mechanism_search  # noqa: E402
from slipfield.slope.simulate.refinement import RefineSettings, refine_realisation  # noqa: E402

CASE = os.path.join(os.path.dirname(__file__), "..", "cases", "levee_soft_clay.toml")
TARGET_MS = 50.0


def main(n_bank=200, n_refined=20):
    case = load_case(CASE)
    case.data["analysis"]["hypotheses"] = ["undrained"]
    det = deterministic(case)
    prob = random_problem(case, det, "undrained")
    seed = int(case.simulation["seed"])
    t0 = time.process_time()
    fs, conv, adm = batch_fs(prob, seed, range(n_bank))
    t_bank = (time.process_time() - t0) / n_bank
    ok = conv & adm & np.isfinite(fs)
    fs_c = np.where(ok, fs, np.inf).min(axis=1)
    crit = np.where(ok, fs, np.inf).argmin(axis=1)
    order = np.argsort(fs_c)[:n_refined + 1]
    dp = RefineSettings(below=10.0, search="dynamic-programming")
    nm = RefineSettings(below=10.0)
    mechanism_search(prob, seed, int(order[0]), fs[order[0]], ok[order[0]], dp)  # warm-up
    t_dp, low_dp, f_dp = [], 0, []
    for k in order[1:]:
        t0 = time.process_time()
        f, _, _ = mechanism_search(prob, seed, int(k), fs[k], ok[k], dp)
        t_dp.append(time.process_time() - t0)
        low_dp += bool(np.isfinite(f) and f < fs_c[k])
        f_dp.append(min(f, fs_c[k]) if np.isfinite(f) else fs_c[k])
    refine_realisation(prob, seed, int(order[0]), int(crit[order[0]]), nm)  # warm-up
    t_nm, f_nm = [], []
    for k in order[1:]:
        t0 = time.process_time()
        f, _, _ = refine_realisation(prob, seed, int(k), int(crit[k]), nm)
        t_nm.append(time.process_time() - t0)
        f_nm.append(min(f, fs_c[k]) if np.isfinite(f) else fs_c[k])
    ms_dp, ms_nm = 1e3 * np.mean(t_dp), 1e3 * np.mean(t_nm)
    print(f"levee demo, undrained, bank of {len(prob.surfaces)} circles ({prob.method}); "
          f"{len(t_dp)} realisations with the lowest bank FS of {n_bank}")
    print(f"bank re-search:                    {1e3 * t_bank:8.1f} ms per realisation (CPU)")
    print(f"dynamic programming (Baker 1980):  {ms_dp:8.1f} ms per refined realisation (CPU) "
          f"(target <= {TARGET_MS:.0f} ms: {ms_dp / TARGET_MS:.2f} x target)")
    print(f"Nelder-Mead refinement:            {ms_nm:8.1f} ms per refined realisation  "
          f"(dynamic programming is {ms_nm / ms_dp:.1f} x faster)")
    print(f"mean FS of these realisations: bank {np.mean(fs_c[order[1:]]):.4f}, "
          f"dynamic programming {np.mean(f_dp):.4f} ({low_dp} lowered), Nelder-Mead {np.mean(f_nm):.4f}")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:3]))
