"""``--jobs N`` bounds the cores a command uses, its own process's kernel threads included.

A user who asks for one job expects one core: before this rule, ``--jobs 1``
ran the simulator's numba-parallel kernels on every core, so ``--jobs 2``
against ``--jobs 1`` compared two processes with two threads. Results do not
depend on the thread count (the jobs and batch tests check the FS bit for bit).
"""
from __future__ import annotations

from pathlib import Path

import numba
import pytest

from slipfield.slope.cli import main
from slipfield.slope.simulate import engine
from slipfield.slope.simulate.executors import limit_threads

CASE = str(Path(__file__).resolve().parents[2] / "cases" / "levee_soft_clay.toml")

needs_cores = pytest.mark.skipif(numba.config.NUMBA_NUM_THREADS < 2,
                                 reason="one core: the kernels use one thread whatever --jobs says")


@needs_cores
def test_simulate_jobs_1_runs_the_kernels_on_one_thread(tmp_path, monkeypatch):
    seen = []
    kernel = engine.factor_of_safety

    def counted(*args, **kw):
        seen.append(numba.get_num_threads())
        return kernel(*args, **kw)

    monkeypatch.setattr(engine, "factor_of_safety", counted)
    numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)  # as a fresh process starts
    rc = main(["simulate", CASE, "--out", str(tmp_path / "out"), "--realisations", "6", "--batch", "3",
               "--jobs", "1", "--refine-search", "off", "--quiet"])
    assert rc == 0
    assert seen and set(seen) == {1}


@needs_cores
def test_jobs_beyond_the_cores_use_every_core_and_no_more():
    assert limit_threads(1) == 1 and numba.get_num_threads() == 1
    assert limit_threads(10 * numba.config.NUMBA_NUM_THREADS) == numba.config.NUMBA_NUM_THREADS
    assert numba.get_num_threads() == numba.config.NUMBA_NUM_THREADS


def _threads(_k):
    return numba.get_num_threads()


@needs_cores
def test_jobs_2_runs_this_process_s_tasks_on_one_thread_and_restores_its_own():
    # --jobs 2 is this process and one worker: both run their tasks' kernels on one thread (two cores
    # in all), and this process gets back its own thread count for what it runs after them
    from slipfield.slope.simulate.executors import run_tasks, stop_workers

    try:
        assert limit_threads(2) == 2
        assert list(run_tasks(_threads, [(k,) for k in range(6)], n_jobs=2)) == [1] * 6
        assert numba.get_num_threads() == 2
    finally:
        stop_workers()
        limit_threads(numba.config.NUMBA_NUM_THREADS)
