"""The figures of a run drawn in one process against a pool of worker processes, side by side (issue 13, 17).

The demo case is analysed once (invented scenario; ``--realisations``), the
worker pool started and warmed as ``slipfield run`` does, then the figures
(``slope.report.render.render_figures``) are drawn serially and with
``--jobs`` workers, alternately, ``--repeat`` times. Printed: wall time of
each (min and max, so the spread caused by other load on the machine shows),
the ratio of the minima, the CPU time of this process, the peak resident
memory of this process and of the pool's workers, the machine's load, and
whether both ways wrote the same files byte for byte.

Usage: python scripts/bench_figures.py [--case cut_residual_soil] [--realisations 200] [--jobs 2] [--repeat 2]
"""
import argparse
import hashlib
import os
import resource
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _digests(folder):
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(Path(folder).iterdir())}


def _children_peak_kib():
    """Peak resident memory (VmHWM, KiB) of each live child process of this one (the pool's workers)."""
    me, out = str(os.getpid()), {}
    for d in Path("/proc").iterdir():
        if not d.name.isdigit():
            continue
        try:
            status = (d / "status").read_text()
        except OSError:
            continue
        fields = dict(line.split(":", 1) for line in status.splitlines() if ":" in line)
        if fields.get("PPid", "").strip() == me and "VmHWM" in fields:
            out[int(d.name)] = int(fields["VmHWM"].split()[0])
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--case", default="cut_residual_soil")
    ap.add_argument("--realisations", type=int, default=200)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--repeat", type=int, default=2)
    a = ap.parse_args(argv)

    from slipfield.slope.commands.run import analyse_case
    from slipfield.slope.report.render import render_figures
    from slipfield.slope.simulate.executors import _await_workers, start_workers

    start_workers(a.jobs)
    t = time.perf_counter()
    case, res = analyse_case(ROOT / "cases" / f"{a.case}.toml", realisations=a.realisations, jobs=a.jobs)
    print(f"{a.case}: analysed with {a.realisations} realisations in {time.perf_counter() - t:.1f} s")
    _await_workers()

    tmp = Path(tempfile.mkdtemp(prefix="bench-figures-"))
    times = {1: [], a.jobs: []}
    cpu = {1: [], a.jobs: []}
    try:
        for r in range(a.repeat):
            for jobs in (1, a.jobs):
                folder = tmp / f"jobs{jobs}-{r}"
                c0, t0 = time.process_time(), time.perf_counter()
                drawn = render_figures(case, res, folder, ("png", "svg"), n_jobs=jobs)
                times[jobs].append(time.perf_counter() - t0)
                cpu[jobs].append(time.process_time() - c0)
        n_fig = sum(d.saved for d in drawn)
        same = all(_digests(tmp / f"jobs1-{r}") == _digests(tmp / f"jobs{a.jobs}-{r}") for r in range(a.repeat))
        print(f"{n_fig} figures (PNG + SVG each), {a.repeat} repeats, load average {os.getloadavg()[0]:.1f} "
              f"on {os.cpu_count()} cores")
        for jobs in (1, a.jobs):
            print(f"  --jobs {jobs}: wall {min(times[jobs]):6.2f} .. {max(times[jobs]):6.2f} s, "
                  f"CPU of this process {min(cpu[jobs]):6.2f} s")
        print(f"  serial / parallel (minima): {min(times[1]) / min(times[a.jobs]):.2f}x")
        print(f"  same files byte for byte: {same}")
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        workers = _children_peak_kib()
        print(f"  peak RSS: this process {peak:.0f} MiB; workers "
              + (", ".join(f"{v / 1024:.0f} MiB" for v in workers.values()) or "none alive"))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
