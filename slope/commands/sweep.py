"""``slipfield sweep``: pf over a grid of scales of fluctuation with common random numbers.

The same seed and streams are used at every grid point, so differences
between rows are not the sampling noise of independent runs. Outputs are
written into a staging folder and moved into ``--out`` (checked up front by
:class:`~slope.commands.folders.OutputFolder`) only when the sweep succeeded.
"""
from __future__ import annotations

import math
import time

import numpy as np

from ..case.preflight import preflight
from ..errors import InputError
from ._shared import RESULTS_VERSION, parse_theta_list, problem_of, settings, write_json
from .folders import OutputFolder
from .results import jsonable

__all__ = ["sweep_case"]


def sweep_case(case_path, out_dir, *, theta_h=None, theta_v=None, realisations=None, jobs=None, batch=None,
               seed=None, hypothesis=None, scheduler=None, progress=False, overwrite=False, estimator=None,
               level_probability=None, samples_per_level=None, refine_search=None) -> dict:
    """pf over a grid of scales of fluctuation, with common random numbers.

    Every random property gets the same (θh, θv) at a grid point; the same
    seed and streams are used at every point (as
    :func:`slope.simulate.theta_sweep`), so differences between rows are not
    the sampling noise of independent runs. A point with θh or θv = inf is
    run with both infinite (each property a single random variable per
    realisation: one field cannot be infinite along one axis only).

    Parameters
    ----------
    case_path : path-like
    out_dir : path-like
        Output folder (replaced only when the sweep succeeds): ``sweep.csv``,
        ``sweep.json``, ``figures/pf_vs_theta_h.{png,svg}``,
        ``figures/fs_vs_theta_h.{png,svg}``.
    theta_h, theta_v : str or sequence, m
        Grid values (``"5,10,inf"``); default the case's ``[sweep]`` table.
    realisations : int, optional
        Per grid point; default ``sweep.realisations`` then
        ``simulation.realisations``.
    jobs, batch, seed, hypothesis, scheduler, progress
        As :func:`slope.commands.simulate.simulate_case`.
    overwrite : bool
        Allow an ``out_dir`` holding another slipfield command's output.
    refine_search : str, optional
        Override ``simulation.refine_search`` (``--refine-search``; ``off``
        switches the per-realisation search off at every grid point).

    Returns
    -------
    dict
        The content of ``sweep.json``.
    """
    from .. import report as rp
    from ..case.build import load_case
    from ..simulate import connect_scheduler, theta_sweep
    from ..caution import CAUTION

    t0 = time.perf_counter()
    case = load_case(case_path)
    sw = case.data.get("sweep") or {}
    grid_vals = {}
    for opt, key, given in (("--theta-h", "theta_h", theta_h), ("--theta-v", "theta_v", theta_v)):
        if given is None:
            if key not in sw:
                raise InputError(f"{opt}: not given and the case has no sweep.{key}; give e.g. {opt} 5,10,20,inf")
            given = [str(v) for v in sw[key]]
        grid_vals[key] = parse_theta_list(given, opt)
    n, n_jobs, block, seed = settings(case, realisations, jobs, batch, seed, default_n=sw.get("realisations"))
    # the search of the one hypothesis is checked by problem_of
    preflight(case, realisations=None if realisations is None else n, batch=None if batch is None else block,
              search=False)
    from .subset_cmd import estimator_settings

    est, sub = estimator_settings(case, estimator, level_probability, samples_per_level)
    from ..simulate.refinement import RefineSettings

    refine = RefineSettings.from_case(case.simulation, search=refine_search)
    out = OutputFolder(out_dir, "sweep", overwrite=overwrite)  # checked before any computation
    hyp, _, prob = problem_of(case, hypothesis)
    client = None if scheduler is None else connect_scheduler(scheduler, option="--scheduler")
    try:  # every input is checked: from here on the sweep computes, then writes
        if est == "monte-carlo":
            rows = theta_sweep(prob, grid_vals["theta_h"], grid_vals["theta_v"], n, seed, n_jobs=n_jobs,
                               batch=block, progress=progress, scheduler=client, refine=refine)
        else:  # subset simulation at every point (auto: where Monte Carlo's first batch sees few failures)
            from ..simulate.rare import theta_sweep_rare

            rows = theta_sweep_rare(prob, grid_vals["theta_h"], grid_vals["theta_v"], n, seed, sub, est,
                                    n_jobs=n_jobs, batch=block, scheduler=client, refine=refine)
    finally:
        if client is not None:
            client.close()
    for r in rows:  # the sweep files name the interval bounds explicitly
        r["pf_low"], r["pf_high"] = r.pop("lo"), r.pop("hi")
    stage = out.stage()
    try:
        cols = [("theta_h", "theta_h (m)"), ("theta_v", "theta_v (m)"), ("pf", "pf (-)"),
                ("pf_low", "pf low 95% Wilson (-)"), ("pf_high", "pf high 95% Wilson (-)"),
                ("mean_fs", "mean FS (-)"), ("std_fs", "std FS (-)"), ("n", "realisations"),
                ("n_valid", "valid"), ("n_nonconverged", "lowest surface non-converged"),
                ("n_inadmissible", "lowest surface inadmissible"), ("n_no_valid_surface", "no valid surface")]
        rp.write_csv(stage / "sweep.csv", [c for _, c in cols], [[r[k] for k, _ in cols] for r in rows])
        notes = _sweep_figures(rows, grid_vals, stage / "figures", case.title, hyp)
        results = {
            "slipfield_results_version": RESULTS_VERSION, "command": "sweep",
            "case": {"path": str(case_path), "title": case.title}, "hypothesis": hyp, "method": prob.method,
            "seed": seed, "realisations_per_point": n, "theta_h": grid_vals["theta_h"],
            "theta_v": grid_vals["theta_v"], "rows": rows,
            "common_random_numbers": "same seed and streams at every grid point", "estimator": est,
            "per_realisation_search": None if refine is None else refine.describe(),
            "infinite_theta": "a point with theta_h or theta_v = inf is run with both = inf (single random "
                              "variable per property); theta_h_run/theta_v_run give what was run",
            "units": {"theta": "m", "fs": "-", "pf": "probability (fraction)"},
            "figure_notes": notes, "caution": CAUTION,
        }
        results["wall_time_s"] = round(time.perf_counter() - t0, 3)
        write_json(stage / "sweep.json", results)
        out.commit(stage)
    except BaseException:
        out.discard(stage)
        raise
    return jsonable(results)


def _sweep_figures(rows, grid_vals, fig_dir, title, hyp) -> list[str]:
    """pf and mean/σ FS against θh, one series per θv; returns notes on what was not drawn."""
    from .. import report as rp

    th, tv = grid_vals["theta_h"], grid_vals["theta_v"]
    by = {(r["theta_h"], r["theta_v"]): r for r in rows}

    def table(key):
        return np.array([[by[(h, v)][key] for h in th] for v in tv], float)

    pf, lo, hi = table("pf"), table("pf_low"), table("pf_high")
    labels = [f"θv = {v:g} m" if math.isfinite(v) else "θv = ∞" for v in tv]
    notes = []
    fig_dir.mkdir(parents=True, exist_ok=True)
    if np.all(np.isfinite(pf)):
        # Wilson bounds at pf = 0 or 1 can sit a rounding error outside pf
        fig = rp.plot_pf_vs_theta(th, pf, np.minimum(lo, pf), np.maximum(hi, pf), labels, theta_name="θh",
                                  title=f"{title}: pf against θh ({hyp})")
        rp.save_figure(fig, fig_dir, "pf_vs_theta_h")
    else:
        notes.append("pf_vs_theta_h not drawn: a grid point had no realisation with a valid surface")
    mean, std = table("mean_fs"), table("std_fs")
    if np.all(np.isfinite(mean)) and np.all(np.isfinite(std)):
        fig = rp.plot_fs_vs_theta(th, mean, std, labels, theta_name="θh",
                                  title=f"{title}: FS against θh ({hyp})")
        rp.save_figure(fig, fig_dir, "fs_vs_theta_h")
    else:
        notes.append("fs_vs_theta_h not drawn: a grid point had fewer than 2 valid realisations")
    import matplotlib.pyplot as plt

    plt.close("all")
    return notes
