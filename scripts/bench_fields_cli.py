"""End-to-end timing of ``fields sample`` writing an NPZ against gstools'
randomisation method, side by side in one run (issue 2, speed).

Grid 256 x 64 cells of 0.5 m, exponential model θh = 20 m, θv = 2 m.
Prints seconds per realisation and the ratio (target >= 100x, issue 17):
end to end as a fresh ``slipfield fields sample`` process (interpreter
start and imports included, what a user waits for), and in process after a
warm-up (sampling and writing only).

    python scripts/bench_fields_cli.py [--n 200] [--n-gstools 5] [--repeat 3]
"""
import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from slipfield.fields import get_model  # noqa: E402
from slipfield.fields.cli import main  # noqa: E402


def main_bench():
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=200)
    ap.add_argument("--n-gstools", type=int, default=5)
    ap.add_argument("--repeat", type=int, default=3, help="end-to-end process runs")
    a = ap.parse_args()
    import gstools as gs

    nx, ny, d = 256, 64, 0.5
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "f.npz"
        argv = ["sample", "--model", "exponential", "--theta-h", "20", "--theta-v", "2",
                "--grid", f"{nx}x{ny}", "--spacing", str(d), "--n", str(a.n), "--seed", "1",
                "--method", "fft", "--quiet", "--out", str(out)]
        # end to end: a fresh process as a user runs it (interpreter start, imports, sampling, writing)
        t_proc = []
        for r in range(a.repeat):
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "slipfield.slope.cli", "fields"] + argv[:-1]
                           + [str(Path(tmp) / f"process_{r}.npz")], check=True)
            t_proc.append((time.perf_counter() - t0) / a.n)
        main(argv[:-1] + [str(Path(tmp) / "warm.npz")])  # imports, FFT plans
        t0 = time.perf_counter()
        assert main(argv) == 0
        t_cli = (time.perf_counter() - t0) / a.n
        size = out.stat().st_size

    model = get_model("exponential", theta_h=20.0, theta_v=2.0).to_gstools()
    x = d * (np.arange(nx) + 0.5)
    y = d * (np.arange(ny) + 0.5)
    srf = gs.SRF(model)  # default randomisation method and mode count
    srf.structured([x, y], seed=0)
    t0 = time.perf_counter()
    for k in range(a.n_gstools):
        srf.structured([x, y], seed=k + 1)
    t_gs = (time.perf_counter() - t0) / a.n_gstools

    print(f"grid {nx}x{ny} ({nx * ny} cells), exponential θh=20 m θv=2 m")
    print(f"fields sample --method fft -> NPZ ({a.n} realisations, {size / 1e6:.1f} MB): "
          f"{t_cli * 1e3:.3f} ms/realisation")
    print(f"gstools SRF randomisation (default modes, {a.n_gstools} realisations):   "
          f"{t_gs * 1e3:.3f} ms/realisation")
    print(f"slipfield fields sample as a process (start, imports, sampling, writing), {a.repeat} runs: "
          f"{min(t_proc) * 1e3:.3f} .. {max(t_proc) * 1e3:.3f} ms/realisation")
    print(f"ratio gstools / fields sample in process: {t_gs / t_cli:.0f}x")
    print(f"ratio gstools / fields sample end to end (process): {t_gs / max(t_proc):.0f}x .. {t_gs / min(t_proc):.0f}x "
          f"(target >= 100x: {'met' if t_gs / min(t_proc) >= 100 else 'NOT met'} at best, "
          f"{'met' if t_gs / max(t_proc) >= 100 else 'NOT met'} at worst)")


if __name__ == "__main__":
    main_bench()
