"""Work is pulled by whichever worker is free, one task at a time.

The per-realisation free search makes some blocks of realisations many times
dearer than others (the blocks with realisations near failure). A pool that
shared the tasks out in advance would leave one worker with the dear blocks
while the other idles. ``run_tasks`` must instead hand each task to the
next free worker: while one worker is held by a long task, the other does
all the rest. Results must still come back in task order.

No time is asserted: the long task waits for the marks of all the others
(bounded, so that a wrong pool fails instead of hanging) and reports how
many it saw.
"""
import os
import time

from slipfield.slope.simulate.executors import run_tasks

N_TASKS = 12
WAIT_BOUND_S = 120.0  # only a bound against hanging; nothing is timed


def _task(folder, k):
    if k == 0:
        # the dear block: it holds its worker until every other task has run elsewhere
        deadline = time.monotonic() + WAIT_BOUND_S
        while time.monotonic() < deadline and len(os.listdir(folder)) < N_TASKS - 1:
            time.sleep(0.02)
        return k, len(os.listdir(folder)), os.getpid()
    with open(os.path.join(folder, f"{k}.done"), "w"):
        pass
    return k, None, os.getpid()


def test_a_long_task_does_not_hold_up_the_others(tmp_path):
    out = list(run_tasks(_task, [(str(tmp_path), k) for k in range(N_TASKS)], n_jobs=2))
    assert [k for k, _, _ in out] == list(range(N_TASKS))  # in task order
    k0, seen, pid0 = out[0]
    # every other task ran while task 0 held its worker: on the other worker
    assert seen == N_TASKS - 1
    assert all(pid != pid0 for _, _, pid in out[1:])


def _marked(folder, k):
    # task 0 waits (bounded) for a task run by another process; every task leaves a mark with its pid
    if k == 0:
        deadline = time.monotonic() + WAIT_BOUND_S
        while time.monotonic() < deadline and not any(
                not name.startswith(f"{os.getpid()}-") for name in os.listdir(folder)):
            time.sleep(0.02)
    with open(os.path.join(folder, f"{os.getpid()}-{k}"), "w"):
        pass
    return os.getpid()


def test_the_command_runs_tasks_beside_its_workers(tmp_path):
    # --jobs N: this process and N - 1 workers take the tasks (one process fewer to start); results
    # still come back in task order, and both kinds of process ran some
    pids = list(run_tasks(_marked, [(str(tmp_path), k) for k in range(6)], n_jobs=2))
    assert len(pids) == 6 and len(set(pids)) == 2
    assert os.getpid() in pids
    assert sorted(int(name.split("-")[1]) for name in os.listdir(tmp_path)) == list(range(6))


def test_a_joblib_parallel_in_the_same_process_after_and_before_the_pool():
    # the pool is joblib's own kind: a joblib.Parallel after it, and the pool again after that, work
    from joblib import Parallel, delayed

    from slipfield.slope.simulate.executors import stop_workers

    try:
        assert list(run_tasks(abs, [(-k,) for k in range(5)], n_jobs=2)) == [0, 1, 2, 3, 4]
        assert Parallel(n_jobs=2)(delayed(abs)(-k) for k in range(5)) == [0, 1, 2, 3, 4]
        assert list(run_tasks(abs, [(-k,) for k in range(5)], n_jobs=2)) == [0, 1, 2, 3, 4]
    finally:
        stop_workers()


def _dies_in_a_worker(parent, k):
    # a worker killed under its task (as by the kernel's out-of-memory killer); the command's own tasks run
    if os.getpid() != parent:
        os._exit(9)
    time.sleep(0.05)
    return k


def test_a_worker_that_dies_fails_the_tasks_plainly(capfd, caplog):
    # the pool's result thread handed the next task to the broken pool and printed the error as a
    # traceback of its own; the error must come out once, where the tasks are awaited
    from concurrent.futures import BrokenExecutor

    import pytest

    from slipfield.slope.simulate.executors import stop_workers

    try:
        with pytest.raises(BrokenExecutor):
            list(run_tasks(_dies_in_a_worker, [(os.getpid(), k) for k in range(8)], n_jobs=2))
    finally:
        stop_workers(wait=False)
    assert "Traceback" not in capfd.readouterr().err
    assert not [r for r in caplog.records if r.exc_info]  # nor logged with its traceback (loky's callbacks log)
    assert list(run_tasks(abs, [(-k,) for k in range(4)], n_jobs=2)) == [0, 1, 2, 3]  # a new pool serves
    stop_workers()
