"""Memory of the per-realisation search's surfaces, measured side by side (issue 15).

The simulator keeps the vertices of the polylines the per-realisation search
found. It used to keep them in a fixed-size record for every realisation
(``refined_xy``: (columns + 32) vertices x 2 floats, 832 B a realisation on
the case-file settings); it now keeps one row per vertex for the searched
realisations only (``searched_vertices``). This script runs
``simulate`` on the levee demo (``cases/levee_soft_clay.toml``, invented),
undrained, with the case's per-realisation search, in a fresh process per
tree and size, and prints:

- the bytes of the result's per-realisation arrays, per realisation;
- the peak RSS of ``simulate`` alone (``VmHWM`` reset after set-up, as
  ``scripts/bench_speed.py`` measures it) at 1,000 and 4,000 realisations,
  and their ratio (flat in n: close to 1).

Usage: python scripts/bench_surface_memory.py [--before TREE] [--sizes 1000,4000]

``--before TREE``: another source tree with a ``.dev`` import shim (e.g. the
checkout of main before this change), measured beside this one.
"""
import argparse
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

_CHILD = r"""
import resource, sys
import numpy as np
from slipfield.slope.case.analyses import deterministic, random_problem
from slipfield.slope.case.build import load_case
from slipfield.slope.simulate import RefineSettings, simulate
from slipfield.slope.simulate.engine import prepare
case = load_case({case!r})
p = random_problem(case, deterministic(case), "undrained")
prepare(p)
refine = RefineSettings.from_case(case.simulation)
simulate(p, 200, 1, n_jobs=1, batch=100, refine=refine)  # kernels loaded, first batches done
with open('/proc/self/clear_refs', 'w') as fh:
    fh.write('5')  # resets the peak (VmHWM): what follows is the simulation alone
r = simulate(p, {n}, 1, n_jobs=1, batch=100, refine=refine)
hwm = [line for line in open('/proc/self/status') if line.startswith('VmHWM')][0].split()[1]
arrays = [v for v in vars(r).values() if isinstance(v, np.ndarray)] + list((r.flags or {{}}).values())
nbytes = sum(a.nbytes for a in arrays)
print(int(hwm) / 1024.0, nbytes / r.n, int(r.n_refined))
"""


def child(tree: Path, n: int):
    """(peak RSS of simulate in MB, result bytes per realisation, realisations lowered) in a fresh process."""
    env = dict(os.environ, PYTHONPATH=str(tree / ".dev"))
    code = _CHILD.format(case=str(ROOT / "cases" / "levee_soft_clay.toml"), n=n)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=str(tree))
    if out.returncode:
        raise SystemExit(f"{tree}: {out.stderr[-2000:]}")
    rss, per, refined = out.stdout.strip().splitlines()[-1].split()
    return float(rss), float(per), int(refined)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--before", help="another source tree (with its .dev shim) measured beside this one")
    ap.add_argument("--sizes", default="1000,4000", help="realisation counts (two)")
    a = ap.parse_args()
    sizes = [int(s) for s in a.sizes.split(",")]
    trees = [("this tree", ROOT)] + ([("before", Path(a.before).resolve())] if a.before else [])
    for name, tree in trees:
        got = [child(tree, n) for n in sizes]
        print(f"[{name}] levee undrained, per-realisation search on: result arrays "
              + ", ".join(f"{per:.0f} B/realisation at {n:,} ({ref} lowered)" for n, (_, per, ref) in zip(sizes, got))
              + "; simulate peak RSS " + ", ".join(f"{rss:.0f} MB at {n:,}" for n, (rss, _, _) in zip(sizes, got))
              + f" (ratio {got[-1][0] / got[0][0]:.2f})")


if __name__ == "__main__":
    main()
