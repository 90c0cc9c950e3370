"""The ``slipfield fields`` command line: variance-reduction tables and
realisations written to NPZ, VTU or XDMF.

``add_fields_parser(subparsers)`` adds the ``fields`` command (with ``vrf``
and ``sample``) to a parent parser; ``main(argv)`` runs it standalone
(``python -m slipfield.fields.cli vrf ...``) and maps :class:`InputError` to exit 2.
"""
from __future__ import annotations

import argparse
import csv
import io as _io
import json
import math
import sys
from pathlib import Path

import numpy as np

from .errors import InputError
from .generators import generator_names, make_generator
from .grid import RegularGrid
from .marginals import MARGINAL_NAMES
from .models import MODEL_NAMES, get_model

__all__ = ["add_fields_parser", "build_parser", "main", "run_vrf", "run_sample"]


# ---------------------------------------------------------------------------
# argument parsing helpers (each names its option in the error)
def _positive(value, option):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{option} must be a number, got {value!r}") from None
    if not (math.isfinite(v) and v > 0):
        raise InputError(f"{option} must be > 0 (m), got {value!r}; give a positive scale of fluctuation/length")
    return v


def _float_list(text, option):
    try:
        vals = [float(t) for t in str(text).split(",") if t.strip()]
    except ValueError:
        raise InputError(f"{option} must be a comma-separated list of numbers, got {text!r}") from None
    if not vals:
        raise InputError(f"{option} is empty; give e.g. {option} 0.5,1,2")
    return vals


def _pair(text, option, cast):
    parts = str(text).lower().split("x")
    try:
        if len(parts) != 2:
            raise ValueError
        a, b = cast(parts[0]), cast(parts[1])
    except ValueError:
        raise InputError(f"{option} must be of the form AxB (e.g. 256x64), got {text!r}") from None
    return a, b


def _model_kwargs(args):
    kw = {}
    if getattr(args, "nu", None) is not None:
        kw["nu"] = args.nu
    return kw


def _theta_pair(args):
    th = args.theta_h if args.theta_h is not None else args.theta
    if th is None:
        raise InputError("give --theta (isotropic) or --theta-h/--theta-v (m)")
    th = _positive(th, "--theta-h" if args.theta_h is not None else "--theta")
    tv = args.theta_v if args.theta_v is not None else th
    tv = _positive(tv, "--theta-v")
    return th, tv


# ---------------------------------------------------------------------------
# vrf
def run_vrf(args) -> int:
    """Print the variance-reduction table γ for each model and length."""
    models = [m.strip() for m in str(args.model).split(",") if m.strip()]
    if not models:
        raise InputError("--model is empty; give e.g. --model exponential,gaussian")
    th, tv = _theta_pair(args)
    if args.rect is not None:
        rects = [_pair(r, "--rect", float) for r in str(args.rect).split(",")]
        for a, b in rects:
            _positive(a, "--rect"), _positive(b, "--rect")
        rows = [f"{a:g}x{b:g}" for a, b in rects]
        X = np.array([a for a, _ in rects])
        Y = np.array([b for _, b in rects])
        label = "rectangle (m)"
    else:
        lengths = _float_list(args.lengths, "--lengths")
        for v in lengths:
            if not (math.isfinite(v) and v >= 0):
                raise InputError(f"--lengths must be >= 0 (m), got {v!r}")
        rows = [f"{v:g}" for v in lengths]
        label = "length (m)"
    from .averaging import variance_function, variance_function_2d

    table = {}
    for name in models:
        model = get_model(name, theta_h=th, theta_v=tv, angle=args.angle, **_model_kwargs(args))
        if args.rect is not None:
            g = variance_function_2d(model, X, Y)
        else:
            g = variance_function(model, np.array(lengths))
        table[name] = [float(x) for x in np.atleast_1d(g)]
    out = sys.stdout
    if args.json:
        doc = {"theta_h": th, "theta_v": tv, "angle": args.angle,
               "kind": "rectangle" if args.rect is not None else "length",
               "rows": rows, "models": models, "gamma": table}
        if args.rect is None:
            doc["lengths"] = lengths
        else:
            doc["rectangles"] = [[a, b] for a, b in rects]
        json.dump(doc, out, indent=2)
        out.write("\n")
    elif args.csv:
        buf = _io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow([label] + models)
        for i, r in enumerate(rows):
            w.writerow([r] + [f"{table[m][i]:.6g}" for m in models])
        out.write(buf.getvalue())
    else:
        out.write(f"variance reduction factor gamma (theta_h = {th:g} m, theta_v = {tv:g} m)\n")
        widths = [max(len(label), *(len(r) for r in rows))] + [max(len(m), 8) for m in models]
        out.write("  ".join(h.rjust(w) for h, w in zip([label] + models, widths)) + "\n")
        for i, r in enumerate(rows):
            cells = [r] + [f"{table[m][i]:.6f}" for m in models]
            out.write("  ".join(c.rjust(w) for c, w in zip(cells, widths)) + "\n")
    return 0


# ---------------------------------------------------------------------------
# sample
def _marginal(args):
    if args.marginal is None:
        if any(v is not None for v in (args.mean, args.cov, args.lower, args.upper, args.mode)):
            raise InputError("--mean/--cov/--lower/--upper/--mode need --marginal (e.g. --marginal lognormal)")
        return None
    from .marginals import make_marginal

    if args.cov is not None and not (args.cov >= 0):
        raise InputError(f"--cov must be >= 0 (coefficient of variation), got {args.cov!r}")
    return make_marginal(args.marginal, mean=args.mean, cov=args.cov,
                         lower=args.lower, upper=args.upper, mode=args.mode)


def _write_blocks(out, ext, n, blocks, *, grid=None, mesh=None, seed=0):
    from . import io as fio

    out.parent.mkdir(parents=True, exist_ok=True)
    if ext == ".npz":
        with fio.NpzSeriesWriter(out, grid, n, extra={"seed": np.int64(seed)}) as w:
            for _, z in blocks:
                w.write(z)
    elif ext == ".xdmf":
        with fio.XdmfSeriesWriter(out, mesh, centre="cell") as w:
            for idx, z in blocks:
                w.write(z, idx)
    else:
        # VTU holds every realisation in one file, so it is assembled in memory
        fio.write_vtu(out, mesh, np.concatenate([z for _, z in blocks]), centre="cell")


def run_sample(args) -> int:
    """Generate realisations on a regular grid (or mesh cell centres) and write them."""
    from . import io as fio

    th, tv = _theta_pair(args)
    if args.n < 1:
        raise InputError(f"--n must be >= 1 realisations, got {args.n}")
    if args.batch < 1:
        raise InputError(f"--batch must be >= 1, got {args.batch}")
    out = Path(args.out)
    ext = out.suffix.lower()
    if ext not in (".npz", ".vtu", ".xdmf"):
        raise InputError(f"--out {args.out!r}: use a .npz, .vtu or .xdmf file name")
    from .outputs import check_new_file

    check_new_file(out, "--out")  # up front: an existing file is never replaced
    if (args.grid is None) == (args.mesh is None):
        raise InputError("give exactly one of --grid NXxNY (regular grid) or --mesh FILE")
    model = get_model(args.model, theta_h=th, theta_v=tv, angle=args.angle, **_model_kwargs(args))
    marg = _marginal(args)
    grid = mesh = None
    if args.mesh is not None:
        if ext == ".npz":
            raise InputError("--out: a --mesh run writes .vtu or .xdmf (NPZ holds regular grids)")
        if args.method == "fft":
            raise InputError("--method fft needs a regular --grid; use spectral (or cholesky/kl "
                             "for small meshes) with --mesh")
        mesh = fio.read_mesh(args.mesh)
        gen = make_generator(args.method, model, points=fio.cell_centres(mesh))
        shape_note = f"{mesh.n_cells} mesh cells"
    else:
        nx, ny = _pair(args.grid, "--grid", int)
        if nx < 1 or ny < 1:
            raise InputError(f"--grid needs at least 1x1 cells, got {args.grid!r}")
        if args.spacing is not None:
            dx = dy = _positive(args.spacing, "--spacing")
        else:
            if args.dx is None or args.dy is None:
                raise InputError("give --spacing (square cells) or both --dx and --dy (m)")
            dx, dy = _positive(args.dx, "--dx"), _positive(args.dy, "--dy")
        grid = RegularGrid(args.x0, args.y0, nx, ny, dx, dy)
        gen = make_generator(args.method, model, grid=grid)
        if ext != ".npz":
            mesh = fio.grid_mesh(grid)
        shape_note = f"{nx}x{ny} cells"

    def blocks():
        for start in range(0, args.n, args.batch):
            idx = np.arange(start, min(args.n, start + args.batch))
            z = gen.sample(args.seed, idx)
            if marg is not None:
                z = marg.from_standard_normal(z)
            yield idx, np.asarray(z).reshape(len(idx), -1)

    _write_blocks(out, ext, args.n, blocks(), grid=grid, mesh=mesh, seed=args.seed)
    if not args.quiet:
        print(f"wrote {args.n} realisations ({shape_note}, {args.method}) to {out}")
    return 0


# ---------------------------------------------------------------------------
# parsers
_MODEL_HELP = "correlation model: " + ", ".join(MODEL_NAMES) + " (matern with --nu)"


def whole_number(lo):
    """argparse type: a whole number >= lo (refused at parse time, exit 2); the slipfield
    command line uses it too."""
    def parse(text):
        try:
            v = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a whole number; give one >= {lo}") from None
        if v < lo:
            raise argparse.ArgumentTypeError(f"{v} is too small; give a whole number >= {lo}")
        return v
    parse.__name__ = f"whole number >= {lo}"
    return parse


def _add_common(p, multi):
    p.add_argument("--model", required=True,
                   help=_MODEL_HELP + (" ; a comma list gives one column each" if multi else ""))
    p.add_argument("--theta", type=float, help="isotropic scale of fluctuation θ (m)")
    p.add_argument("--theta-h", type=float, help="horizontal scale of fluctuation θh (m)")
    p.add_argument("--theta-v", type=float, help="vertical scale of fluctuation θv (m)")
    p.add_argument("--angle", type=float, default=0.0,
                   help="rotation of θh from +x, degrees counter-clockwise (default 0)")
    p.add_argument("--nu", type=float, help="Matérn smoothness ν (matern only)")


def _fill(fp):
    sub = fp.add_subparsers(dest="fields_command", metavar="{vrf,sample,fit}")
    sub.required = True
    v = sub.add_parser("vrf", help="variance-reduction table γ(T) or γ(X, Y)",
                       description="Print the variance reduction factor γ of local averages "
                                   "for averaging lengths (1D, along θh) or rectangles (2D).")
    _add_common(v, True)
    v.add_argument("--lengths", default="0.5,1,2,4,10",
                   help="comma list of averaging lengths T (m), default 0.5,1,2,4,10")
    v.add_argument("--rect", help="rectangle(s) XxY (m), comma list, e.g. 20x2,40x4")
    fmt = v.add_mutually_exclusive_group()
    fmt.add_argument("--json", action="store_true", help="print JSON")
    fmt.add_argument("--csv", action="store_true", help="print CSV")
    v.set_defaults(func=run_vrf)

    s = sub.add_parser("sample", help="write realisations on a regular grid",
                       description="Generate random-field realisations on a regular grid and "
                                   "write them to .npz, .vtu or .xdmf (batches streamed).")
    _add_common(s, False)
    s.add_argument("--grid", help="cells NXxNY, e.g. 256x64")
    s.add_argument("--mesh", help="instead of --grid: a 2D mesh file (any meshio format); "
                                  "values at its cell centres, written to .vtu/.xdmf")
    s.add_argument("--spacing", type=float, help="square cell size (m)")
    s.add_argument("--dx", type=float, help="cell size along x (m)")
    s.add_argument("--dy", type=float, help="cell size along y (m)")
    s.add_argument("--x0", type=float, default=0.0, help="grid lower-left x (m), default 0")
    s.add_argument("--y0", type=float, default=0.0, help="grid lower-left y (m), default 0")
    s.add_argument("--n", type=whole_number(1), default=1, help="number of realisations (default 1)")
    s.add_argument("--seed", type=whole_number(0), default=0, help="run seed (default 0)")
    s.add_argument("--method", default="fft", choices=generator_names(), help="generator (default fft)")
    s.add_argument("--marginal", choices=MARGINAL_NAMES, help="marginal distribution of the values")
    s.add_argument("--mean", type=float, help="marginal mean (property units)")
    s.add_argument("--cov", type=float, help="marginal coefficient of variation (>= 0)")
    s.add_argument("--lower", type=float, help="marginal lower bound (truncated-normal, beta, uniform)")
    s.add_argument("--upper", type=float, help="marginal upper bound (truncated-normal, beta, uniform)")
    s.add_argument("--mode", type=float, help="most likely value (triangular)")
    s.add_argument("--batch", type=whole_number(1), default=50,
                   help="realisations generated and written per block (default 50)")
    s.add_argument("--out", required=True, help="output file .npz, .vtu or .xdmf (a new file: an existing one is "
                   "never replaced)")
    s.add_argument("--quiet", action="store_true", help="no summary line")
    s.set_defaults(func=run_sample)
    from .fitcommand import add_fit_parser

    add_fit_parser(sub)
    return fp


def add_fields_parser(subparsers):
    """Add the ``fields`` command (``vrf``, ``sample``) to an argparse subparsers object."""
    fp = subparsers.add_parser("fields", help="random fields: variance reduction, realisations",
                               description="Random-field tools.")
    return _fill(fp)


def build_parser() -> argparse.ArgumentParser:
    """Standalone parser with the ``vrf`` and ``sample`` commands."""
    return _fill(argparse.ArgumentParser(prog="python -m slipfield.fields.cli",
                                         description="slipfield random-field tools"))


def main(argv=None) -> int:
    """Run the fields command line; InputError → one line on stderr, exit 2."""
    args = build_parser().parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
