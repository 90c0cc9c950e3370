"""The ``slipfield`` command line: a thin layer over the Python API.

Exit status: 0 success, 2 bad input (the message names the field and the
fix), 1 an internal failure.
"""
from __future__ import annotations

import argparse
import json
import sys

from fields.errors import InputError

__all__ = ["main", "build_parser"]


def _cmd_run(args) -> int:
    from .run import run_case

    results = run_case(args.case, args.out, realisations=args.realisations, jobs=args.jobs, quiet=args.quiet)
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
        print("  Results support, not replace, engineering judgement; defer to local codes and licensed practice.")
    return 0


def _cmd_check(args) -> int:
    from .case import load_case

    case = load_case(args.case)
    print(f"{args.case}: ok ({case.title}; zones {', '.join(case.section.zone_names)}; "
          f"{len(case.randoms)} random properties)")
    return 0


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="slipfield", description="Probability of failure of slopes with spatially "
                                "variable soil strength.")
    sub = p.add_subparsers(dest="command", required=True)
    r = sub.add_parser("run", help="run every analysis of a case and write results, figures and report.html")
    r.add_argument("case", help="case file (.toml)")
    r.add_argument("--out", default="out", help="output folder (default: out)")
    r.add_argument("--realisations", type=int, default=None, help="override simulation.realisations")
    r.add_argument("--jobs", type=int, default=None, help="override simulation.jobs")
    r.add_argument("--json", action="store_true", help="print the summary as JSON")
    r.add_argument("--quiet", action="store_true", help="no progress output")
    r.set_defaults(func=_cmd_run)
    c = sub.add_parser("check", help="check a case file and report every problem at once")
    c.add_argument("case")
    c.set_defaults(func=_cmd_check)
    from fields.cli import add_fields_parser
    add_fields_parser(sub)
    return p


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except InputError as exc:
        print(f"slipfield: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("slipfield: interrupted", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
