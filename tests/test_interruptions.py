"""Interruptions and exit codes (issue 11 §1b, §4).

Ctrl-C exits 130 and says how to continue; pool workers end when their
parent is killed; a dask scheduler that accepts a connection but never
answers, or dies mid-run, ends the run with exit 2 and keeps the finished
blocks. Processes are observed through Linux's /proc (no wall-time
assertions: only bounded waits, generous for a loaded 2-core machine).
"""
from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pytest

from slipfield.slope.cli import main

SMALL = str(Path(__file__).resolve().parent / "cases" / "small_cut.toml")
linux = pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads /proc (Linux)")


def _cli(*args):
    return [sys.executable, "-m", "slipfield.slope.cli", *args]


def _children(pid: int) -> list[int]:
    out = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                stat = (d / "stat").read_text()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == pid:
                out.append(int(d.name))
    return out


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state not in ("Z", "X")  # a zombie has ended; only its exit status waits to be read


def _shipped(pid: int) -> list[str]:
    return [p for p in os.listdir(tempfile.gettempdir()) if p.startswith(f"slipfield-problem-{pid}-")]


def _wait(cond, bound: float) -> bool:
    end = time.monotonic() + bound
    while time.monotonic() < end:
        if cond():
            return True
        time.sleep(0.2)
    return cond()


def _start_long_run(tmp_path, jobs="2"):
    out = tmp_path / "out"
    proc = subprocess.Popen(_cli("simulate", SMALL, "--out", str(out), "--realisations", "100000", "--batch", "10",
                                 "--jobs", jobs, "--quiet"),
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True)
    # the run is under way once the first block is stored
    assert _wait(lambda: (out / "store" / "block_000000.npz").exists() or proc.poll() is not None, 240), \
        "the run did not start"
    assert proc.poll() is None, proc.communicate()
    return proc, out


@linux
def test_pool_workers_end_when_their_parent_is_killed(tmp_path):
    proc, _ = _start_long_run(tmp_path)
    workers = _children(proc.pid)
    assert workers
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait(timeout=60)
    assert _wait(lambda: not any(_alive(w) for w in workers), 60), \
        [open(f"/proc/{w}/cmdline").read() for w in workers if _alive(w)]
    # the problem the killed run shipped to its workers is removed by the next run that ships one
    from slipfield.slope.simulate.executors import _unship_orphans

    assert _shipped(proc.pid)  # kill -9 ran no clean-up
    _unship_orphans(tempfile.gettempdir())
    assert _shipped(proc.pid) == []


@linux
def test_ctrl_c_exits_130_says_how_to_continue_and_leaks_nothing(tmp_path):
    proc, out = _start_long_run(tmp_path)
    workers = _children(proc.pid)
    os.killpg(proc.pid, signal.SIGINT)  # what Ctrl-C in a terminal does: the whole foreground group
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 130, err
    assert "--resume" in err
    for bad in ("Traceback", "leaked", "resource_tracker", "Warning"):
        assert bad not in err, err
    assert _wait(lambda: not any(_alive(w) for w in workers), 60)
    assert _shipped(proc.pid) == []  # an interrupted run removes what it shipped to its workers
    # the blocks written before the interruption are intact and continue the run
    assert main(["simulate", SMALL, "--out", str(out), "--realisations", "30", "--quiet", "--resume"]) == 0


def test_version_is_the_installed_distributions(capsys):
    from importlib.metadata import version

    try:  # argparse's version action exits 0; main returns that code
        rc = main(["--version"])
    except SystemExit as stop:
        rc = stop.code
    assert rc == 0
    assert capsys.readouterr().out.strip() == f"slipfield {version('slipfield')}"


def test_a_scheduler_that_accepts_but_never_answers_ends_with_exit_2(tmp_path):
    pytest.importorskip("dask.distributed")
    # a listening socket on loopback that never reads or writes: the TCP handshake completes (backlog)
    srv = socket.socket()
    srv.bind(("127.0.0.1", 0))
    srv.listen(8)
    try:
        out = tmp_path / "out"
        proc = subprocess.run(_cli("simulate", SMALL, "--out", str(out), "--realisations", "3", "--quiet",
                                   "--scheduler", f"tcp://127.0.0.1:{srv.getsockname()[1]}"),
                              capture_output=True, text=True, timeout=120)
    finally:
        srv.close()
    assert proc.returncode == 2, proc.stderr
    assert "--scheduler" in proc.stderr and "Traceback" not in proc.stderr
    assert not out.exists()  # refused before anything was written


class _Future:
    def __init__(self, fn, args, lost):
        self.fn, self.args, self.lost = fn, args, lost

    def result(self, timeout=None):
        if self.lost:
            from distributed.comm.core import CommClosedError

            raise CommClosedError("in <TCP (closed) ConnectionPool.gather local=tcp://127.0.0.1:5 remote=...>")
        return self.fn(*self.args)


class _DyingScheduler:
    """Stands in for a dask Client whose scheduler dies after ``n_ok`` tasks."""

    status = "running"

    def __init__(self, n_ok):
        self.n_ok = n_ok

    def map(self, fn, *iterables, pure=True):
        return [_Future(fn, args, i >= self.n_ok) for i, args in enumerate(zip(*iterables))]

    def cancel(self, futures):
        pass

    def close(self):
        pass


def test_a_scheduler_dying_mid_run_exits_2_keeps_blocks_and_resume_continues_locally(tmp_path, capsys,
                                                                                      monkeypatch):
    pytest.importorskip("dask.distributed")
    import slipfield.slope.simulate as sim

    monkeypatch.setattr(sim, "connect_scheduler", lambda address, **kw: _DyingScheduler(n_ok=2))
    out = tmp_path / "out"
    argv = ["simulate", SMALL, "--out", str(out), "--realisations", "150", "--batch", "50", "--quiet"]
    assert main(argv + ["--scheduler", "tcp://127.0.0.1:5"]) == 2
    err = capsys.readouterr().err
    assert "--resume" in err and "without --scheduler" in err and "Traceback" not in err
    assert (out / "store" / "block_000000.npz").exists()  # the first 100 realisations are kept
    monkeypatch.undo()
    assert main(argv + ["--resume"]) == 0
    resumed = np.loadtxt(out / "fs_realisations.csv", delimiter=",", skiprows=1, usecols=1)
    fresh = tmp_path / "fresh"
    assert main(["simulate", SMALL, "--out", str(fresh), "--realisations", "150", "--quiet"]) == 0
    np.testing.assert_array_equal(resumed, np.loadtxt(fresh / "fs_realisations.csv", delimiter=",", skiprows=1,
                                                      usecols=1))


def _no_worker_left():
    from joblib.externals.loky import reusable_executor

    from slipfield.slope.simulate import executors

    assert executors._WARMING is None
    executor = getattr(reusable_executor, "_executor", None)
    pids = [p.pid for p in (getattr(executor, "_processes", None) or {}).values()] if executor else []
    assert not any(_alive(p) for p in pids)
    workers = [p for p in _children(os.getpid()) if "LokyProcess" in Path(f"/proc/{p}/cmdline").read_text()]
    assert not any(_alive(p) for p in workers)


@linux
@pytest.mark.parametrize("command", ["run", "simulate"])
def test_command_refused_before_its_checks_ends_the_pool_started_from_the_case_file(command, tmp_path, capsys,
                                                                                   monkeypatch):
    # `slipfield run` and `simulate` start their pool from the file's simulation.jobs before reading the
    # case (their imports take a second or more): a case refused when it is read ends that pool too
    # (exit 2, nothing written).
    from slipfield.slope.simulate import executors

    started = []
    real_start = executors.start_workers
    monkeypatch.setattr(executors, "start_workers", lambda n, **kw: (started.append(n), real_start(n, **kw)))
    text = Path(SMALL).read_text()
    bad = tmp_path / "bad.toml"
    assert "[simulation]\nrealisations = 40" in text
    bad.write_text(text.replace("[simulation]\nrealisations = 40",
                                "[simulation]\njobs = 2\nrealisations = 40\nno_such_key = 1"))
    out = tmp_path / "out"
    assert main([command, str(bad), "--out", str(out), "--quiet"]) == 2
    assert "no_such_key" in capsys.readouterr().err
    assert started == [2]  # the pool was started (from the file) before the case was refused
    assert not out.exists()
    _no_worker_left()


@linux
def test_run_whose_case_checks_fail_ends_its_warming_pool_at_once(tmp_path, capsys):
    # The pool starts before the case's checks (they run the search; the workers compile meanwhile): a
    # case refused there must end with exit 2 and its message, nothing written, and no worker left.
    text = Path(SMALL).read_text()
    bad = tmp_path / "bad.toml"
    # a normal marginal with cov 0.9 draws negative strengths by the thousand: refused by the checks
    assert 'property = "c"\ncov = 0.4' in text
    bad.write_text(text.replace('property = "c"\ncov = 0.4', 'property = "c"\ndistribution = "normal"\ncov = 0.9'))
    out = tmp_path / "out"
    assert main(["run", str(bad), "--out", str(out), "--jobs", "2", "--quiet"]) == 2
    assert "negative" in capsys.readouterr().err
    assert not out.exists()
    _no_worker_left()

