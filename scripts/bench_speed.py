"""Speed targets of issue 17, each printed beside its measured value.

Every comparison is measured side by side in one run of this script (the
two variants alternate, repeated ``--repeat`` times; min and max are
printed so that the spread caused by other load on the machine is visible).
Absolute times depend on the machine and its load; ratios less so.

Parts (``--parts``, default all):

``sim``
    With ``--before TREE``: each tree in a fresh process, alternated, the
    CPU time per realisation of one process (``engine.batch_fs``, kernels on
    one thread, process time) and the wall time per realisation of
    ``simulate(..., n_jobs=2)``, beside the target (<= 0.6 ms per
    realisation on 2 cores: the wall time, and CPU / 2, what 2 idle cores
    give), with pf of both trees on the same realisations count.
    Then, in this process:
    Levee demo (``cases/levee_soft_clay.toml``, invented), undrained:
    ``simulate`` wall time per realisation with ``--jobs 2`` (target
    <= 0.6 ms, i.e. 10^5 realisations a minute on 2 cores), and CPU time per
    realisation of one process through the compiled base-strength pass
    against the array path it replaced (``engine.strength_map`` disabled),
    results compared with ``==``.
``memory``
    Peak of numpy allocations (tracemalloc) of one batch of 100 realisations
    on a bank of >= 5,000 circles, compiled pass against the array path; and
    peak RSS of ``simulate`` over 1,000 and 4,000 realisations (flat in n).
``kernel``
    ``factor_of_safety`` as the simulator calls it (strengths of the levee
    realisations, chunks from ``fused.StrengthMap.chunk``, one numba thread
    as in a worker), Bishop (undrained) and Morgenstern-Price (drained), in
    M slice-evaluations per CPU second (samples x surfaces x slices / CPU
    time); the targets, 200 M and 40 M per second, are for the two processes
    of a 2-core machine (with ``--jobs 2``: the command and its worker, one
    thread each), so twice the one-thread rate is compared with them.
    Each tree is measured in a fresh process, the trees alternated.
``jobs``
    ``slipfield simulate`` of 16,000 realisations, ``--jobs 1`` against
    ``--jobs 2`` (target ratio >= 1.6), with the default per-realisation free
    search and with ``--refine-search off``.
``run``
    ``slipfield run`` of the levee demo: cold (empty numba cache) and warm
    (targets 15 s and 10 s), wall and CPU time (the command and its workers),
    and the wall time of each phase read from the run's stage lines
    (imports and case, deterministic search, single random variables, the
    simulations, figures and report, exit).

Usage: python scripts/bench_speed.py [--parts sim,memory,kernel,jobs,run] [--repeat 3] [--before TREE]
       [--run-kinds cold,warm]

``--before TREE`` times the ``sim``, ``kernel``, ``jobs`` and ``run`` parts of another
source tree (e.g. ``git archive main | tar -x -C TREE``; its ``.dev`` import shim is used if
it has one, else a private one is made in the temporary folder) alternately with this one,
so a before/after table comes from one run. That tree's bytecode and numba cache go to a
folder of this benchmark, never into the tree.
"""
import argparse
import hashlib
import json
import os
import pickle
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
CASE = ROOT / "cases" / "levee_soft_clay.toml"


def levee_problem(hypothesis="undrained", cache=None):
    """The levee demo's RandomProblem (deterministic search included); pickled to ``cache``."""
    if cache and os.path.exists(cache):
        with open(cache, "rb") as fh:
            return pickle.load(fh)[hypothesis]
    from slipfield.slope.case.analyses import deterministic, random_problem
    from slipfield.slope.case.build import load_case

    case = load_case(CASE)
    det = deterministic(case)
    probs = {h: random_problem(case, det, h) for h in ("undrained", "drained")}
    if cache:
        with open(cache, "wb") as fh:
            pickle.dump(probs, fh)
    return probs[hypothesis]


def spread(xs, fmt="{:.3f}"):
    return f"{fmt.format(min(xs))} .. {fmt.format(max(xs))}"


def verdict(ok):
    return "met" if ok else "NOT met"


# --------------------------------------------------------------------- sim
_SIM_CHILD = """
import json, os, sys, time
import numba
from slipfield.slope.case.analyses import deterministic, random_problem
from slipfield.slope.case.build import load_case
import slipfield.slope.simulate.engine as engine
from slipfield.slope.simulate import simulate
case = load_case({case!r})
p = random_problem(case, deterministic(case), 'undrained')
engine.prepare(p)
engine.batch_fs(p, 1, range(8))  # kernels loaded
numba.set_num_threads(1)  # CPU time of one core's work
t = time.process_time()
fs = [engine.batch_fs(p, 1, range(a, a + 100))[0] for a in range({n_cpu} // 100 * 100, {n_cpu} // 100 * 200, 100)]
cpu = (time.process_time() - t) / ({n_cpu} // 100 * 100) * 1e3
numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)
simulate(p, 200, 1, n_jobs=2, batch=100)  # worker started, kernels loaded
t = time.perf_counter()
res = simulate(p, {n_sim}, 1, n_jobs=2, batch=100)
wall = (time.perf_counter() - t) / {n_sim} * 1e3
print(json.dumps({{"cpu": cpu, "wall": wall, "pf": float(res.pf), "n": {n_sim}}}))
"""


def _tree_env(tree, env=None):
    """Environment of a child process importing ``tree`` (None: this tree). Another tree's numba
    cache goes to a folder of this benchmark and its bytecode is not written, never into that tree.

    Not ``PYTHONPYCACHEPREFIX``: it moves the bytecode of every module, numpy's, scipy's, numba's
    and matplotlib's too, so with ``PYTHONDONTWRITEBYTECODE`` set each process of the other tree
    compiled all of them from source (a warm levee run measured 54-60 s of CPU against 40-45 s for
    the same code without it). Both trees now read the installed packages' bytecode alike.
    """
    env = dict(os.environ if env is None else env)
    if tree is not None:
        env["PYTHONPATH"] = str(_shim(tree))
        cache = Path(tempfile.gettempdir()) / ("slipfield_bench_before_"
                                                    + hashlib.sha256(str(Path(tree).resolve()).encode()).hexdigest()[:12])
        env.pop("PYTHONPYCACHEPREFIX", None)
        env["PYTHONDONTWRITEBYTECODE"] = "1"
        env.setdefault("NUMBA_CACHE_DIR", str(cache / "numba"))
    return env


def _sim_child(args, tree):
    env = _tree_env(tree)
    code = _SIM_CHILD.format(case=str(CASE), n_cpu=args.n_cpu, n_sim=args.n_sim)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, env=env)
    return json.loads(out.stdout.strip().splitlines()[-1])


def part_sim_trees(args):
    """This tree against ``--before``, each in fresh processes, alternated (see module doc)."""
    rows = {}
    for _ in range(args.repeat):
        for label, tree in _trees(args):
            rows.setdefault(label, []).append(_sim_child(args, tree))
    print(f"[sim, trees side by side] levee undrained: CPU ms/realisation of one process (one thread, "
          f"{args.n_cpu} realisations), wall ms/realisation of simulate n_jobs=2 ({args.n_sim} realisations)")
    print(f"  {'target':<44} {'before':>16} {'this tree':>16}  met (this tree)?")
    get = lambda label, key, f=1.0: [r[key] * f for r in rows.get(label, [])]  # noqa: E731
    for name, key, f, target in (("CPU ms/realisation, one process", "cpu", 1.0, None),
                                 ("CPU / 2 cores <= 0.6 ms/realisation", "cpu", 0.5, 0.6),
                                 ("simulate --jobs 2 wall <= 0.6 ms/realisation", "wall", 1.0, 0.6)):
        b, a = get("before", key, f), get("this tree", key, f)
        met = "" if target is None else f"{verdict(min(a) <= target)} at best, {verdict(max(a) <= target)} at worst"
        print(f"  {name:<44} {spread(b) if b else '-':>16} {spread(a):>16}  {met}")
    if "before" in rows:
        ratio = [x["cpu"] / y["cpu"] for x, y in zip(rows["before"], rows["this tree"])]
        print(f"  CPU ratio before / this tree, pair by pair: {spread(ratio, '{:.2f}')}x")
    for label, rs in rows.items():
        print(f"  pf ({label}, {rs[0]['n']} realisations, seed 1): {rs[0]['pf']:.4f}")


def part_sim(args):
    if args.before:
        part_sim_trees(args)
    import slipfield.slope.simulate.engine as engine
    from slipfield.slope.simulate import simulate

    p = levee_problem("undrained", args.cache)
    engine.prepare(p)
    array_path = lambda *a: None  # noqa: E731
    fused_path = engine.strength_map
    engine.batch_fs(p, 1, range(8))  # compile / load the kernels
    cpu = {"fused": [], "array": []}
    same = True
    n_cpu = args.n_cpu
    import numba

    numba.set_num_threads(1)  # CPU time of one core's work, not of threads waiting for each other
    for _ in range(args.repeat):
        outs = {}
        for name, fn in (("fused", fused_path), ("array", array_path)):
            engine.strength_map = fn
            t = time.process_time()
            outs[name] = [engine.batch_fs(p, 1, range(a, a + 100)) for a in range(0, n_cpu, 100)]
            cpu[name].append((time.process_time() - t) / n_cpu * 1e3)
        engine.strength_map = fused_path
        same &= all(np.array_equal(x, y, equal_nan=True)
                    for bf, ba in zip(outs["fused"], outs["array"]) for x, y in zip(bf, ba))
    numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)
    walls = []
    n = args.n_sim
    simulate(p, 200, 1, n_jobs=2, batch=100)  # worker started, kernels loaded
    for _ in range(args.repeat):
        t = time.perf_counter()
        simulate(p, n, 1, n_jobs=2, batch=100)
        walls.append((time.perf_counter() - t) / n * 1e3)
    ratio = [a / f for a, f in zip(cpu["array"], cpu["fused"])]
    print(f"[sim] levee undrained, {len(p.surfaces)} circles ({p._stencil.rows.size} valid) x {p.n_slices} slices, "
          f"{len(p.properties)} fields on {p.grid.nx}x{p.grid.ny} cells")
    print(f"  CPU ms/realisation, one process, {n_cpu} realisations: compiled pass {spread(cpu['fused'])}, "
          f"array path {spread(cpu['array'])}; ratio {spread(ratio, '{:.2f}')}x; results identical: {same}")
    print(f"  simulate --jobs 2, {n} realisations: {spread(walls)} ms/realisation wall "
          f"(target <= 0.6 ms: {verdict(min(walls) <= 0.6)} at best, {verdict(max(walls) <= 0.6)} at worst)")
    print(f"  CPU time / 2 cores (the wall time of two single-threaded processes on an idle machine): "
          f"{spread([c / 2 for c in cpu['fused']])} ms/realisation (target <= 0.6 ms: "
          f"{verdict(min(cpu['fused']) / 2 <= 0.6)} at best)")


# ------------------------------------------------------------------ memory
def _bank_5000(args):
    """The levee undrained problem on a centre lattice of >= 5,000 circles."""
    from slipfield.slope.search import lattice_circles
    from slipfield.slope.simulate import RandomProblem
    from slipfield.slope.surfaces import Circle

    p = levee_problem("undrained", args.cache)
    circ = lattice_circles(p.section, nx=24, ny=20, n_radii=12)
    surfaces = [Circle(float(x), float(y), float(r)) for x, y, r in zip(circ.xc, circ.yc, circ.radius)]
    surfaces.insert(0, p.surfaces[p.fixed_index])
    return RandomProblem(p.section, p.hypothesis, p.method, p.properties, surfaces, 0,
                         cross_correlation=p.cross_correlation, n_slices=p.n_slices, cell=p.cell,
                         field_method=p.field_method, averaging=p.averaging, interslice=p.interslice)


_CHILD = """
import resource, sys
sys.path.insert(0, {here!r})
import bench_speed as b
from slipfield.slope.simulate import simulate
from slipfield.slope.simulate.engine import prepare
p = b.levee_problem('undrained', {cache!r})
prepare(p)
simulate(p, 200, 1, n_jobs=1, batch=100)  # kernels loaded, first batches done
with open('/proc/self/clear_refs', 'w') as fh:
    fh.write('5')  # resets the peak (VmHWM): what follows is the simulation alone
simulate(p, {n}, 1, n_jobs=1, batch=100)
hwm = [line for line in open('/proc/self/status') if line.startswith('VmHWM')][0].split()[1]
print(int(hwm) / 1024.0, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0)
"""


def _child_rss(args, n):
    """Peak RSS (MB) of simulate over n realisations in a fresh process, after set-up; and of the process."""
    code = _CHILD.format(here=str(Path(__file__).parent), cache=args.cache, n=n)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    sim, whole = map(float, out.stdout.strip().splitlines()[-1].split())
    return sim, whole


def part_memory(args):
    import tracemalloc

    import slipfield.slope.simulate.engine as engine

    p = _bank_5000(args)
    engine.prepare(p)
    engine.batch_fs(p, 1, range(2))
    fused_path = engine.strength_map
    peaks = {}
    for name, fn in (("fused", fused_path), ("array", lambda *a: None)):
        engine.strength_map = fn
        tracemalloc.start()
        engine.batch_fs(p, 1, range(100))
        peaks[name] = tracemalloc.get_traced_memory()[1] / 1e6
        tracemalloc.stop()
    engine.strength_map = fused_path
    print(f"[memory] bank of {len(p.surfaces)} circles ({p._stencil.rows.size} valid) x {p.n_slices} slices, "
          f"batch of 100: peak numpy allocations {peaks['fused']:.0f} MB (compiled pass) vs "
          f"{peaks['array']:.0f} MB (array path), {peaks['array'] / peaks['fused']:.1f}x less")
    (r1, w1), (r4, w4) = _child_rss(args, 1000), _child_rss(args, 4000)
    print(f"  simulate peak RSS after set-up, levee undrained: {r1:.0f} MB at 1,000 and {r4:.0f} MB at 4,000 "
          f"realisations (ratio {r4 / r1:.2f}; flat in n: {verdict(r4 / r1 < 1.1)}); whole process "
          f"incl. set-up {w1:.0f} / {w4:.0f} MB")


# ------------------------------------------------------------------ kernel
KERNEL_CASES = (("bishop", "undrained", 200.0), ("morgenstern-price", "drained", 40.0))


def kernel_rates(cache, repeat=1):
    """M slice-evaluations per CPU second of ``factor_of_safety`` as the simulator calls it.

    Strengths of 100 levee realisations through ``fused.StrengthMap`` in the
    simulator's chunks (C-contiguous ``(k, m, n)``), one numba thread (the
    workers run single-threaded); the wall rate with the default threads too.
    Returns {method: {"cpu": [...], "wall": [...], "surfaces", "slices", "chunk"}}.
    """
    import numba

    import slipfield.slope.simulate.engine as engine
    from slipfield.slope.methods import factor_of_safety

    out = {}
    for method, hyp, _ in KERNEL_CASES:
        p = levee_problem(hyp, cache)
        st = engine.prepare(p)
        sm = engine.strength_map(p, st, lambda prop: engine._det_value(p, prop))
        s = 100
        phys = np.empty((s, sm.n_cols))
        for z in st.zones:
            vals = engine.zone_cell_values(p, 3, range(s), z, st.zones[z][1], engine.zone_members(p, z))
            for zz, i, off, ncol in sm.entries:
                if zz == z:
                    phys[:, off:off + ncol] = vals[i]
        k = sm.chunk()
        chunks = [sm.strengths(phys[a:a + k]) for a in range(0, s, k)]
        kw = {"interslice": p.interslice} if method != "bishop" else {}
        factor_of_safety(st.terms, *chunks[0], method, **kw)  # compiled or loaded from the cache
        evals = s * st.rows.size * p.n_slices
        cpu, wall = [], []
        for _ in range(repeat):
            numba.set_num_threads(1)
            t = time.process_time()
            for c, tp in chunks:
                factor_of_safety(st.terms, c, tp, method, **kw)
            cpu.append(evals / (time.process_time() - t) / 1e6)
            numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)
            t = time.perf_counter()
            for c, tp in chunks:
                factor_of_safety(st.terms, c, tp, method, **kw)
            wall.append(evals / (time.perf_counter() - t) / 1e6)
        out[method] = {"cpu": cpu, "wall": wall, "surfaces": int(st.rows.size), "slices": int(p.n_slices),
                       "chunk": int(k), "hypothesis": hyp}
    return out


def _kernel_child(args, tree):
    """:func:`kernel_rates` in a fresh process of ``tree`` (None: this tree)."""
    env = _tree_env(tree)
    cache = args.cache if tree is None else args.cache + ".before"
    code = (f"import sys, json; sys.path.insert(0, {str(Path(__file__).parent)!r}); import bench_speed as b; "
            f"print(json.dumps(b.kernel_rates({cache!r}, {args.kernel_repeat})))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env)
    if out.returncode:
        raise RuntimeError(out.stderr[-2000:])
    return json.loads(out.stdout.strip().splitlines()[-1])


def part_kernel(args):
    rows = {}
    for _ in range(args.repeat):
        for label, tree in _trees(args):  # alternated: both see the same load
            for method, r in _kernel_child(args, tree).items():
                d = rows.setdefault(label, {}).setdefault(method, {"cpu": [], "wall": []})
                d["cpu"] += r["cpu"]
                d["wall"] += r["wall"]
                d["info"] = r
    for method, hyp, target in KERNEL_CASES:
        info = rows["this tree"][method]["info"]
        print(f"[kernel] {method}, levee {hyp}: {info['surfaces']} surfaces x {info['slices']} slices x 100 "
              f"realisations in chunks of {info['chunk']} (the simulator's layout and calls)")
        for label in rows:
            cpu = rows[label][method]["cpu"]
            wall = rows[label][method]["wall"]
            print(f"  {label:>9}: {spread(cpu, '{:.0f}')} M slice-eval per CPU second on one thread "
                  f"(as in a worker); x 2 processes = {spread([2 * c for c in cpu], '{:.0f}')} M/s "
                  f"(target >= {target:.0f}: {verdict(2 * max(cpu) >= target)} at best, "
                  f"{verdict(2 * min(cpu) >= target)} at worst); wall, "
                  f"{os.cpu_count()} threads in one process: {spread(wall, '{:.0f}')} M/s")


def _shim(tree):
    """The import root of another source tree: its ``.dev`` shim, else a private one (symlinks)."""
    tree = Path(tree).resolve()
    if (tree / ".dev" / "slipfield").is_dir():
        return tree / ".dev"
    root = Path(tempfile.gettempdir()) / f"slipfield-bench-shim-{os.getpid()}"
    pkg = root / "slipfield"
    pkg.mkdir(parents=True, exist_ok=True)
    for name in ("fields", "slope"):
        if not (pkg / name).exists():
            (pkg / name).symlink_to(tree / name)
    return root


# -------------------------------------------------------------------- jobs
def _cli(argv, env=None, tree=None):
    """Wall time of one ``slipfield`` command in a fresh process; ``tree``: another source tree
    (its ``.dev`` import shim, see the brief of the work trees) instead of this one."""
    env = _tree_env(tree, env)
    t = time.perf_counter()
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    subprocess.run([sys.executable, "-m", "slipfield.slope.cli"] + argv, check=True, env=env,
                   stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    _cli.cpu = (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)  # the command and its workers
    return time.perf_counter() - t


def _cli_cpu(argv, tree=None):
    """Wall time and CPU time (:func:`_cli`: the command and the workers it reaped) of one command."""
    wall = _cli(argv, tree=tree)
    return wall, _cli.cpu


def _trees(args):
    return [("this tree", None)] + ([("before", args.before)] if args.before else [])


def part_jobs(args):
    """``--jobs 1`` against ``--jobs 2``, with the default per-realisation free search and without
    it (``--refine-search off``): the wall ratio, and the CPU of both (the work added by the pool)."""
    rows = {}
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(args.repeat):
            for label, tree in _trees(args):  # alternated: both see the same load
                for search in ("default", "off"):
                    for j in (1, 2):
                        out = os.path.join(tmp, f"{label[:4]}_{search}_j{j}_{r}")
                        extra = [] if search == "default" else ["--refine-search", "off"]
                        rows.setdefault((label, search), {1: [], 2: [], "load": []})[j].append(
                            _cli_cpu(["simulate", str(CASE), "--realisations", str(args.n_jobs_run), "--jobs", str(j),
                                      "--quiet", "--out", out] + extra, tree=tree))
                        rows[(label, search)]["load"].append(os.getloadavg()[0])
    for (label, search), times in rows.items():
        w1, w2 = [w for w, _ in times[1]], [w for w, _ in times[2]]
        c1, c2 = [c for _, c in times[1]], [c for _, c in times[2]]
        ratio = [a / b for a, b in zip(w1, w2)]
        print(f"[jobs] {label}, free search {search}: slipfield simulate levee, {args.n_jobs_run} realisations: "
              f"--jobs 1 {spread(w1, '{:.1f}')} s wall ({spread(c1, '{:.1f}')} s CPU), --jobs 2 "
              f"{spread(w2, '{:.1f}')} s wall ({spread(c2, '{:.1f}')} s CPU); ratio {spread(ratio, '{:.2f}')} "
              f"(target >= 1.6: {verdict(min(ratio) >= 1.6)} in every pair, {verdict(max(ratio) >= 1.6)} in the best); "
              f"load average during {spread(times['load'], '{:.1f}')}")
    print(f"  (a wall ratio needs two idle cores; load average now {os.getloadavg()[0]:.1f} on {os.cpu_count()} "
          "cores. CPU of --jobs 2 equal to --jobs 1 means no work is added by the workers)")


#: Phases of ``slipfield run`` read from its stage lines and progress bars on stderr (first line of each).
RUN_PHASES = (("start, imports, case read", None),
              ("deterministic search", "slipfield run · deterministic search"),
              ("single random variables", "· single random variables"),
              ("simulations (6, on the pool)", "spatial simulation ·"),
              ("other methods on the bank", "slipfield run · deterministic FS by"),
              ("figures, tables, report", "slipfield run · figures, tables and report"),
              ("exit (pool shut down)", "slipfield run · done"))


def _run_phases(argv, env, tree):
    """Wall time, CPU time (the command and the workers it reaped) and per-phase wall times of one
    ``slipfield run`` with its stage lines on (``--quiet`` off), read from stderr as they come."""
    env = _tree_env(tree, env)
    t0 = time.perf_counter()
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    proc = subprocess.Popen([sys.executable, "-m", "slipfield.slope.cli"] + argv, env=env, stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE)
    marks, buf, tail = {}, b"", []
    while True:
        ch = proc.stderr.read(1)
        if not ch:
            break
        if ch in b"\r\n":
            line = buf.decode("utf-8", "replace")
            now = time.perf_counter() - t0
            for name, key in RUN_PHASES[1:]:
                if key in line and name not in marks:
                    marks[name] = now
            tail = (tail + [line])[-20:]
            buf = b""
        else:
            buf += ch
    rc = proc.wait()
    wall = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    if rc:
        raise RuntimeError("slipfield run failed:\n" + "\n".join(tail))
    cpu = (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)
    times = [0.0] + [marks.get(name, float("nan")) for name, _ in RUN_PHASES[1:]] + [wall]
    for i in range(len(times) - 2, 0, -1):  # a stage a tree does not print (an older tree): 0 s long
        if times[i] != times[i]:
            times[i] = times[i + 1]
    phases = {name: times[i + 1] - times[i] for i, (name, _) in enumerate(RUN_PHASES)}
    return wall, cpu, phases


def part_run(args):
    """``slipfield run`` of the levee demo, cold (empty numba cache) then warm, per tree, trees
    alternated; wall and CPU beside the targets, and wall per phase. ``--run-kinds warm``: warm
    runs only, each tree on a numba cache of its own filled by one untimed run first (this tree's
    usual cache; the other tree's in this benchmark's folder, see :func:`_tree_env`)."""
    kinds = [k for k in ("cold", "warm") if k in args.run_kinds.split(",")]
    rows = {}
    with tempfile.TemporaryDirectory() as tmp:
        if kinds == ["warm"]:
            for label, tree in _trees(args):  # kernels compiled or loaded once, not timed
                _run_phases(["run", str(CASE), "--out", os.path.join(tmp, f"{label[:4]}_fill")], os.environ, tree)
        for r in range(args.repeat):
            for label, tree in _trees(args):  # alternated: both see the same load
                env = (dict(os.environ, NUMBA_CACHE_DIR=os.path.join(tmp, f"numba_{label[:4]}_{r}"))
                       if "cold" in kinds else os.environ)
                row = rows.setdefault(label, {k: [] for k in kinds})
                for kind in kinds:
                    out = os.path.join(tmp, f"{label[:4]}_{kind}{r}")
                    row[kind].append(_run_phases(["run", str(CASE), "--out", out], env, tree))
    labels = list(rows)
    print(f"[run] slipfield run levee demo (--jobs from the case: 2), {args.repeat} pair(s), trees alternated; "
          "min .. max")
    head = "".join(f" {lab:>22}" for lab in labels)
    print(f"  {'':<38}{head}  target, met by this tree?")
    for kind, target in ((k, t) for k, t in (("cold", 15.0), ("warm", 10.0)) if k in kinds):
        cells = "".join(f" {spread([w for w, _, _ in rows[lab][kind]], '{:.1f}') + ' s':>22}" for lab in labels)
        ws = [w for w, _, _ in rows["this tree"][kind]]
        print(f"  {kind + ' wall':<38}{cells}  <= {target:.0f} s: {verdict(min(ws) <= target)} at best, "
              f"{verdict(max(ws) <= target)} at worst")
        cells = "".join(f" {spread([c for _, c, _ in rows[lab][kind]], '{:.1f}') + ' s':>22}" for lab in labels)
        print(f"  {kind + ' CPU (command and workers)':<38}{cells}")
        for name, _ in RUN_PHASES:
            cells = "".join(f" {spread([p[name] for _, _, p in rows[lab][kind]], '{:.1f}') + ' s':>22}"
                            for lab in labels)
            print(f"    {kind + ': ' + name:<36}{cells}")
    if "before" in rows:
        for kind in kinds:
            ratio = [b[0] / a[0] for a, b in zip(rows["this tree"][kind], rows["before"][kind])]
            print(f"  {kind} wall before / this tree, pair by pair: {spread(ratio, '{:.2f}')}x")
    print(f"  (load average now {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores; the targets are for 2 idle "
          "cores)")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--parts", default="sim,memory,kernel,jobs,run")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--n-sim", type=int, default=4000, help="realisations of the --jobs 2 simulate timing")
    ap.add_argument("--n-cpu", type=int, default=400, help="realisations of the CPU-time comparison")
    ap.add_argument("--n-jobs-run", type=int, default=16000)
    ap.add_argument("--before", help="another source tree (with its .dev shim) timed beside this one in "
                                     "the jobs and run parts, e.g. an export of main")
    ap.add_argument("--run-kinds", default="cold,warm", help="runs of the run part: cold, warm or both "
                                                              "(warm alone: one untimed run per tree first)")
    ap.add_argument("--kernel-repeat", type=int, default=3, help="timed passes per kernel process")
    ap.add_argument("--cache", default=os.path.join(tempfile.gettempdir(), "slipfield_bench_levee.pickle"),
                    help="pickle of the levee problems (built once; delete it after changing the case)")
    args = ap.parse_args()
    print(f"{os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f} at start")
    for part in args.parts.split(","):
        {"sim": part_sim, "memory": part_memory, "kernel": part_kernel, "jobs": part_jobs, "run": part_run}[part](args)
        sys.stdout.flush()
    print(f"load average {os.getloadavg()[0]:.1f} at end")


if __name__ == "__main__":
    main()
