"""The worker pool: its warm-up compiles the search's kernel with the real types; its end.

On a machine whose numba cache is empty (the first run after installing),
each kernel is compiled by one process while the others wait for its lock
(``slope.methods.compiled.first_call``). The pool's warm-up now includes the
per-realisation search's dynamic-programming kernel (before, each worker
compiled it at its first searched realisation); its tiny inputs must have the
types of the real calls (another type would make numba compile a second
specialisation in every process). ``slipfield run`` ends its idle pool once
its outputs are written (``executors.stop_workers``).
"""
import json
import subprocess
import sys
from pathlib import Path

import pytest


TESTS = Path(__file__).resolve().parents[1]


_CHILD = r"""
import json, sys
sys.path.insert(0, {tests!r})
from slipfield.slope.search.dynamic_programming import _dp
from slipfield.slope.simulate import RefineSettings, simulate
from slipfield.slope.simulate.executors import _warm_worker
from support.problems import gf_problem

_warm_worker(None, ())  # what a pool task does (without watching a parent)
warmed = len(_dp.signatures)
p, _ = gf_problem(theta=4.0, cov=0.3, nx=4, ny=4, n_radii=3)
r = simulate(p, 6, seed=3, refine=RefineSettings(below=5.0, search="dynamic-programming"))
print(json.dumps({{"warmed": warmed, "after": len(_dp.signatures), "searched": int(r.n_searched)}}))
"""


def test_the_simulator_task_compiles_the_search_kernel_with_the_real_types():
    # a fresh process: kernels compiled by other tests of this session would hide a missing warm-up
    out = subprocess.run([sys.executable, "-c", _CHILD.format(tests=str(TESTS))], capture_output=True, text=True,
                         check=True)
    got = json.loads(out.stdout.strip().splitlines()[-1])
    assert got["warmed"] == 1  # compiled (or loaded) by the warm-up, before any search
    assert got["searched"] >= 1  # the simulation did call the search below
    assert got["after"] == 1  # the searches' real calls added no second specialisation


def test_search_starts_are_the_lowest_clean_surface_of_each_family():
    # the per-realisation search starts from the lowest clean surface of each family (issue 15),
    # chosen with array operations (issue 17); the expected indices are read off by hand
    from types import SimpleNamespace

    import numpy as np

    from slipfield.slope.simulate.mechanisms import _starts
    from slipfield.slope.surfaces import Circle, Polyline

    def poly(family):
        return Polyline([[0.0, 1.0], [1.0, 0.0]], family=family)

    surfaces = [Circle(0.0, 5.0, 5.0), poly("block"), Circle(1.0, 5.0, 5.0), poly("dynamic-programming"),
                poly("block"), Circle(2.0, 5.0, 5.0), poly("block")]
    problem = SimpleNamespace(surfaces=surfaces)
    fs = np.array([1.30, 1.20, 1.05, np.nan, 1.10, 1.05, 0.90])
    ok = np.array([True, True, True, True, True, True, False])
    # index 6 (0.90) is not clean, 3 has no FS; circles 2 and 5 tie at 1.05: the bank's order keeps 2
    assert _starts(problem, fs, ok, 3) == [2, 4]
    assert _starts(problem, fs, ok, 1) == [2]
    fs[3] = 1.00
    assert _starts(problem, fs, ok, 3) == [3, 2, 4]
    assert _starts(problem, fs, ok, 2) == [3, 2]
    assert _starts(problem, fs, np.zeros(7, bool), 3) == []


def _alive(pid):
    import os

    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    return True  # a zombie (killed, not reaped) counts as alive: the pool must reap its workers


def test_stop_workers_ends_the_idle_pool_and_a_later_call_starts_another():
    # `slipfield run` ends its idle pool once its outputs are written, instead of waiting at exit
    # for every worker to tear down its interpreter (issue 17)
    import os

    from joblib import Parallel, delayed

    from slipfield.slope.simulate.executors import stop_workers

    pids = set(Parallel(n_jobs=2)(delayed(os.getpid)() for _ in range(4)))
    assert os.getpid() not in pids
    assert stop_workers() >= 1
    assert not any(_alive(p) for p in pids)
    again = set(Parallel(n_jobs=2)(delayed(os.getpid)() for _ in range(4)))
    assert again and not again & pids  # a new pool serves the next call
    stop_workers()


def test_workers_start_their_warm_up_on_different_long_compilations():
    # Each worker walks every step from its own index: on an empty cache worker 0 compiles
    # Morgenstern-Price while worker 1 compiles the case's search method (the command's first need,
    # which it then loads), whatever order the case lists the methods in; the simulator's kernels and
    # the lam scan (which only some searches reach) follow.
    from slipfield.slope.simulate.executors import warm_up_order, warm_up_steps

    steps = warm_up_steps(warm_up_order(["spencer", "bishop", "morgenstern-price"], "bishop"))
    assert steps == [("method", ("morgenstern-price",)), ("method", ("bishop",)), ("simulator", ()),
                     ("method", ("spencer",))]
    # the scan only for a search method that may run it (the others' is compiled where they run)
    steps = warm_up_steps(warm_up_order(["spencer", "bishop", "morgenstern-price"], "spencer"))
    assert steps == [("method", ("morgenstern-price",)), ("method", ("spencer",)), ("simulator", ()),
                     ("scan", ()), ("method", ("bishop",))]
    assert warm_up_steps([]) == [("simulator", ())]  # `simulate`: no methods named, the simulator's kernels
    # no method that runs the scan: no scan step
    assert warm_up_steps(["janbu", "bishop"]) == [("method", ("janbu",)), ("method", ("bishop",)), ("simulator", ())]


def test_a_method_names_only_kernel_groups_the_warm_up_knows():
    # the groups of MethodOfSlices.compiled are what a worker compiles ahead of the run: a misspelt
    # group would silently warm nothing, so registering it is refused
    from slipfield.slope.methods import METHODS, MethodOfSlices, register_method
    from slipfield.slope.methods.compiled import KERNEL_GROUPS

    assert all(set(m.compiled) <= set(KERNEL_GROUPS) for m in METHODS.values())
    with pytest.raises(ValueError, match="unknown kernel groups"):
        register_method(MethodOfSlices("misspelt", METHODS["bishop"].run, compiled=("single_equation",)))
    assert "misspelt" not in METHODS


def test_the_command_takes_its_own_steps_and_never_waits_for_the_workers_first(monkeypatch):
    # --jobs 2: the worker starts at step 0 (the longest compilation), the command at step 1 (the search
    # method, which its case checks need) to the last step; it never reaches step 0, which would make
    # it wait for the worker's compilation instead of going on with the run
    from slipfield.slope.methods import compiled
    from slipfield.slope.simulate import executors

    walked = []
    monkeypatch.setattr(compiled, "warm_up", lambda methods, scan=True: walked.append(("method", tuple(methods))))
    monkeypatch.setattr(compiled, "warm_up_scan", lambda: walked.append(("scan", ())))
    monkeypatch.setattr(executors, "_warm_simulator", lambda: walked.append(("simulator", ())))
    methods = executors.warm_up_order(["bishop", "morgenstern-price", "spencer"], "spencer")
    executors.warm_here(2, methods)
    # nor the lam scan (a step here: Spencer searches): the worker compiles it after the longest
    steps = executors.warm_up_steps(methods)
    assert ("scan", ()) in steps[1:]
    assert walked == [step for step in steps[1:] if step != ("scan", ())]
    assert ("method", ("morgenstern-price",)) not in walked and ("scan", ()) not in walked
    walked.clear()
    executors.warm_here(1, methods)  # --jobs 1: no pool, nothing ahead of the run
    assert walked == []
    executors.warm_here(len(methods) + 9, methods)  # more workers than steps: every step is a worker's first
    assert walked == []


def test_a_step_another_process_is_compiling_is_skipped_not_waited_for(monkeypatch):
    # the worker, done with the longest compilation, waited for the command's kernels before the
    # lam scan; now a step reaching a kernel being compiled elsewhere ends, and the next one runs
    from slipfield.slope.methods import compiled
    from slipfield.slope.simulate import executors

    walked = []

    def busy():
        assert getattr(compiled._SKIP_BUSY, "on", False)  # the walk skips busy kernels
        raise compiled.CompilingElsewhere("_dp")

    monkeypatch.setattr(compiled, "warm_up", lambda methods, scan=True: walked.append(("method", tuple(methods))))
    monkeypatch.setattr(compiled, "warm_up_scan", lambda: walked.append(("scan", ())))
    monkeypatch.setattr(executors, "_warm_simulator", busy)
    steps = [("method", ("morgenstern-price",)), ("simulator", ()), ("scan", ()), ("method", ("spencer",))]
    executors._walk(steps)
    assert walked == [steps[0], steps[2], steps[3]]
    assert not getattr(compiled._SKIP_BUSY, "on", False)  # real calls after the walk wait as before
