"""Where simulation tasks run: in this process (beside a local pool of workers), or on a dask cluster.

:func:`run_tasks` is the one way to run a stream of tasks;
:func:`connect_scheduler` the one dask connector (every step bounded).
Pool workers watch their parent and end when it is gone (``kill -9`` of a
run cannot stop its pool otherwise).
"""
from __future__ import annotations

import os
import warnings

from ..errors import InputError

__all__ = ["run_tasks", "connect_scheduler", "SchedulerLost", "SCHEDULER_TIMEOUT_S", "start_workers", "warm_up_order",
           "warm_here", "stop_workers", "limit_threads"]

# An interrupted run closes the pool's result stream on purpose (the finished blocks are
# stored); joblib's advice about unused results is not for the user.
warnings.filterwarnings("ignore", message=r"\d+ tasks (have been successfully executed|which were still being "
                        r"processed)", category=UserWarning)


class SchedulerLost(InputError):
    """The dask scheduler stopped answering during a run (its finished blocks are stored)."""


def _scheduler_results(client, futs):
    """Results of dask futures in order; a lost scheduler raises :class:`SchedulerLost`."""
    from dask.distributed import TimeoutError as DaskTimeout

    lost = (OSError, *_cancelled_errors())
    for f in futs:
        while True:
            try:
                yield f.result(timeout=1.0)
                break
            except (DaskTimeout, TimeoutError):
                if client.status not in ("running", "connecting", "newly-created"):
                    raise SchedulerLost("the dask scheduler stopped answering") from None
            except lost:
                raise SchedulerLost("the dask scheduler stopped answering (connection lost)") from None


def _cancelled_errors():
    import concurrent.futures

    import asyncio

    errs = [concurrent.futures.CancelledError, asyncio.CancelledError]
    try:
        from distributed.client import FutureCancelledError
        errs.append(FutureCancelledError)
    except ImportError:
        pass
    return tuple(e for e in errs if isinstance(e, type) and issubclass(e, BaseException))


def run_tasks(fn, tasks, *, n_jobs=1, scheduler=None, here=None):
    """``fn(*task)`` for each task, yielded in task order as they complete.

    One stream of tasks for the whole run, so workers never wait for each
    other at block boundaries. Results must not depend on where a task runs
    (streams keyed by realisation, see DEVELOPERS.md "Seeds").

    With ``n_jobs`` >= 2 the tasks run in this process and in a pool of
    ``n_jobs - 1`` worker processes (:func:`start_workers`): ``n_jobs`` cores in
    all, one process fewer to start than a pool of ``n_jobs`` beside an idle
    command (``slipfield simulate`` of 16,000 realisations, search off, 2 cores:
    ``--jobs 1`` / ``--jobs 2`` 1.67-1.72 against 1.52-1.56). Each worker holds
    one task at a time, the next handed out as its task ends, and this process
    takes the next task in between: whoever is free takes the next, so a long
    task holds up no other (none waits queued behind it). One task queued per
    worker ahead of time measured no faster.

    Parameters
    ----------
    fn : callable
        A module-level function (it is pickled to workers).
    tasks : sequence of tuple
        Positional arguments of each call.
    n_jobs : int
        Cores: this process and ``n_jobs - 1`` local worker processes (1: this
        process only). Workers end when this process dies and leave Ctrl-C to it.
    scheduler : dask.distributed.Client, optional
        Run the tasks on a cluster instead; a scheduler that stops answering
        raises :class:`SchedulerLost`. After an interruption the outstanding
        tasks are cancelled.
    here : callable, optional
        What runs a task in this process (default ``fn``), with the same
        arguments and the same result: e.g. on an object this process holds
        where ``fn`` loads it from a file in a worker.
    """
    tasks = list(tasks)
    if scheduler is not None:
        futs = scheduler.map(fn, *[list(col) for col in zip(*tasks)], pure=False)
        try:
            yield from _scheduler_results(scheduler, futs)
        finally:
            try:
                scheduler.cancel(futs)  # after an interruption, no orphaned work on the cluster
            except Exception:  # noqa: BLE001 - a lost scheduler has nothing left to cancel
                pass
        return
    here = fn if here is None else here
    if n_jobs == 1 or len(tasks) == 1:
        for t in tasks:
            yield here(*t)
        return
    yield from _here_and_pool(fn, here, tasks, int(n_jobs))


def _here_and_pool(fn, here, tasks, n_jobs):
    """:func:`run_tasks` on this process and the pool of ``n_jobs - 1`` workers."""
    import threading
    from concurrent.futures import BrokenExecutor, Future

    pool = _pool(n_jobs)
    parent = os.getpid()
    n = len(tasks)
    lock = threading.Lock()
    out = {}        # task index -> future of the task in a worker
    done = {}       # task index -> result
    state = {"next": 0, "closed": False}
    threads = {}    # numba's threads in this process before its first task here
    ahead = n_jobs - 1  # one task per worker: the next is handed out by the pool's result thread

    def take():
        with lock:
            i = state["next"]
            if i >= n or state["closed"]:
                return None
            state["next"] = i + 1
            return i

    def feed(_ended=None):
        while True:
            with lock:
                if state["closed"] or state["next"] >= n or sum(not f.done() for f in out.values()) >= ahead:
                    return
                i = state["next"]
                state["next"] = i + 1
                try:
                    f = out[i] = pool.submit(_in_worker, parent, fn, *tasks[i])
                except BrokenExecutor as exc:  # a worker died: the task fails where it is awaited,
                    out[i] = Future()          # not as a traceback of the pool's result thread
                    out[i].set_exception(exc)
                    return
            f.add_done_callback(feed)

    feed()
    try:
        for k in range(n):
            while k not in done:
                f = out.get(k)
                if f is not None and f.done():
                    done[k] = f.result()
                    break
                i = take()
                if i is not None:  # this process takes the next task, on one thread as the workers
                    done[i] = _on_one_thread(here, tasks[i], threads)
                    continue
                done[k] = out[k].result()  # nothing left to take: wait for the worker
            with lock:  # the pool's result thread counts the tasks out under it
                out.pop(k, None)
            yield done.pop(k)
    finally:
        with lock:
            state["closed"] = True
        for f in out.values():
            f.cancel()
        if threads:
            threads["numba"].set_num_threads(threads["n"])


def _on_one_thread(here, task, threads):
    """``here(*task)`` with numba's thread count at one (the threads Morgenstern-Price's kernel
    spreads a bank over, :mod:`slope.methods.surface_threads`), when numba is loaded (by whatever
    the tasks compute: it is not imported for them); ``threads`` keeps the count to restore."""
    import sys

    numba = sys.modules.get("numba")
    if numba is not None:
        if not threads:
            threads.update(numba=numba, n=numba.get_num_threads())
        numba.set_num_threads(1)
    return here(*task)


def _pool_env(n_jobs):
    """Environment of the workers: their thread pools (OpenMP, BLAS, numba) share the cores out as
    joblib's pools did (``cores // n_jobs`` threads each, at least one)."""
    threads = str(max((os.cpu_count() or 1) // int(n_jobs), 1))
    names = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS",
             "VECLIB_MAXIMUM_THREADS", "NUMBA_NUM_THREADS", "NUMEXPR_NUM_THREADS")
    return {name: os.environ.get(name, threads) for name in names}


#: Seconds an idle worker waits for work before it ends (a run's serial phases are shorter).
IDLE_WORKER_S = 300


def _pool(n_jobs):
    """The reusable pool of ``n_jobs - 1`` workers, started at the first call, then reused.

    joblib's (its memmapping wrapper of loky's reusable executor), so that a ``joblib.Parallel`` in
    the same process finds a pool it can use (it restarts one whose settings differ from its own).
    """
    from joblib.executor import get_memmapping_executor

    return get_memmapping_executor(int(n_jobs) - 1, timeout=IDLE_WORKER_S, env=_pool_env(n_jobs))


def _in_worker(parent, fn, *args):
    _watch_parent(parent)
    return fn(*args)


def submit_to_worker(fn, *args, n_jobs):
    """``fn(*args)`` on a worker of the pool of ``n_jobs - 1`` workers (:func:`start_workers`),
    after the tasks already queued there: a ``concurrent.futures.Future``.

    For work whose result the command needs later (``run``: the methods other than the run
    method, evaluated on the search's bank), so that it runs beside the command's own work.
    ``fn`` is a module-level function (it is pickled), and so are ``args``.
    """
    return _pool(n_jobs).submit(_in_worker, os.getpid(), fn, *args)


SCHEDULER_TIMEOUT_S = 5.0


def limit_threads(n_jobs: int) -> int:
    """Bound the compute threads of this process by the jobs a command was given.

    ``--jobs N`` is the number of cores a command may use: its N - 1 worker
    processes run their compiled kernels on one thread each (their thread
    pools get ``cores // N`` threads, and :func:`_run_shipped_block` sets one),
    and so does this process while it runs simulation blocks beside them
    (:func:`run_tasks`); otherwise this process -- which runs the
    deterministic search, the single-variable analyses and, with ``--jobs 1``,
    the whole simulation -- uses at most ``N`` threads for its compiled kernels
    (numba's thread count, which :mod:`slope.methods.surface_threads` reads)
    and the BLAS and OpenMP pools loaded so far. Without it
    ``--jobs 1`` ran the kernels on every core, so ``--jobs 2`` against
    ``--jobs 1`` measured two processes against two threads. Results do not depend on the thread count.

    Parameters
    ----------
    n_jobs : int
        Jobs the command was given (>= 1).

    Returns
    -------
    int
        Threads now used by this process's compiled kernels (numba's thread count).
    """
    import numba
    from threadpoolctl import threadpool_limits

    n = max(1, min(int(n_jobs), int(numba.config.NUMBA_NUM_THREADS)))
    numba.set_num_threads(n)
    threadpool_limits(n)  # BLAS/OpenMP pools already loaded (numpy's, scipy's)
    return n


def connect_scheduler(address: str, timeout: float = SCHEDULER_TIMEOUT_S, option: str = "scheduler"):
    """A dask.distributed Client for a scheduler address, or a clear InputError within ``timeout``.

    Every step (TCP connect, handshake, registration) is bounded: the client
    is built in a helper thread and abandoned when it has not answered in
    time, so an address that accepts connections but never answers cannot
    hang the run.

    Parameters
    ----------
    address : str
        ``tcp://host:port``.
    timeout : float, s
    option : str
        Name of the option in messages (``--scheduler`` on the command line).
    """
    import threading

    try:
        from dask.distributed import Client
    except ImportError:
        raise InputError(f"{option} needs dask.distributed; install it (pip install distributed) or omit "
                         f"{option} to run locally") from None
    box = {}

    def connect():
        try:
            box["client"] = Client(address, timeout=timeout, set_as_default=False)
        except BaseException as exc:  # noqa: BLE001 - reported to the caller below
            box["error"] = exc

    t = threading.Thread(target=connect, name="slipfield-scheduler-connect", daemon=True)
    t.start()
    t.join(timeout + 1.0)
    if "client" in box:
        return box["client"]
    why = " ".join(str(box.get("error", "")).split()) or (type(box["error"]).__name__ if "error" in box
                                                          else "no answer")
    raise InputError(f"{option} {address}: no dask scheduler answered within {timeout:g} s ({why}); check the "
                     f"address (tcp://host:port) and that the scheduler is running, or omit {option} to run "
                     "locally")


_WATCHED = None


def _watch_parent(parent: int, period: float = 0.5) -> None:
    """In a pool worker: end this process when the run that started it is gone.

    A killed run (``kill -9``) cannot stop its pool; the worker is then
    re-parented, so a daemon thread polls ``os.getppid()`` and exits. The
    worker also leaves Ctrl-C to its parent, which stops the pool in order.
    """
    global _WATCHED
    if _WATCHED is not None or os.getpid() == parent:
        return
    import signal
    import threading
    import time

    _WATCHED = parent
    try:
        signal.signal(signal.SIGINT, signal.SIG_IGN)
    except ValueError:  # not the main thread of the worker: the parent still stops the pool
        pass

    def watch():
        while True:
            if os.getppid() != parent:
                os._exit(3)
            time.sleep(period)

    threading.Thread(target=watch, name="slipfield-parent-watch", daemon=True).start()


# ---------------------------------------------------------------- local pool: start and problem file
_WARMING = None  # the thread starting the worker pool ahead of the first simulation
_WARM_JOBS = 0  # its number of workers


def warm_up_order(methods, search):
    """The methods whose kernels a pool warms, ``search`` (the method of the case's search) last, where
    :func:`warm_up_steps` expects it. ``search`` None: the methods as given.
    """
    return [m for m in methods if m != search] + ([search] if search is not None else [])


def start_workers(n_jobs, methods=()):
    """Start the pool of ``n_jobs - 1`` workers in the background and load the simulator in them.

    A command calls this before its serial work (case, deterministic search)
    so that the workers' start-up (interpreter, imports, compiled kernels
    loaded from numba's cache: seconds) overlaps it; every ``simulate`` of the
    run then uses the same pool (joblib's reusable executor), with this process
    as the ``n_jobs``-th (:func:`run_tasks`). No effect for ``n_jobs`` 1.
    Results do not depend on it. ``methods``: methods of slices the command
    will call (the workers compile their kernels meanwhile, see
    :mod:`slope.methods.compiled`). Every worker walks every step of
    :func:`warm_up_steps`, worker k starting at step k, and this process may
    walk them from step ``n_jobs - 1`` (:func:`warm_here`): on an empty cache
    the longest compilation (Morgenstern-Price) and the search method's kernel
    then compile in different processes at once, and a process reaching a
    kernel another one is compiling goes on with its next step (:func:`_walk`);
    its first real call of that kernel waits for the lock and loads it.
    (Splitting the methods' list between workers without that lock was
    measured slower: kernels sharing compiled callees compiled them in several
    processes.) A second call with the same ``n_jobs`` does nothing; with
    another, the first pool is ended and a pool for ``n_jobs`` started.
    """
    global _WARMING, _WARM_JOBS
    if int(n_jobs) < 2 or (_WARMING is not None and _WARM_JOBS == int(n_jobs)):
        return
    if _WARMING is not None:  # started for another number of workers: that pool goes
        stop_workers(wait=False)
    _WARM_JOBS = int(n_jobs)
    import threading

    def warm():
        try:
            parent = os.getpid()
            pool = _pool(n_jobs)
            for f in [pool.submit(_warm_worker, parent, tuple(methods), k) for k in range(int(n_jobs) - 1)]:
                f.result()
        except Exception:  # noqa: BLE001 - a failed warm-up only costs the time it would have saved
            pass

    _WARMING = threading.Thread(target=warm, name="slipfield-start-workers", daemon=True)
    _WARMING.start()


def warm_here(n_jobs, methods=()):
    """This process's share of the warm-up of :func:`start_workers`: the steps of
    :func:`warm_up_steps` from step ``n_jobs - 1`` to the last (the workers start at steps
    0 .. n_jobs - 2, which this process does not wait for).

    ``slipfield run`` calls it before its case checks run the search: on an empty cache this process
    compiles the search method's kernel, then the simulator's, while the worker compiles the
    longest one; on later runs it loads them (it runs simulation blocks itself)."""
    if int(n_jobs) >= 2:  # more workers than steps: every step is a worker's first, none is left here
        # not the λ scan: it is the workers' (only some searches reach it, late in a run, and its
        # compilation here delayed the command's search by 1.7 s of CPU on a first run)
        _walk([step for step in warm_up_steps(methods)[int(n_jobs) - 1:] if step[0] != "scan"])


def _await_workers():
    """Wait for :func:`start_workers` to finish, so that one pool serves the run."""
    if _WARMING is not None:
        _WARMING.join()


def warm_up_steps(methods):
    """The steps of a worker's warm-up: the method of ``methods`` (but the last) whose kernels take
    longest to compile, the last method (the case's search method, see :func:`warm_up_order`), the
    simulator's kernels, the λ scan of Spencer and Morgenstern-Price when the search method is one
    of them, then the other methods.

    Step 1 (``slipfield run``'s own process with ``--jobs 2``, :func:`warm_here`; worker 1 with
    more jobs) starts at the search method's step: on a first run that kernel compiles while worker
    0 compiles the longest one, and the command, which needs the search method first, has it
    without a third compiling process on 2 cores (levee demo, cold, 3 pairs: 16.5-16.8 s against
    16.9-17.6 s when the command compiled it beside both workers; warm unchanged).

    Returns
    -------
    list of (str, tuple)
        ``("method", (name,))``, ``("simulator", ())`` or ``("scan", ())``.
    """
    from ..methods.compiled import uses_scan

    methods = list(dict.fromkeys(methods))
    head, tail = methods[:-1], methods[-1:]
    head = sorted(head, key=_compile_rank)  # stable: methods of equal rank keep their order

    # the λ scan only when the search method may run it (in its search and its simulations): `run`
    # evaluates the other methods on a worker (submit_to_worker), which compiles it there only if
    # their bank reaches it (the levee demo's never does: 1.7 s of CPU on a first run)
    scan = [("scan", ())] if uses_scan(tail) else []
    # the longest compilation, the search method (the command's first need), the simulator's kernels
    # (every run needs them), the λ scan (only some searches reach it), then the others
    return ([("method", (m,)) for m in head[:1] + tail] + [("simulator", ())] + scan
            + [("method", (m,)) for m in head[1:]])


def _compile_rank(method) -> int:
    """Where ``method``'s own kernels come in :data:`slope.methods.compiled.KERNEL_GROUPS` (longest
    compilation first; its λ scan is a step of its own); methods with none, or unknown, come last."""
    from ..methods.compiled import KERNEL_GROUPS, kernel_groups

    return min((KERNEL_GROUPS.index(g) for g in kernel_groups(method) if g != "lam-scan"),
               default=len(KERNEL_GROUPS))


def _warm_worker(parent=None, methods=(), k=0):
    """In a worker: import the simulator and load its compiled kernels (tiny calls).

    The steps of :func:`warm_up_steps` from step ``k`` round (worker k of the pool): the methods'
    kernels, and the simulator's: the strength map, Bishop, and the dynamic-programming kernel of
    the per-realisation search and the rigid-block rule of its paths (each under its compile lock:
    without this, every worker compiled them at its first searched realisation). The worker also
    starts watching ``parent`` (it ends if the run is killed during the search, before any task
    reached it).
    """
    if parent is not None:
        _watch_parent(parent)
    steps = warm_up_steps(methods)
    k = int(k) % len(steps)
    _walk(steps[k:] + steps[:k])
    return os.getpid()


def _walk(steps):
    """Take the warm-up ``steps`` (of :func:`warm_up_steps`) in order, in this process.

    A step reaching a kernel that another process is compiling ends there (``skipping_busy``):
    this process goes on with the next step instead of waiting idle for the lock, and its first
    real call of that kernel loads it. On a first run of the levee demo the worker, done with
    Morgenstern-Price, waited about 1.4 s for the command's kernels before it compiled the λ scan.
    """
    from slipfield.fields import marginals  # noqa: F401
    from slipfield.fields.generators import circulant  # noqa: F401

    from ..methods.compiled import CompilingElsewhere, skipping_busy

    with skipping_busy():
        for kind, args in steps:
            try:
                if kind == "method":
                    from ..methods.compiled import warm_up

                    warm_up(args, scan=False)
                elif kind == "scan":
                    from ..methods.compiled import warm_up_scan

                    warm_up_scan()
                else:
                    _warm_simulator()
            except CompilingElsewhere:
                continue


def _warm_simulator():
    from ..search.upper_bound import warm_up as warm_rigid_blocks
    from . import fused

    _warm_dynamic_programming()
    warm_rigid_blocks()  # the rule for free paths of the same search (slope.search.path_acceptance)
    fused.warm_up()  # last: it also calls Bishop's kernel, which the search method's step may be compiling


def _warm_dynamic_programming():
    """Compile (or load) the dynamic-programming kernel of the per-realisation search with tiny
    inputs of the types :func:`slope.search.dynamic_programming.least_path` passes (its
    ``tan_phi`` is a read-only broadcast view, a type of its own for numba)."""
    import numpy as np

    from ..methods.compiled import first_call
    from ..search.dynamic_programming import _dp

    shape = (1, 2, 2)
    tp = np.ascontiguousarray(np.broadcast_to(np.zeros(shape), shape), dtype=float)
    arr = [np.zeros(shape) for _ in range(6)]
    with first_call(_dp):
        _dp(arr[0], arr[1], tp, arr[2], arr[3], arr[4], np.zeros(shape, np.bool_), 1.0, 0.0,
            np.zeros(1, np.bool_), np.zeros(2, np.bool_))


def stop_workers(*, wait: bool = True) -> int:
    """End the local worker pool at once, when the command has no more work for it.

    A command that is about to exit calls this after its outputs are
    written: the workers are idle, so they are ended with SIGKILL instead of
    each tearing down its interpreter (modules, numba, matplotlib, the run's
    unpickled results) while the command waits for them at exit -- about a
    second at the end of every run on 2 cores. Nothing of theirs is lost:
    results come back with each task, and the files they read are the
    command's (:func:`_ship`). Later calls start a new pool. Returns the
    number of workers ended (0 without a pool). ``wait=False``: a command that failed (e.g. its
    case checks, which run while the pool warms up) ends the pool at once, without waiting for the
    warm-up's kernels to compile; the warm-up then stops with its workers (it only saves time).
    """
    global _WARMING
    if wait:
        _await_workers()  # never while the warm-up still has tasks on the pool
    warming, _WARMING = _WARMING, None
    ended = _end_pool()
    while warming is not None and warming.is_alive():  # wait=False: its pool may start after the first kill
        warming.join(timeout=0.1)
        ended += _end_pool()
    return ended


def _end_pool() -> int:
    """Kill and reap the workers of joblib's reusable executor; how many there were."""
    try:
        from joblib.externals.loky import reusable_executor
    except ImportError:  # pragma: no cover - joblib without loky: the normal exit ends the pool
        return 0
    executor = getattr(reusable_executor, "_executor", None)
    if executor is None:
        return 0
    workers = list((getattr(executor, "_processes", None) or {}).values())
    executor.shutdown(wait=True, kill_workers=True)
    for p in workers:  # reaped: no zombies, and their CPU time is counted as this process's children's
        try:
            p.join(timeout=5.0)
        except Exception:  # noqa: BLE001 - a worker already reaped by the pool
            pass
    return len(workers)


def _ship(problem, *, pickler=None):
    """Write the prepared problem to a private temporary file; its path identifies it.

    ``pickler``: a :class:`pickle.Pickler` subclass writing it (e.g. one leaving out what the
    reader does not need); ``pickle.load`` reads the file either way.
    """
    import pickle
    import tempfile

    _unship_orphans(tempfile.gettempdir())
    folder = tempfile.mkdtemp(prefix=f"slipfield-problem-{os.getpid()}-")
    path = os.path.join(folder, "problem.pickle")
    with open(path, "wb") as fh:
        (pickler or pickle.Pickler)(fh, protocol=pickle.HIGHEST_PROTOCOL).dump(problem)
    return path


def _unship(path):
    """Remove the file :func:`_ship` wrote and its folder (nothing else)."""
    try:
        os.remove(path)
        os.rmdir(os.path.dirname(path))
    except OSError:
        pass


def _unship_orphans(tmp):
    """Remove the shipped problems of runs that were killed (``kill -9`` skips :func:`_unship`).

    Only folders named by :func:`_ship` (``slipfield-problem-<pid>-*``) whose
    process is gone, and only the one file ``_ship`` writes in them.
    """
    import re

    try:
        names = os.listdir(tmp)
    except OSError:
        return
    for name in names:
        m = re.fullmatch(r"slipfield-problem-(\d+)-[A-Za-z0-9_]+", name)
        if not m or _pid_alive(int(m.group(1))):
            continue
        _unship(os.path.join(tmp, name, "problem.pickle"))


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # alive, but another user's
        return True
    return True
