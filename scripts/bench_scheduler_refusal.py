"""How long an unreachable ``--scheduler`` takes to be refused (issue 11).

Moved here from two tests that asserted a wall time (tests never do). Prints,
side by side in one run, the time ``simulate`` takes to refuse a scheduler
address where nobody listens (a closed loopback port) against the timeout it
was given, through the library and through the CLI. Loopback only: nothing
leaves the machine.

Usage: python scripts/bench_scheduler_refusal.py
"""
import socket
import sys
import tempfile
import time
from pathlib import Path

CASE = str(Path(__file__).resolve().parents[1] / "cases" / "levee_soft_clay.toml")


def closed_port():
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    return port


def main():
    from slipfield.slope.cli import main as cli

    timeout = 2.0
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        rc = cli(["simulate", CASE, "--out", str(Path(tmp) / "s"), "--realisations", "5", "--quiet",
                  "--scheduler", f"tcp://127.0.0.1:{closed_port()}"])
        rows.append(("CLI simulate --scheduler (closed port)", time.perf_counter() - t0, rc))
    print(f"{'what':<45} {'refused after s':>16} {'exit':>5}")
    for what, dt, rc in rows:
        print(f"{what:<45} {dt:>16.2f} {rc:>5}")
    print(f"library default timeout {timeout:g} s is the budget a user waits per connection step; "
          "target: refusal within a few seconds (README)")


if __name__ == "__main__":
    sys.exit(main())
