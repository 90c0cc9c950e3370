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

Second part, the default window (slope.simulate.refine_names): the same
realisations simulated side by side with the search off, with the default
window (bank FS in [1, 1.10)) and with every realisation searched, one
process, CPU seconds: the CPU the default adds per 1,000 realisations and
per searched realisation, and the distribution of FS_bank / FS_free that
sets the margin (the failures the window misses are counted).

Third part, the interslice shear-strength check of non-circular solutions
(slope.search.interslice_strength): both searches with the check and
without it, side by side on the same realisations: CPU per searched
realisation, mean FS, realisations whose FS changed, candidates left out.

Fourth part, the rigid-block rule for free paths (slope.search.path_acceptance): the per-realisation
dynamic-programming search with the rule and without it, side by side on the same realisations: CPU
per searched realisation (the rule's added cost), realisations whose FS changed, paths refused.

Run: python scripts/bench_mechanisms.py [n_bank] [n_refined] [n_window]
     python scripts/bench_mechanisms.py --kinematic [n_bank] [n_refined] [--before TREE] [--repeat R]
         (fourth part only; with --before, this tree and another source tree (its .dev shim, e.g. a
         worktree of an older commit) each in fresh processes, alternated R times, side by side)
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
from slipfield.slope.simulate import simulate  # noqa: E402
from slipfield.slope.simulate.refine_names import DEFAULT_REFINE_BELOW, FAILURE_FS  # noqa: E402
from slipfield.slope.simulate.refinement import RefineSettings, refine_realisation  # noqa: E402

CASE = os.path.join(os.path.dirname(__file__), "..", "cases", "levee_soft_clay.toml")
TARGET_MS = 50.0


def _problem():
    case = load_case(CASE)
    case.data["analysis"]["hypotheses"] = ["undrained"]
    det = deterministic(case)
    return case, random_problem(case, det, "undrained")


def window(n=300):
    """CPU of the default window against the search off and against searching everything (one process)."""
    case, prob = _problem()
    seed = int(case.simulation["seed"])
    dp = dict(search="dynamic-programming")
    runs = {"off": None, "window [1, 1.10)": RefineSettings(below=DEFAULT_REFINE_BELOW, above=FAILURE_FS, **dp),
            "every realisation": RefineSettings(below=1e9, **dp)}
    simulate(prob, 4, seed, refine=runs["every realisation"])  # warm-up: numba, first bands
    cpu, res = {}, {}
    for name, st in runs.items():
        t0 = time.process_time()
        res[name] = simulate(prob, n, seed, refine=st)
        cpu[name] = time.process_time() - t0
    off, win, every = res["off"], res["window [1, 1.10)"], res["every realisation"]
    added = cpu["window [1, 1.10)"] - cpu["off"]
    print(f"\ndefault window, levee demo undrained, {n} realisations, one process (CPU s):")
    for name in runs:
        print(f"  {name:20s} {cpu[name]:7.2f} s, pf {res[name].pf:.4f}, searched {res[name].n_searched}, "
              f"lowered {res[name].n_refined}")
    print(f"  window adds {1e3 * added / n:.1f} ms per realisation ({added * 1000 / n:.1f} s per 1,000), "
          f"{1e3 * added / max(win.n_searched, 1):.1f} ms per searched realisation; "
          f"CPU ratio window/off {cpu['window [1, 1.10)'] / cpu['off']:.2f}")
    ok = np.isfinite(every.fs_bank) & np.isfinite(every.fs)
    ratio = every.fs_bank[ok] / every.fs[ok]
    q = np.quantile(ratio, [0.5, 0.9, 0.95, 0.99, 1.0])
    print("  FS_bank / FS_free, every realisation searched: median {:.4f}, p90 {:.4f}, p95 {:.4f}, p99 {:.4f}, "
          "max {:.4f}".format(*q))
    missed = int(np.sum((every.fs < 1.0) & ~(win.fs < 1.0)))
    print(f"  failures of searching everything that the window misses: {missed} of {int(np.sum(every.fs < 1.0))}; "
          f"pf off {off.pf:.4f}, window {win.pf:.4f}, everything {every.pf:.4f}")


def main(n_bank=200, n_refined=20):
    case, prob = _problem()
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


def interslice(n_bank=200, n_refined=20):
    """CPU and FS of the per-realisation searches with and without the interslice shear-strength check.

    The check (slope.search.interslice_strength) is on in every non-circular
    evaluation; "without" runs the same code with it switched off through
    evaluate_surfaces' keyword, side by side on the same realisations.
    """
    import functools

    from slipfield.slope.search import evaluate as ev, refine as rf
    from slipfield.slope.search.interslice_strength import INTERSLICE_REASON
    from slipfield.slope.simulate import mechanisms as mech
    from slipfield.slope.simulate.refinement import REFINE_REASONS

    case, prob = _problem()
    seed = int(case.simulation["seed"])
    fs, conv, adm = batch_fs(prob, seed, range(n_bank))
    ok = conv & adm & np.isfinite(fs)
    fs_c = np.where(ok, fs, np.inf).min(axis=1)
    crit = np.where(ok, fs, np.inf).argmin(axis=1)
    order = np.argsort(fs_c)[:n_refined + 1]
    settings = {"dynamic programming": RefineSettings(below=10.0, search="dynamic-programming"),
                "Nelder-Mead": RefineSettings(below=10.0)}
    checked = ev.evaluate_surfaces
    unchecked = functools.partial(checked, interslice_check=False)
    col = REFINE_REASONS.index(INTERSLICE_REASON)
    print(f"\ninterslice shear-strength check, levee demo undrained, {n_refined} realisations with the lowest "
          f"bank FS of {n_bank}, one process (CPU per searched realisation):")
    for name, st in settings.items():
        out = {}
        for label, fn in (("without", unchecked), ("with", checked)):
            mech.evaluate_surfaces = rf.evaluate_surfaces = fn
            try:
                def run(k):
                    if name == "Nelder-Mead":
                        return refine_realisation(prob, seed, int(k), int(crit[k]), st)
                    return mechanism_search(prob, seed, int(k), fs[k], ok[k], st)
                run(order[0])  # warm-up
                t0 = time.process_time()
                res = [run(k) for k in order[1:]]
                cpu = (time.process_time() - t0) / len(res)
            finally:
                mech.evaluate_surfaces = rf.evaluate_surfaces = checked
            f = np.array([min(r[0], fs_c[k]) if np.isfinite(r[0]) else fs_c[k] for r, k in zip(res, order[1:])])
            out[label] = (cpu, f, int(sum(r[2][col] for r in res)))
        (c0, f0, _), (c1, f1, n1) = out["without"], out["with"]
        print(f"  {name:20s} without {1e3 * c0:7.1f} ms, with {1e3 * c1:7.1f} ms (ratio {c1 / c0:.2f}); "
              f"mean FS {np.mean(f0):.4f} -> {np.mean(f1):.4f}, {int(np.sum(f1 != f0))} realisations changed, "
              f"{n1} candidates left out by the check")


def kinematic_measure(n_bank=200, n_refined=20):
    """CPU and FS of the per-realisation search with and without the rigid-block rule (a dict)."""
    from slipfield.slope.search.path_acceptance import KINEMATIC_REASON
    from slipfield.slope.simulate import mechanisms as mech
    from slipfield.slope.simulate.refinement import REFINE_REASONS

    case, prob = _problem()
    seed = int(case.simulation["seed"])
    fs, conv, adm = batch_fs(prob, seed, range(n_bank))
    ok = conv & adm & np.isfinite(fs)
    fs_c = np.where(ok, fs, np.inf).min(axis=1)
    order = np.argsort(fs_c)[:n_refined + 1]
    st = RefineSettings(below=10.0, search="dynamic-programming")
    col = REFINE_REASONS.index(KINEMATIC_REASON)
    judge = mech._judge_kinematically
    from slipfield.slope.search.upper_bound import warm_up
    warm_up()   # the rule's kernels compiled or loaded before timing (the warm-up realisation may judge no path)
    out = {}
    for label, fn in (("without", lambda *a, **k: {}), ("with", judge)):
        mech._judge_kinematically = fn
        try:
            mechanism_search(prob, seed, int(order[0]), fs[order[0]], ok[order[0]], st)  # warm-up (numba)
            t0 = time.process_time()
            res = [mechanism_search(prob, seed, int(k), fs[k], ok[k], st) for k in order[1:]]
            cpu = (time.process_time() - t0) / len(res)
        finally:
            mech._judge_kinematically = judge
        f = [float(min(r[0], fs_c[k]) if np.isfinite(r[0]) else fs_c[k]) for r, k in zip(res, order[1:])]
        out[label] = {"cpu": cpu, "fs": f, "refused": int(sum(r[2][col] for r in res))}
    return out


def _kinematic_child(tree, n_bank, n_refined):
    """:func:`kinematic_measure` in a fresh process of ``tree`` (None: this tree)."""
    import json
    import subprocess

    sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
    from bench_speed import _tree_env

    code = (f"import sys, json; sys.path.insert(0, {os.path.dirname(os.path.abspath(__file__))!r}); "
            f"import bench_mechanisms as b; print(json.dumps(b.kinematic_measure({n_bank}, {n_refined})))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=_tree_env(tree))
    if out.returncode:
        raise RuntimeError(out.stderr[-2000:])
    return json.loads(out.stdout.strip().splitlines()[-1])


def kinematic(n_bank=200, n_refined=20, before=None, repeat=1):
    """Print the rule's cost: this tree alone, or beside ``before`` (another source tree), each in fresh
    processes, alternated ``repeat`` times; the searched FS of both must agree number for number."""
    trees = [("this tree", None)] + ([("before", before)] if before else [])
    rows = {}
    for _ in range(repeat):
        for label, tree in trees:
            rows.setdefault(label, []).append(kinematic_measure(n_bank, n_refined) if before is None
                                              else _kinematic_child(tree, n_bank, n_refined))
    print(f"\nrigid-block rule for free paths, levee demo undrained, {n_refined} realisations with the lowest bank "
          f"FS of {n_bank}, one process (CPU ms per searched realisation, each run):")
    print(f"  {'':<34} " + " ".join(f"{label:>24}" for label, _ in trees))
    cell = lambda vals: "/".join(f"{v:.1f}" for v in vals)  # noqa: E731
    for name, fn in (("search without the rule", lambda r: 1e3 * r["without"]["cpu"]),
                     ("search with the rule", lambda r: 1e3 * r["with"]["cpu"]),
                     ("the rule adds", lambda r: 1e3 * (r["with"]["cpu"] - r["without"]["cpu"]))):
        print(f"  {name:<34} " + " ".join(f"{cell([fn(r) for r in rows[label]]):>24}" for label, _ in trees))
    for label, _ in trees:
        r = rows[label][0]
        f0, f1 = np.array(r["without"]["fs"]), np.array(r["with"]["fs"])
        print(f"  {label}: mean FS {np.mean(f0):.4f} -> {np.mean(f1):.4f} with the rule, "
              f"{int(np.sum(f1 != f0))} realisations changed, {r['with']['refused']} paths refused")
    if before:
        same = all(r["with"]["fs"] == rows["before"][0]["with"]["fs"] for r in rows["this tree"])
        print(f"  searched FS with the rule, this tree vs before: {'identical' if same else 'DIFFERENT'}, "
              f"realisation by realisation")


if __name__ == "__main__":
    if sys.argv[1:2] == ["--kinematic"]:
        args = sys.argv[2:]
        before = args[args.index("--before") + 1] if "--before" in args else None
        repeat = int(args[args.index("--repeat") + 1]) if "--repeat" in args else 1
        flagged = {i + 1 for i, a in enumerate(args) if a in ("--before", "--repeat")}
        nums = [int(a) for i, a in enumerate(args) if i not in flagged and not a.startswith("--")]
        kinematic(*nums[:2], before=before, repeat=repeat)
        sys.exit(0)
    main(*(int(a) for a in sys.argv[1:3]))
    window(*(int(a) for a in sys.argv[3:4]))
    interslice(*(int(a) for a in sys.argv[1:3]))
    kinematic(*(int(a) for a in sys.argv[1:3]))
