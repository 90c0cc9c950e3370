"""The command's fast exit (``slope.cli.exit_now``): what a normal exit does that matters still happens.

Checked against Python's own exit (documented behaviour of ``atexit`` and of
``sys.exit``): the exit status, exit handlers run once, buffered standard output
written, and a working non-daemon thread waited for.
"""
import subprocess
import sys
import textwrap


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
