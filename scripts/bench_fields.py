"""Benchmark of the random-field generators, measured side by side in one run.

Scenario (issue 2): 256 × 64 grid of 0.5 m cells, exponential (Markov) model
θh = 20 m, θv = 2 m.  Prints the time per realisation of

* circulant embedding (``fft``) on the full grid,
* GSTools' randomisation method (``SRF``/``RandMeth``, default 1000 modes),
  called directly on the same grid,
* Cholesky on the largest grid it accepts by default (128 × 31 cells, the
  same spacing; the full grid would need a 16384² matrix),
* optionally ``slipfield fields sample ... --out x.npz`` end to end (process
  start-up, generation and writing included), if that command exists,

and the ratios against GSTools.  Targets: fft ≥ 200× GSTools; the command
line ≥ 100×.  Usage: ``python scripts/bench_fields.py [--n-fft 400]
[--n-gstools 5] [--workers 1]``.
"""
from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(__file__), os.pardir))

from slipfield.fields import RegularGrid, get_model, make_generator  # noqa: E402


def per_realisation(fn, n):
    """Wall time per realisation (s) of ``fn(n)`` after a warm-up call."""
    fn(min(n, 2))
    t0 = time.perf_counter()
    fn(n)
    return (time.perf_counter() - t0) / n


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n-fft", type=int, default=400)
    ap.add_argument("--n-gstools", type=int, default=5)
    ap.add_argument("--n-cholesky", type=int, default=400)
    ap.add_argument("--n-cli", type=int, default=200)
    ap.add_argument("--workers", type=int, default=1, help="threads for scipy.fft")
    args = ap.parse_args(argv)

    import gstools as gs

    model = get_model("exponential", theta_h=20.0, theta_v=2.0)
    grid = RegularGrid(0.0, 0.0, 256, 64, 0.5, 0.5)
    rows = []

    t0 = time.perf_counter()
    fft = make_generator("fft", model, grid=grid, workers=args.workers)
    fft_setup = time.perf_counter() - t0
    t_fft = per_realisation(lambda n: fft.sample(1, range(n)), args.n_fft)
    rows.append(("fft (circulant embedding)", "256x64", t_fft, fft_setup,
                 f"torus {fft.info['embedding']}, clipped {fft.info['clipped_fraction']:.1e}"))

    srf = gs.SRF(model.to_gstools(), generator="RandMeth")
    t_gs = per_realisation(
        lambda n: [srf.structured((grid.x, grid.y), seed=s, store=False) for s in range(n)],
        args.n_gstools)
    rows.append(("gstools SRF RandMeth (1000 modes)", "256x64", t_gs, 0.0, "direct call"))

    small = RegularGrid(0.0, 0.0, 128, 31, 0.5, 0.5)
    t0 = time.perf_counter()
    chol = make_generator("cholesky", model, grid=small)
    chol_setup = time.perf_counter() - t0
    t_chol = per_realisation(lambda n: chol.sample(1, range(n)), args.n_cholesky)
    rows.append(("cholesky", "128x31", t_chol, chol_setup,
                 f"largest under max_points=4000; jitter {chol.info['jitter']:.0e}"))
    fft_small = make_generator("fft", model, grid=small, workers=args.workers)
    t_fft_small = per_realisation(lambda n: fft_small.sample(1, range(n)), args.n_fft)
    rows.append(("fft on the Cholesky grid", "128x31", t_fft_small, 0.0, ""))

    cli = shutil.which("slipfield")
    cli_note = None
    if cli is not None:
        probe = subprocess.run([cli, "fields", "sample", "--help"], capture_output=True,
                               text=True)
        if probe.returncode != 0:
            cli_note = "slipfield fields sample is not available: " + (
                probe.stderr.strip().splitlines() or ["?"])[-1]
        else:
            with tempfile.TemporaryDirectory() as tmp:
                out = os.path.join(tmp, "f.npz")
                cmd = [cli, "fields", "sample", "--model", "exponential", "--theta-h", "20",
                       "--theta-v", "2", "--grid", "256x64", "--spacing", "0.5",
                       "--n", str(args.n_cli), "--seed", "1", "--method", "fft", "--out", out]
                t0 = time.perf_counter()
                res = subprocess.run(cmd, capture_output=True, text=True)
                t_cli = (time.perf_counter() - t0) / args.n_cli
                if res.returncode != 0:
                    cli_note = "slipfield fields sample failed: " + res.stderr.strip()[-300:]
                else:
                    with np.load(out) as f:
                        shape = f["values"].shape
                    rows.append(("slipfield fields sample -> NPZ", "256x64", t_cli, 0.0,
                                 f"end to end, n={args.n_cli}, values {shape}"))
    else:
        cli_note = "slipfield command not installed"

    print(f"{'method':36s} {'grid':>7s} {'ms/real.':>10s} {'setup s':>8s} "
          f"{'gstools/this':>13s}  note")
    for name, g, t, setup, note in rows:
        print(f"{name:36s} {g:>7s} {1e3 * t:10.3f} {setup:8.3f} {t_gs / t:13.1f}  {note}")
    print(f"\ntarget fft >= 200x gstools: {'met' if t_gs / t_fft >= 200 else 'NOT met'} "
          f"({t_gs / t_fft:.0f}x)")
    for name, g, t, *_ in rows:
        if name.startswith("slipfield"):
            print(f"target CLI >= 100x gstools: {'met' if t_gs / t >= 100 else 'NOT met'} "
                  f"({t_gs / t:.0f}x)")
    if cli_note:
        print(f"CLI not timed: {cli_note}")


if __name__ == "__main__":
    main()
