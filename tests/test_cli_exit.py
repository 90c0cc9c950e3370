"""The command's fast exit (``slope.cli.exit_now``): what a normal exit does that matters still happens.

Checked against Python's own exit (documented behaviour of ``atexit`` and of
``sys.exit``): the exit status, exit handlers run once, buffered standard output
written, and a working non-daemon thread waited for.
"""
import subprocess
import sys
import textwrap
from pathlib import Path


def _python(code):
    return subprocess.run([sys.executable, "-c", textwrap.dedent(code)], capture_output=True, text=True, timeout=120)


def test_exit_now_runs_the_exit_handlers_flushes_and_keeps_the_status():
    r = _python("""
        import atexit, sys
        from slipfield.slope.cli import exit_now
        atexit.register(lambda: print("handler ran", flush=False))
        sys.stdout.write("buffered, no newline")
        exit_now(3)
        print("never reached")
    """)
    assert r.returncode == 3
    assert r.stdout.count("handler ran") == 1
    assert r.stdout.startswith("buffered, no newline") and "never reached" not in r.stdout


def test_exit_now_waits_for_a_working_thread_as_a_normal_exit_does():
    r = _python("""
        import threading, time
        from slipfield.slope.cli import exit_now
        def work():
            time.sleep(0.5)
            print("thread finished", flush=True)
        threading.Thread(target=work).start()
        exit_now(0)
    """)
    assert r.returncode == 0
    assert "thread finished" in r.stdout



def test_a_command_with_workers_closes_its_output_when_it_ends(tmp_path):
    # multiprocessing's exit handler joins the pool's (non-daemon) workers, which only end when the
    # pool is shut down -- by joblib's exit hook of the threading module, which os._exit skips. Unless
    # exit_now ends the pool first, the command waits for their 5-minute idle timeout after its last
    # line, holding its standard streams open. The timeout below only guards against that hang.
    case = Path(__file__).resolve().parents[1] / "cases" / "levee_soft_clay.toml"   # invented demo
    proc = subprocess.Popen([sys.executable, "-m", "slipfield.slope.cli", "simulate", str(case),
                             "--realisations", "40", "--jobs", "2", "--refine-search", "off", "--quiet",
                             "--out", str(tmp_path / "out")], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)
    try:
        out, err = proc.communicate(timeout=200)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.communicate()
        raise AssertionError("the command's output stayed open: its worker pool outlived it")
    assert proc.returncode == 0, err
    assert "40 realisations" in out


def test_a_worker_killed_under_a_command_is_reported_plainly(monkeypatch, capsys):
    # It was "internal error: TerminatedWorkerError ..." with a traceback and a request to report a bug;
    # a worker killed from outside (or by the out-of-memory killer) is neither the case's fault nor ours.
    from joblib.externals.loky.process_executor import TerminatedWorkerError

    from slipfield.slope import cli

    def killed(args):
        raise TerminatedWorkerError("A worker process managed by the executor was unexpectedly terminated.\n\n"
                                    "The exit codes of the workers are {SIGKILL(-9)}")

    monkeypatch.setattr(cli, "_cmd_simulate", killed)
    case = Path(__file__).resolve().parents[1] / "cases" / "levee_soft_clay.toml"
    assert cli.main(["simulate", str(case), "--out", "unused"]) == 1
    err = capsys.readouterr().err
    assert "internal error" not in err and "Traceback" not in err
    assert "a worker process ended before its task did (The exit codes of the workers are {SIGKILL(-9)})" in err
    assert "--resume" in err  # how to go on: the finished blocks are kept
