"""The ``slipfield`` command line: a thin layer over the Python API.

Exit status: 0 success, 2 bad input (the message names the field and the
fix) or a dask scheduler that stopped answering, 130 interrupted (Ctrl-C),
143 terminated (SIGTERM), 1 an internal failure.
"""
from __future__ import annotations

import argparse
import contextlib
import json
import signal
import sys
import traceback
from concurrent.futures import BrokenExecutor

from slipfield.fields.cli import whole_number as _whole
from slipfield.fields.errors import InputError

__all__ = ["main", "console_main", "exit_now", "build_parser", "version"]


def version() -> str:
    """The installed distribution's version (``importlib.metadata``)."""
    from importlib.metadata import PackageNotFoundError
    from importlib.metadata import version as dist_version

    try:
        return dist_version("slipfield")
    except PackageNotFoundError:
        return "unknown (not installed)"


def _positive_number(text):
    """argparse type: a finite number > 0."""
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number; give a number > 0") from None
    if not (v > 0 and v != float("inf")):
        raise argparse.ArgumentTypeError(f"{text} is not a finite number > 0")
    return v


def _run_pool_early(args, *, methods: bool = True) -> bool:
    """Start the worker pool of ``slipfield run`` or ``simulate`` before the command imports its analyses.

    Importing them takes about 1.3 s of one core, while the workers' own start-up (interpreter,
    imports, compiled kernels) takes about 1 s on each of the others; started here they overlap
    (``--jobs N``: N - 1 workers, the command's process being the N-th, see
    :func:`slope.simulate.executors.run_tasks`).
    The pool's size is read from ``--jobs`` or the case file's ``simulation.jobs`` as written (a
    whole number >= 2; anything else starts nothing here and is checked with the case as before), so
    it is the size the checked case gives. ``methods``: the workers also warm the kernels of the
    case's methods of slices (``run``; ``simulate`` starts its pool without them, as it did later).
    Returns whether a pool was started.
    """
    if getattr(args, "scheduler", None):  # the work goes to a scheduler's workers, not to a local pool
        return False
    n = args.jobs
    data = {}
    try:
        import tomllib

        with open(args.case, "rb") as fh:
            data = tomllib.load(fh)
    except Exception:  # noqa: BLE001 - not readable here: the case's own checks report it
        pass
    section = lambda name: data.get(name) if isinstance(data.get(name), dict) else {}  # noqa: E731
    if n is None:
        n = section("simulation").get("jobs")
    if isinstance(n, bool) or not isinstance(n, int) or n < 2:
        return False
    from .simulate.executors import start_workers, warm_up_order

    if not methods:
        start_workers(n)
        return True
    analysis = section("analysis")
    search = analysis.get("method") if isinstance(analysis.get("method"), str) else None
    methods = analysis.get("methods") if isinstance(analysis.get("methods"), list) else []
    # the case is not checked yet: names that are not text are left out (the warm-up ignores unknown ones)
    start_workers(n, methods=warm_up_order([m for m in methods if isinstance(m, str)], search))
    return True


@contextlib.contextmanager
def _pool_started_early(args, *, methods: bool = True):
    """Around a command's work: its pool started by :func:`_run_pool_early`, ended at once if the
    work fails (e.g. the case is refused), so that no worker is left behind."""
    early = _run_pool_early(args, methods=methods)
    try:
        yield
    except BaseException:
        if early:
            from .simulate.executors import stop_workers

            stop_workers(wait=False)
        raise


def _cmd_run(args) -> int:
    formats = tuple(f.strip() for f in str(args.figure_formats).split(",") if f.strip())
    with _pool_started_early(args):
        from .commands.run import run_case

        results = run_case(args.case, args.out, realisations=args.realisations, jobs=args.jobs, quiet=args.quiet,
                           figure_formats=formats, overwrite=args.overwrite, refine_search=args.refine_search,
                           **_estimator_kw(args))
    if args.json:
        print(json.dumps({k: results[k] for k in ("case", "deterministic", "spatial_simulation")}, indent=2))
    else:
        print(f"{results['case']['title']}: results in {args.out} (report.html, results.json), "
              f"{results['wall_time_s']} s")
        for h, ms in results["deterministic"].items():
            line = ", ".join(f"{m} {r['fs']:.3f}" if r["fs"] is not None else f"{m} none" for m, r in ms.items())
            print(f"  FS {h}: {line}")
        for h, s in results["spatial_simulation"].items():
            if s:
                a = s["spatial"]["critical_surface_searched"]
                b = s["single_random_variable"]["critical_surface_searched"]
                print(f"  pf {h}: spatial {a['pf']:.4f} [{a['pf_interval_95'][0]:.4f}, {a['pf_interval_95'][1]:.4f}]"
                      f"  single random variable {b['pf']:.4f} [{b['pf_interval_95'][0]:.4f}, {b['pf_interval_95'][1]:.4f}]")
                sub = s["spatial"].get("subset") or {}
                if sub.get("pf") is not None:
                    lo, hi = sub["pf_interval_95"]
                    print(f"  pf {h}: spatial, subset simulation {sub['pf']:.3g} [{lo:.3g}, {hi:.3g}], "
                          f"{sub['n_evaluations']} FS evaluations")
                elif sub.get("ran"):
                    print(f"  pf {h}: spatial, subset simulation: {sub['message']}")
                q = s.get("analytic_variance_reduction") or {}
                if q.get("pf") is not None:
                    print(f"  pf {h}: quick estimate (σ√γ on the fixed surface) {q['pf']:.4f} "
                          f"[{q['pf_interval_95'][0]:.4f}, {q['pf_interval_95'][1]:.4f}]")
        from .caution import CAUTION

        print(f"  {CAUTION}")
    sys.stdout.flush()
    from .simulate.executors import stop_workers

    stop_workers()  # the outputs are written: end the idle pool now rather than wait for it at exit
    return 0


def _cmd_check(args) -> int:
    from .case.build import load_case
    from .case.preflight import preflight

    case = preflight(load_case(args.case))  # every check run makes, so "ok" means the run will start
    print(f"{args.case}: ok ({case.title}; zones {', '.join(case.section.zone_names)}; "
          f"{len(case.randoms)} random properties)")
    return 0


def _cmd_simulate(args) -> int:
    with _pool_started_early(args, methods=False):
        from .commands.simulate import simulate_case

        r = simulate_case(args.case, args.out, realisations=args.realisations, jobs=args.jobs, batch=args.batch,
                          seed=args.seed, hypothesis=args.hypothesis, resume=args.resume, scheduler=args.scheduler,
                          export_fields=args.export_fields, export_format=args.export_format,
                          progress=not args.quiet, refine_below=args.refine_below,
                          refine_method=args.refine_method, refine_search=args.refine_search,
                          overwrite=args.overwrite, **_estimator_kw(args))
    if r.get("estimator") == "subset":
        _print_subset(r, args)
    elif args.json:
        print(json.dumps({k: r[k] for k in ("case", "hypothesis", "seed", "realisations", "resumed",
                                             "realisations_from_store", "simulation")}, indent=2))
    else:
        s = r["simulation"]
        lo, hi = s["pf_interval_95_wilson"]
        fmt = lambda v: "n/a" if v is None else f"{v:.4f}"  # noqa: E731
        print(f"{r['case']['title']} ({r['hypothesis']}, seed {r['seed']}): {r['realisations']} realisations"
              + (f", {r['realisations_from_store']} from the store" if r["resumed"] else "")
              + f"; results in {args.out} (results.json, fs_realisations.csv)")
        print(f"  pf {fmt(s['pf'])} [95 % {fmt(lo)}, {fmt(hi)}]  mean FS {fmt(s['mean_fs'])}  "
              f"std FS {fmt(s['std_fs'])}  no valid surface {s['n_no_valid_surface']}"
              + (f"  searched {s['n_searched']}, lowered {s['n_refined']}" if s.get("refine") else ""))
        if args.export_fields:
            print(f"  fields of every realisation in {args.export_fields} ({args.export_format}, fields.json)")
    return 0


def _print_subset(r, args) -> None:
    s = r["simulation"]
    if args.json:
        print(json.dumps({k: r[k] for k in ("case", "hypothesis", "seed", "estimator", "resumed", "simulation")},
                         indent=2))
        return
    print(f"{r['case']['title']} ({r['hypothesis']}, seed {r['seed']}): subset simulation, {s['n_evaluations']} "
          f"FS evaluations in {len(s['levels'])} levels; results in {args.out} (results.json, subset_levels.csv)")
    if s["pf"] is None:
        print(f"  {s['message']}")
    else:
        lo, hi = s["pf_interval_95"]
        print(f"  pf {s['pf']:.3g} [95 % {lo:.3g}, {hi:.3g}]  CoV {s['cov']:.2f}  beta {s['beta_from_pf']:.2f}  "
              f"thresholds {', '.join(f'{t:.3f}' for t in s['thresholds'])}")


def _cmd_sweep(args) -> int:
    from .commands.sweep import sweep_case

    r = sweep_case(args.case, args.out, theta_h=args.theta_h, theta_v=args.theta_v,
                   realisations=args.realisations, jobs=args.jobs, batch=args.batch, seed=args.seed,
                   hypothesis=args.hypothesis, scheduler=args.scheduler, progress=not args.quiet,
                   overwrite=args.overwrite, refine_search=args.refine_search, **_estimator_kw(args))
    if args.json:
        print(json.dumps({k: r[k] for k in ("case", "hypothesis", "seed", "realisations_per_point", "rows")},
                         indent=2))
    else:
        print(f"{r['case']['title']} ({r['hypothesis']}): {len(r['rows'])} grid points x "
              f"{r['realisations_per_point']} realisations; results in {args.out} (sweep.csv, sweep.json, figures/)")
        for row in r["rows"]:
            pf = "n/a" if row["pf"] is None else f"{row['pf']:.4g}"
            th = lambda v: "inf" if v is None or v == float("inf") else f"{v:g}"  # noqa: E731 - JSON has no inf
            print(f"  θh {th(row['theta_h'])} m, θv {th(row['theta_v'])} m: pf {pf}")
    return 0


def _sim_options(p, *, sweep=False):
    p.add_argument("case", help="case file (.toml)")
    p.add_argument("--out", required=True, help="output folder")
    p.add_argument("--realisations", type=_whole(1), default=None,
                   help="realisations" + (" per grid point (default sweep.realisations, then "
                                          "simulation.realisations)" if sweep else
                                          " (default simulation.realisations)"))
    p.add_argument("--jobs", type=_whole(1), default=None, help="local worker processes (default simulation.jobs)")
    p.add_argument("--batch", type=_whole(1), default=None,
                   help="realisations evaluated together (memory; default simulation.batch)")
    p.add_argument("--seed", type=_whole(0), default=None, help="run seed (default simulation.seed)")
    p.add_argument("--hypothesis", choices=("drained", "undrained"), default=None,
                   help="drainage hypothesis (default: the first of analysis.hypotheses)")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="run on a dask.distributed scheduler, e.g. tcp://host:8786")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    _overwrite_option(p)


def _overwrite_option(p):
    p.add_argument("--overwrite", action="store_true",
                   help="allow an output folder that holds slipfield's own earlier output of another command "
                        "(or, for simulate without --resume, start its run afresh); only files slipfield wrote "
                        "there are replaced, never others")


def _estimator_options(p):
    """--estimator and the subset simulation settings (run, simulate, sweep)."""
    from .simulate.estimators import ESTIMATORS

    p.add_argument("--estimator", choices=ESTIMATORS, default=None,
                   help="pf estimator: monte-carlo, subset (subset simulation, for small pf) or auto "
                        "(default simulation.estimator)")
    p.add_argument("--level-probability", type=float, default=None, metavar="P0",
                   help="subset: conditional probability of each level, in (0, 0.5] (default "
                        "simulation.level_probability, then 0.1)")
    p.add_argument("--samples-per-level", type=_whole(1), default=None, metavar="N",
                   help="subset: samples per level (default simulation.samples_per_level, then 1000)")


def _refine_search_option(p):
    """--refine-search (run, simulate, sweep): names from the registry of per-realisation searches, or off."""
    from .simulate.refine_names import (DEFAULT_MARGIN, DEFAULT_REFINE_SEARCH, FAILURE_FS, REFINE_OFF,
                                        REFINE_SEARCHES)

    p.add_argument("--refine-search", choices=REFINE_SEARCHES + (REFINE_OFF,), default=None, metavar="NAME",
                   help=f"per-realisation search of realisations near failure (bank FS in [{FAILURE_FS:g}, "
                        f"{FAILURE_FS + DEFAULT_MARGIN:g}) unless simulation.refine_below says otherwise): "
                        f"{', '.join(REFINE_SEARCHES)}, or {REFINE_OFF} (default simulation.refine_search, "
                        f"then {DEFAULT_REFINE_SEARCH})")


def _estimator_kw(args) -> dict:
    return {"estimator": args.estimator, "level_probability": args.level_probability,
            "samples_per_level": args.samples_per_level}


def build_parser() -> argparse.ArgumentParser:
    from .methods import POLYLINE_METHOD_NAMES

    p = argparse.ArgumentParser(prog="slipfield", description="Probability of failure of slopes with spatially "
                                "variable soil strength.")
    p.add_argument("--version", action="version", version=f"slipfield {version()}")
    sub = p.add_subparsers(dest="command", required=True)
    r = sub.add_parser("run", help="run every analysis of a case and write results, figures and report.html")
    r.add_argument("case", help="case file (.toml)")
    r.add_argument("--out", default="out", help="output folder (default: out)")
    r.add_argument("--realisations", type=_whole(1), default=None, help="override simulation.realisations")
    r.add_argument("--jobs", type=_whole(1), default=None, help="override simulation.jobs")
    r.add_argument("--json", action="store_true", help="print the summary as JSON")
    r.add_argument("--quiet", action="store_true", help="no progress output")
    r.add_argument("--figure-formats", default="png", metavar="FORMATS",
                   help="figure files to write, comma separated: png (always; the report embeds it) and svg "
                        "(default: png)")
    _overwrite_option(r)
    _estimator_options(r)
    _refine_search_option(r)
    r.set_defaults(func=_cmd_run)
    c = sub.add_parser("check", help="check a case file and report every problem at once")
    c.add_argument("case")
    c.set_defaults(func=_cmd_check)
    s = sub.add_parser("simulate", help="spatially variable simulation only, resumable; optional export of "
                       "every realisation's fields")
    _sim_options(s)
    s.add_argument("--resume", action="store_true", help="continue the run stored in --out (same case, "
                   "hypothesis and seed) up to --realisations")
    s.add_argument("--export-fields", default=None, metavar="DIR2",
                   help="write each realisation's property fields on the section grid, with its FS, to DIR2")
    s.add_argument("--export-format", choices=("xdmf", "vtu", "npz"), default="xdmf",
                   help="format of --export-fields (default xdmf: one time series per property)")
    s.add_argument("--refine-below", type=_positive_number, default=None, metavar="FS",
                   help="search realisations with a bank FS in [1, FS) with their own fields (default "
                        "simulation.refine_below, then 1.1)")
    s.add_argument("--refine-method", default=None, choices=POLYLINE_METHOD_NAMES,
                   help="method of slices of the per-realisation search's surfaces (default "
                        "simulation.refine_method, then spencer)")
    _estimator_options(s)
    _refine_search_option(s)
    s.set_defaults(func=_cmd_simulate)
    w = sub.add_parser("sweep", help="pf over a grid of scales of fluctuation (common random numbers)")
    _sim_options(w, sweep=True)
    w.add_argument("--theta-h", default=None, help="θh values, m, comma separated, inf allowed "
                   "(default sweep.theta_h of the case)")
    w.add_argument("--theta-v", default=None, help="θv values, m, comma separated, inf allowed "
                   "(default sweep.theta_v of the case)")
    _estimator_options(w)
    _refine_search_option(w)
    w.set_defaults(func=_cmd_sweep)
    from slipfield.fields.cli import add_fields_parser
    add_fields_parser(sub)
    return p


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised in the main thread so that staging folders and workers are cleaned up."""


def _on_sigterm(signum, frame):
    raise Terminated()


_CONTINUE = {"simulate": "the finished blocks are kept in --out/store: run the same command with --resume to "
                         "continue",
             "run": "nothing was written to --out; run the command again",
             "sweep": "nothing was written to --out; run the command again"}


def _worker_lost(exc) -> str:
    """What to say when a worker process ended under a command (``BrokenExecutor``: loky's
    TerminatedWorkerError, which names the workers' exit codes, or the standard library's)."""
    lines = [line.strip() for line in str(exc).splitlines() if line.strip()]
    codes = next((line for line in lines if "exit code" in line.lower()), "")
    return ("a worker process ended before its task did" + (f" ({codes.rstrip('.')})" if codes else "")
            + ": it was killed from outside, or ran out of memory (fewer --jobs, or a smaller [simulation] "
            "batch, use less memory)")


def main(argv=None) -> int:
    given = sys.argv[1:] if argv is None else list(argv)
    if given[:1] == ["run"] and not {"--quiet", "-h", "--help", "--json"} & set(given):
        # Something on the screen within a second: building the parser loads the numerical libraries.
        print("slipfield run · starting", file=sys.stderr, flush=True)
    import logging

    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # a refused option (exit 2, argparse's message printed), --help or --version
        return int(exc.code or 0)
    if getattr(args, "scheduler", None):
        # a lost or silent dask scheduler is reported once, in slipfield's words (exit 2), not as
        # the client's own tracebacks of its reconnection attempts
        try:
            import distributed  # noqa: F401 - creates its loggers, whose levels are set below
        except ImportError:
            pass
        for name in list(logging.root.manager.loggerDict):
            if name.split(".")[0] in ("distributed", "tornado"):
                logging.getLogger(name).setLevel(logging.CRITICAL)
    try:
        old_term = signal.signal(signal.SIGTERM, _on_sigterm)
    except ValueError:  # not the main thread (embedded use): leave signals alone
        old_term = None
    try:
        return int(args.func(args) or 0)
    except InputError as exc:
        print(f"slipfield: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt as exc:
        how = _CONTINUE.get(args.command, "run the command again")
        what = "terminated" if isinstance(exc, Terminated) else "interrupted"
        print(f"slipfield: {what}; {how}", file=sys.stderr)
        return 143 if isinstance(exc, Terminated) else 130
    except BrokenExecutor as exc:  # a worker died under the run: not the case's fault, nor a bug of ours
        print(f"slipfield: error: {_worker_lost(exc)}; {_CONTINUE.get(args.command, 'run the command again')}",
              file=sys.stderr)
        return 1
    except Exception as exc:  # noqa: BLE001 - an internal failure: report it, exit 1
        traceback.print_exc(file=sys.stderr)
        print(f"slipfield: internal error: {type(exc).__name__}: {exc} (please report it with the case file)",
              file=sys.stderr)
        return 1
    finally:
        if old_term is not None:
            signal.signal(signal.SIGTERM, old_term)


def exit_now(code: int) -> None:
    """End the command's process with ``code`` once its work is done, without tearing its interpreter down.

    The exit handlers run (files, temporary folders, the worker pool's own clean-up) and the
    standard streams are flushed, as at a normal exit; what is skipped is freeing every module
    and object one by one (numba's compiled kernels, the run's arrays), which took about a second
    after the last output of a ``slipfield run``. A thread still working (not a daemon) gets the
    normal exit, which waits for it.
    """
    import atexit
    import os
    import threading

    executors = sys.modules.get("slipfield.slope.simulate.executors")
    if executors is not None:
        # a pool the command left running (simulate, subset, sweep...) is ended here: its idle workers
        # are ended by loky's exit hook, which os._exit skips, and would otherwise live on until their
        # idle timeout (5 minutes), holding the command's standard streams open
        executors.stop_workers(wait=False)
    if any(t is not threading.main_thread() and not t.daemon and t.is_alive() for t in threading.enumerate()):
        sys.exit(code)
    atexit._run_exitfuncs()
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except Exception:  # noqa: BLE001 - a closed stream has nothing left to write
            pass
    os._exit(code)


def console_main() -> None:
    """The ``slipfield`` command (console script and ``python -m slipfield.slope.cli``)."""
    exit_now(main())


if __name__ == "__main__":
    console_main()
