"""``slipfield run``: every analysis a case asks for, written to one folder.

The analyses return typed results (:mod:`slope.commands.results`); figures
and tables are drawn from those objects, and they become JSON only when
``results.json`` is written. Outputs (all written into a staging folder
beside ``out`` and moved into place only when everything succeeded, so a
failed run leaves nothing half-written and an earlier result intact):

- ``results.json`` — every number with its units, method and status (structure:
  ``docs/results-json.md``);
- ``deterministic.csv``, ``reliability.csv``, ``simulation.csv``,
  ``fs_realisations.csv``, ``slices_<hypothesis>_<method>.csv`` — tables;
- ``figures/*.png`` (and ``*.svg`` when asked): the figures of
  :data:`slope.report.figures.catalogue.CATALOGUE`;
- ``report.html`` — a self-contained page (figures embedded).
"""
from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
import sys
import time
from pathlib import Path

import numpy as np

from ..case.analyses import (add_other_methods, deterministic, other_methods, other_methods_results,
                              random_problem, single_variable_reliability)
from ..case.build import load_case
from ..errors import InputError
from ..reliability.stats import estimate_pf
from .results import (CAUTION, RESULTS_VERSION, DeterministicResult, PfCount, QuickEstimate, RunResults,
                      SimulationRun, SingleVariableResult, SpatialResult, results_json)
from .risk import risk_points
from .slice_table import slice_table
from ..simulate.failure_geometry import sliding_mass_geometry  # noqa: F401  (public here since issue 11)

__all__ = ["run_case", "analyse_case", "write_run", "sliding_mass_geometry", "RESULTS_VERSION", "CAUTION",
           "FIGURE_FORMATS"]

#: Figure file formats ``run`` can write (PNG is always written: the report embeds it).
FIGURE_FORMATS = ("png", "svg")


class _Progress:
    """Stage lines on stderr (the first within a second of starting); nothing when quiet."""

    def __init__(self, quiet: bool):
        self.quiet = quiet

    def say(self, text: str) -> None:
        if not self.quiet:
            print(f"slipfield run · {text}", file=sys.stderr, flush=True)

    def bar(self, label: str):
        """The ``progress`` argument of :func:`slope.simulate.simulate`: a labelled bar, or none."""
        return False if self.quiet else label


def _run_one(case, det, hyp, label, run, override, *, n, n_jobs, progress):
    from ..simulate import RefineSettings, simulate

    seed, block = int(case.simulation["seed"]), int(case.simulation["batch"])
    prob = random_problem(case, det, hyp, theta_override=override)
    if prob is None:
        return None
    t0 = time.perf_counter()
    res = simulate(prob, n, seed, batch=block, n_jobs=n_jobs, progress=progress.bar(f"{hyp} · {label}"),
                   refine=RefineSettings.from_case(case.simulation))
    wall = time.perf_counter() - t0
    fs = np.asarray(res.fs, float)
    fixed = np.asarray(res.fs_fixed, float)
    fixed_valid = np.asarray(res.fixed_ok, bool) & np.isfinite(fixed)
    crit = np.asarray(res.critical_index)
    failed = np.flatnonzero(np.isfinite(fs) & (fs < 1.0) & (crit >= 0))
    from ..simulate.failure_geometry import governing_surfaces
    from ..simulate.mechanism_results import mechanism_summary

    # the surface that governs: the per-realisation search's own polyline where it lowered FS, else the bank's
    governing = governing_surfaces(res)

    return SimulationRun(
        mechanisms=mechanism_summary(res), result=res,
        hypothesis=hyp, run=run, realisations=int(n), seed=seed, wall_time_s=round(wall, 3),
        method=case.analysis["method"], field_method=case.simulation.get("field_method"),
        averaging=case.simulation.get("averaging"),
        searched=PfCount.from_stats(estimate_pf(fs, valid=np.isfinite(fs))),
        fixed=PfCount.from_stats(estimate_pf(fixed, valid=fixed_valid)) if fixed_valid.any() else None,
        n_nonconverged=int(res.n_nonconverged), n_inadmissible=int(res.n_inadmissible),
        n_no_valid=int(res.n_no_valid), refine=res.refine, n_refined=int(res.n_refined),
        fs=fs, fs_fixed=fixed, critical_index=crit, problem=prob, failed_area=governing.area[failed],
        failed_depth=governing.depth[failed], governing=governing)


def _shown(fs, crit):
    """Realisations drawn with their fields: the lowest FS and a typical one (FS nearest the median)."""
    ok = np.flatnonzero(np.isfinite(fs) & (crit >= 0))
    if ok.size == 0:
        return []
    low = int(ok[np.argmin(fs[ok])])
    typ = int(ok[np.argmin(np.abs(fs[ok] - np.median(fs[ok])))])
    picks = [("lowest FS", low)] + ([("typical (FS nearest the median)", typ)] if typ != low else [])
    return [{"role": r, "realisation": k, "fs": float(fs[k]), "bank_index": int(crit[k])} for r, k in picks]


def _quick(case, hyp, prob, *, n, n_jobs, progress) -> QuickEstimate:
    """The quick estimate: single variables with σ × √γ along the fixed deterministic critical surface."""
    from ..simulate import simulate
    from ..simulate.studies import reduced_variance_problem

    seed, block = int(case.simulation["seed"]), int(case.simulation["batch"])
    red, table = reduced_variance_problem(prob, fixed_only=True)  # only fs_fixed is read
    t0 = time.perf_counter()
    res = simulate(red, n, seed, batch=block, n_jobs=n_jobs, progress=progress.bar(f"{hyp} · quick σ√γ estimate"))
    wall = time.perf_counter() - t0
    fixed = np.asarray(res.fs_fixed, float)
    ok = np.asarray(res.fixed_ok, bool) & np.isfinite(fixed)
    est = PfCount.from_stats(estimate_pf(fixed, valid=ok)) if ok.any() else None
    return QuickEstimate(hyp, int(n), seed, round(wall, 3), case.analysis["method"], table, est, int(ok.sum()))


def _subset(case, spatial, estimator, *, n_jobs, progress):
    """Subset simulation of the spatial problem when the estimator asks for it (its JSON block, or None)."""
    from ..simulate import RefineSettings
    from .subset_cmd import run_subset

    out = {"spatial": {"critical_surface_searched": {"pf_interval_95": list(spatial.searched.interval)}}}
    arrays = {"spatial": {"fs": spatial.fs, "problem": spatial.problem}}
    run_subset(out, arrays, estimator, seed=spatial.seed, batch=int(case.simulation["batch"]), n_jobs=n_jobs,
               refine=RefineSettings.from_case(case.simulation), quiet=progress.quiet)
    return out["spatial"].get("subset")


def _spatial(case, det, hyp, *, n, n_jobs, progress, estimator=("monte-carlo", None)) -> SpatialResult | None:
    """Spatially variable run, the same with every θ → ∞, subset simulation when chosen, the quick estimate."""
    spatial = _run_one(case, det, hyp, "spatial simulation", "spatial", None, n=n, n_jobs=n_jobs,
                       progress=progress)
    if spatial is None:
        return None
    single = _run_one(case, det, hyp, "θ → ∞ simulation", "single_random_variable", (math.inf, math.inf),
                      n=n, n_jobs=n_jobs, progress=progress)
    site = None
    if spatial.problem.site_data:
        from .site_effect import site_data_effect

        from ..simulate import RefineSettings

        est_c = estimate_pf(spatial.fs, valid=np.isfinite(spatial.fs))
        site, _ = site_data_effect(spatial.problem, est_c, hyp, n=n, seed=spatial.seed,
                                   batch=int(case.simulation["batch"]), n_jobs=n_jobs, quiet=progress.quiet,
                                   refine=RefineSettings.from_case(case.simulation))
    drilling = None
    if "drilling" in case.data:
        from ..simulate.drilling import drilling_summary

        drilling = drilling_summary(case.data["drilling"], spatial.problem)
    spatial.subset = _subset(case, spatial, estimator, n_jobs=n_jobs, progress=progress)
    spatial.shown = _shown(spatial.fs, spatial.critical_index)
    quick = _quick(case, hyp, spatial.problem, n=n, n_jobs=n_jobs, progress=progress)
    out = SpatialResult(hyp, spatial, single, quick)
    if drilling is not None:
        out.extra["drilling"] = (drilling, None)
    if site is not None:
        out.site_data = site
        out.extra["site_data"] = (site.to_dict(), None)
    return out


def _reliability_status(summ):
    """Give every reliability estimate a status beside its numbers (in place)."""
    for m, r in summ.items():
        if not isinstance(r, dict) or m in ("tornado", "site_data"):
            continue
        if "status" in r:
            continue  # the method reported its own
        if m == "form":
            r["status"] = "ok" if r.get("converged") else "FORM iteration did not converge: beta and pf not reliable"
            continue
        bad = int(r.get("n_nonconverged", 0)) + int(r.get("n_inadmissible", 0))
        r["status"] = "ok" if bad == 0 else f"{bad} evaluations not converged or inadmissible, excluded"


def _single_variable(case, det, hyp, estimator=("monte-carlo", None)) -> SingleVariableResult | None:
    r = single_variable_reliability(case, det, hyp, n_jobs=1, estimator=estimator)
    if r is None:
        return None
    s, arrays = r["summary"], r["arrays"]
    _reliability_status(s)
    head = ("variables", "surface", "method", "tornado", "site_data")
    blocks = {m: b for m, b in s.items() if m not in head}
    for b in blocks.values():
        iv = b.get("pf_interval_95")
        if iv is not None and b.get("pf") is not None and None not in iv:
            # The Wilson bounds at k = 0 or k = n are exactly pf in closed form; floating point can put
            # them a rounding error on the wrong side (1.08e-19 > 0 seen on the dam demo).
            b["pf_interval_95"] = [min(iv[0], b["pf"]), max(iv[1], b["pf"])]
    return SingleVariableResult(hyp, s["variables"], s["surface"], s["method"], blocks, s.get("tornado"),
                                arrays.get("tornado"),
                                {m: a["fs"] for m, a in arrays.items() if isinstance(a, dict) and "fs" in a},
                                site_data=s.get("site_data"))


def _deterministic(case, det) -> dict:
    out = {}
    for h, d in det.items():
        bank = d["bank"]
        out[h] = {}
        for m, block in d["methods"].items():
            r = DeterministicResult.from_search(h, block)
            if r.critical_index >= 0:
                r.slices = slice_table(case, bank.bank, r.critical_index, h, m)
            out[h][m] = r
    return out


def _version() -> str:
    try:
        from importlib.metadata import version

        return version("slipfield")
    except Exception:  # noqa: BLE001 - not installed: say so rather than guess
        return "unknown (not installed)"


def _counts(case, realisations, jobs, on_ready=None):
    """Realisations and jobs of a run (options checked, then the case checked for them).

    ``on_ready(case, n_jobs)`` is called between the two: the case's checks run its search
    (seconds, and on a first run the compilation of its method), which the worker pool's start-up
    and compilation of the other kernels then overlap.
    """
    from ..case.preflight import check_option, preflight

    n = case.simulation["realisations"] if realisations is None else check_option(realisations, "--realisations", 1)
    n_jobs = case.simulation["jobs"] if jobs is None else check_option(jobs, "--jobs", 1)
    if on_ready is not None:
        on_ready(case, int(n_jobs))
    preflight(case, realisations=None if realisations is None else n)
    from ..simulate.executors import limit_threads

    limit_threads(n_jobs)  # --jobs N: N cores in all, this process's kernel threads included
    return int(n), int(n_jobs)


def analyse_case(case_path, *, realisations=None, jobs=None, quiet=True, on_ready=None, estimator=None,
                 level_probability=None, samples_per_level=None, refine_search=None):
    """Run every analysis of a case; nothing is written.

    Parameters
    ----------
    case_path : path-like
        A ``.toml`` case file.
    realisations, jobs : int, optional
        Override ``simulation.realisations`` and ``simulation.jobs``.
    quiet : bool
        No stage lines and no progress bars.
    estimator, level_probability, samples_per_level : optional
        Override ``simulation.estimator`` and the subset-simulation settings (``--estimator`` …).
    refine_search : str, optional
        Override ``simulation.refine_search`` (``--refine-search``): a search
        of :data:`slope.simulate.refine_names.REFINE_SEARCHES` or ``off``.
    on_ready : callable, optional
        ``on_ready(case, n_jobs)`` once the case is read and the options are checked, before the
        case's checks (which run its search) and any analysis (``run_case`` starts the worker pool
        there, and ends it at once if the run then fails).

    Returns
    -------
    case : slope.case.build.Case
    results : RunResults
        Typed results (:mod:`slope.commands.results`); ``results_json`` gives their JSON.
    """
    t_start = time.perf_counter()
    progress = _Progress(quiet)
    progress.say(f"reading {case_path}")
    case = load_case(case_path)
    raw = Path(case_path).read_bytes()
    from .subset_cmd import estimator_settings

    est = estimator_settings(case, estimator, level_probability, samples_per_level)
    if refine_search is not None:
        from ..simulate.refinement import RefineSettings

        RefineSettings.from_case(case.simulation, search=refine_search)  # checked before any computation
        case.simulation["refine_search"] = refine_search  # every analysis below reads it from the case
    n, n_jobs = _counts(case, realisations, jobs, on_ready)
    hyps = case.analysis["hypotheses"]
    progress.say(f"deterministic search ({', '.join(hyps)})")
    # the random analyses start from the run method's bank; the other methods are evaluated on it apart
    # from them (the same numbers), so that on a first run nothing waits for their kernels, which the
    # pool is still compiling (Morgenstern-Price: the longest)
    det = deterministic(case, other_methods=False)
    others = other_methods(case)
    later = None
    if others and n_jobs > 1:
        # on a worker, which takes them after its warm-up, while this process goes on; it compiles
        # only what they reach (Spencer's and Morgenstern-Price's λ scan: only some banks need it)
        from ..simulate.executors import submit_to_worker

        later = submit_to_worker(other_methods_results, case, {h: {"bank": d["bank"]} for h, d in det.items()},
                                 n_jobs=n_jobs)
    res = RunResults(
        case_path=str(case_path), case_sha256=hashlib.sha256(raw).hexdigest(), title=case.title,
        note=case.data["case"].get("note", ""), version=_version(),
        started_utc=_dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M:%S UTC"),
        seed=int(case.simulation["seed"]), realisations=n, deterministic={}, single_variable={}, spatial={})
    for h in hyps:
        methods = ", ".join(case.data.get("reliability", {}).get("methods", []))
        progress.say(f"{h} · single random variables ({methods})")
        res.single_variable[h] = _single_variable(case, det, h, est)
    for h in hyps:
        res.spatial[h] = _spatial(case, det, h, n=n, n_jobs=n_jobs, progress=progress, estimator=est)
    if others:
        progress.say(f"deterministic FS by {', '.join(others)} on the same trial surfaces")
        add_other_methods(case, det, later.result() if later is not None else None)
    res.deterministic = _deterministic(case, det)
    res.risk = risk_points(case, res)
    res.analysis_time_s = round(time.perf_counter() - t_start, 2)
    return case, res


def run_case(case_path, out_dir, *, realisations=None, jobs=None, quiet=True,
             figure_formats=("png",), overwrite=False, estimator=None, level_probability=None,
             samples_per_level=None, refine_search=None) -> dict:
    """Run every analysis of a case and write the outputs into ``out_dir``.

    Parameters
    ----------
    case_path : path-like
        A ``.toml`` case file.
    out_dir : path-like
        Output folder (created; an earlier result there is replaced only when
        this run succeeds).
    realisations : int, optional
        Override ``simulation.realisations``.
    jobs : int, optional
        Override ``simulation.jobs``.
    quiet : bool
        No stage lines and no progress bars.
    figure_formats : sequence of str
        Files written per figure under ``figures/``, from :data:`FIGURE_FORMATS`:
        ``"png"`` (always, it is what the report embeds) and optionally ``"svg"``.
    overwrite : bool
        Allow an ``out_dir`` holding another slipfield command's output
        (:class:`slope.commands.folders.OutputFolder`: only slipfield's own
        files are ever replaced).
    estimator, level_probability, samples_per_level : optional
        Override ``simulation.estimator`` (``monte-carlo``, ``subset``, ``auto``) and its settings.
    refine_search : str, optional
        Override ``simulation.refine_search`` (``--refine-search``; ``off`` switches the
        per-realisation search off).

    Returns
    -------
    dict
        The content of ``results.json``.
    """
    from .folders import OutputFolder

    t_start = time.perf_counter()
    formats = tuple(dict.fromkeys(("png", *figure_formats)))
    if set(formats) - set(FIGURE_FORMATS):
        raise InputError(f"figure formats: {sorted(set(formats) - set(FIGURE_FORMATS))} not supported; "
                         f"choose from {', '.join(FIGURE_FORMATS)} (comma separated, e.g. png,svg)")
    out = OutputFolder(out_dir, "run", overwrite=overwrite)  # checked before the case is even read

    pool = {"n_jobs": 1}

    def ready(case, n_jobs):
        from ..simulate.driver import start_workers
        from ..simulate.executors import warm_here, warm_up_order

        pool["n_jobs"] = n_jobs  # the figures are drawn by the same workers
        # the pool starts while the case's checks run the search; this process takes its own share of
        # the compilations first (the search method's kernel, which the checks need, comes first in it)
        methods = warm_up_order(case.analysis["methods"], case.analysis["method"])
        start_workers(n_jobs, methods=methods)
        warm_here(n_jobs, methods)

    try:
        case, res = analyse_case(case_path, realisations=realisations, jobs=jobs, quiet=quiet, on_ready=ready,
                                 estimator=estimator, level_probability=level_probability,
                                 samples_per_level=samples_per_level, refine_search=refine_search)
    except BaseException:
        if pool["n_jobs"] > 1:  # e.g. the case's checks failed while the pool was still compiling
            from ..simulate.executors import stop_workers

            stop_workers(wait=False)
        raise
    return write_run(case, res, out, formats=formats, quiet=quiet, t_start=t_start, jobs=pool["n_jobs"])


def write_run(case, res, out, *, formats=("png",), quiet=True, t_start=None, jobs=1) -> dict:
    """Write the figures, tables, ``report.html`` and ``results.json`` of analysed results.

    Parameters
    ----------
    out : path-like or OutputFolder
        The output folder (checked here when given as a path). Everything goes
        to a staging folder first and is moved into place only when complete.
    jobs : int
        Worker processes drawing the figures (1: in this process); the files are the same.

    Returns
    -------
    dict
        The content of ``results.json``.
    """
    from ..report.build import write_run_report
    from .folders import OutputFolder

    progress = _Progress(quiet)
    t_write = time.perf_counter()
    if not isinstance(out, OutputFolder):
        out = OutputFolder(out, "run")
    stage = out.stage()
    try:
        progress.say("figures, tables and report")
        write_run_report(stage, case, res, formats=formats, n_jobs=jobs)
        if t_start is not None:
            res.wall_time_s = round(time.perf_counter() - t_start, 2)
        else:  # analysed earlier: the analyses' time plus the writing
            res.wall_time_s = round((res.analysis_time_s or 0.0) + time.perf_counter() - t_write, 2)
        # every output file (the folder's own marker, .slipfield-output.json, is not an output)
        res.files = sorted([str(p.relative_to(stage)) for p in stage.rglob("*") if p.is_file()] + ["results.json"])
        doc = results_json(res)
        (stage / "results.json").write_text(json.dumps(doc, indent=2, allow_nan=False))
        out.commit(stage)
    except BaseException:
        out.discard(stage)
        raise
    progress.say(f"done{'' if res.wall_time_s is None else f' in {res.wall_time_s} s'}: {out.path}")
    return doc
