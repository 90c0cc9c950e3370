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
