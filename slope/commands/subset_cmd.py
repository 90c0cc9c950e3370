"""The estimator choice of ``run``, ``simulate`` and ``sweep``, and the subset outputs.

``[simulation] estimator`` (or ``--estimator``): ``monte-carlo``, ``subset``
(:mod:`slope.simulate.rare`) or ``auto`` (subset when the first batch of
Monte Carlo realisations, ``simulation.batch`` of them, sees fewer than
:data:`slope.simulate.rare.AUTO_MIN_FAILURES` failures; the choice is a
function of the seed, so it is reproducible).
"""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = ["estimator_settings", "resolve_auto", "subset_summary", "write_subset_outputs"]


def estimator_settings(case, estimator=None, level_probability=None, samples_per_level=None):
    """The estimator name and its :class:`SubsetSettings` (None for Monte Carlo), checked.

    CLI options override the case; errors name the option and the key.
    """
    from ..simulate.estimators import ESTIMATORS
    from ..simulate.rare import SubsetSettings

    sim = case.simulation
    name = sim.get("estimator", "monte-carlo") if estimator is None else estimator
    if name not in ESTIMATORS:
        raise InputError(f"--estimator (simulation.estimator): {name!r} is not known; use one of "
                         f"{', '.join(ESTIMATORS)}")
    if name == "monte-carlo":
        if level_probability is not None or samples_per_level is not None:
            raise InputError("--level-probability / --samples-per-level are used only by subset simulation; give "
                             "--estimator subset or auto, or leave them out")
        return name, None
    from slipfield.fields.generators import noise_generator_names

    if sim["field_method"] not in noise_generator_names():
        raise InputError(f"simulation.field_method = {sim['field_method']!r}: subset simulation moves the fields' "
                         f"white noise, which this generator draws inside GSTools; use one of "
                         f"{', '.join(noise_generator_names())} with --estimator {name}")
    return name, SubsetSettings.from_case(sim, level_probability, samples_per_level)


def resolve_auto(name, first_batch_fs) -> tuple[str, int | None]:
    """``auto`` → ``subset`` or ``monte-carlo`` from the FS of Monte Carlo's first batch."""
    from ..simulate.estimators import AUTO_MIN_FAILURES

    if name != "auto":
        return name, None
    fs = np.asarray(first_batch_fs, float)
    k = int((np.isfinite(fs) & (fs < 1.0)).sum())
    return ("subset" if k < AUTO_MIN_FAILURES else "monte-carlo"), k


def subset_summary(res) -> dict:
    """JSON-ready summary of a SubsetResult with the failure samples' sliding-mass size.

    The size is that of each failure's governing surface: the per-realisation
    search's own polyline where it governed (as Monte Carlo's failure
    geometry), else the bank's critical surface.
    """
    from .results import _spread

    d = res.to_dict()
    crit = res.failures["crit"]
    ok = crit[crit >= 0]
    gov = res.governing()
    on = crit >= 0
    area, depth = gov.area[on], gov.depth[on]
    typ = res.typical_failure()
    d["failure_samples"] = {
        "n": int(crit.size), "fs": res.failures["fs"].tolist(), "critical_surface_index": crit.tolist(),
        "n_failed_on_searched_surface": int(gov.searched.sum()),
        "governing_family": {str(f): int(np.sum(gov.family == f)) for f in dict.fromkeys(gov.family.tolist())},
        "sliding_mass_area": _spread(area), "max_depth": _spread(depth),
        "distinct_critical_surfaces": int(np.unique(ok).size),
        "note": "samples of the last level with FS below the failure threshold: conditional on failure, "
                "approximately distributed as the failures themselves; area and depth are those of the surface "
                "that governed each (the per-realisation search's polyline where it lowered the FS)"}
    d["typical_failure"] = (None if typ is None else
                            {"position": typ, "fs": float(res.failures["fs"][typ]),
                             "critical_surface_index": int(crit[typ]),
                             "governing_family": str(gov.family[typ]),
                             "on_searched_surface": bool(gov.searched[typ]),
                             "rule": "on the most frequent critical bank surface among the failure samples (with "
                                     "the per-realisation search: the bank surface it started from), FS nearest "
                                     "their median"})
    d["units"] = dict(d["units"], sliding_mass_area="m2 per m run", max_depth="m")
    return d


def write_subset_outputs(res, folder: Path, title: str) -> list[str]:
    """Levels table, failure samples, failure map figure and the typical failure's fields into ``folder``."""
    from .. import report as rp
    from ..simulate.failure_geometry import SURFACE_HEADER, failure_map, surface_columns

    folder = Path(folder)
    files = []
    rp.write_csv(folder / "subset_levels.csv",
                 ["level", "threshold FS (-)", "conditional probability (-)", "CoV of level (-)", "gamma (-)",
                  "chain acceptance (-)", "samples below FS 1"],
                 [[lv["level"], lv["threshold"], lv["probability"], lv["cov"], lv["gamma"], lv["acceptance"],
                   lv["n_failed"]] for lv in res.levels])
    files.append("subset_levels.csv")
    fail = res.failures
    gov = res.governing()  # the surface that governs each failure, read back by read_surface_columns
    rp.write_csv(folder / "subset_failures.csv", ["sample of last level", "FS (-)", "critical surface index"]
                 + SURFACE_HEADER,
                 [[int(s), float(f), int(c)] + surface_columns(gov, i)
                  for i, (s, f, c) in enumerate(zip(fail["sample"], fail["fs"], fail["crit"]))])
    files.append("subset_failures.csv")
    if fail["fs"].size:
        sec = res.problem.section
        xe = np.linspace(sec.x_min, sec.x_max, 81)
        ye = np.linspace(sec.base_y, float(np.asarray(sec.ground)[:, 1].max()), 41)
        # as Monte Carlo's failure map: bank failures solid, failures on searched polylines dashed
        fm = failure_map(gov, fail["fs"], xe, ye, threshold=res.settings.threshold)
        fig = rp.plot_failure_map(fm.x_edges, fm.y_edges, fm.density, sec.ground, n_failed=int(fail["fs"].size),
                                  n_total=int(res.final_fs.size),
                                  groups=[(g.kind, g.label, g.surfaces) for g in fm.groups],
                                  title=f"{title}: failure map at pf ≈ {res.pf:.2g} (subset simulation)")
        rp.save_figure(fig, folder / "figures", "subset_failure_map", formats=("png",))
        files.append("figures/subset_failure_map.png")
        grid, fields = res.failure_fields()
        k = res.typical_failure()
        arrays = {"field_" + "".join(ch if ch.isalnum() else "_" for ch in key): v for key, v in fields.items()}
        np.savez(folder / "subset_typical_failure.npz", x=grid.x, y=grid.y,
                 surface_xy=gov.xy(k), fs=float(fail["fs"][k]),
                 noise=res.failure_noise(k), **arrays)
        (folder / "subset_typical_failure.json").write_text(json.dumps({
            "format": "slipfield-subset-failure", "version": 1, "fs": float(fail["fs"][k]),
            "critical_surface_index": int(fail["crit"][k]), "governing_family": str(gov.family[k]),
            "on_searched_surface": bool(gov.searched[k]), "grid": {"x0": grid.x0, "y0": grid.y0, "nx": grid.nx,
                                                                     "ny": grid.ny, "dx": grid.dx, "dy": grid.dy},
            "arrays": {"field_<material_property>": "values (nx, ny) at cell centres, NaN outside the zones",
                       "surface_xy": "governing surface [x, y] (m): the per-realisation search's polyline "
                                     "where it governed, else the bank's critical surface",
                       "noise": "the sample's standard-normal input (slope.simulate.rare.NoiseLayout order)"},
            "problem_fingerprint": res.problem.fingerprint()}, indent=2))
        files += ["subset_typical_failure.npz", "subset_typical_failure.json"]
        import matplotlib.pyplot as plt

        plt.close("all")
    return files


def choose_estimator(case, prob, estimator, level_probability, samples_per_level, seed, n_jobs, block, refine):
    """The estimator ``simulate`` runs: ``(dict of the choice, SubsetSettings or None)``.

    ``auto`` runs Monte Carlo's first batch (``block`` realisations, in memory)
    and decides on its failures; the dict records why.
    """
    from ..simulate import simulate

    name, sub = estimator_settings(case, estimator, level_probability, samples_per_level)
    if name != "auto":
        return {"estimator": name, "estimator_setting": name}, sub
    first = simulate(prob, block, seed, n_jobs=n_jobs, batch=block, refine=refine)
    chosen, k = resolve_auto(name, first.fs)
    return {"estimator": chosen, "estimator_setting": "auto", "first_batch": block, "first_batch_failures": k}, sub


def simulate_subset_case(case, case_path, prob, hyp, out, settings, *, seed, n_jobs, batch, resume, overwrite,
                         scheduler, refine, progress, chosen, identity) -> dict:
    """``slipfield simulate`` with subset simulation: level checkpoints in ``out/store``, outputs staged.

    ``out`` is the checked :class:`~.folders.OutputFolder`; ``identity`` the
    case fingerprint the store is tied to.
    """
    import shutil
    import time

    from ..simulate import connect_scheduler
    from ..simulate.rare import subset_simulate
    from ..simulate.rare_store import LevelStore, subset_store_identity
    from ._shared import RESULTS_VERSION, write_json
    from ..caution import CAUTION
    from .results import jsonable

    t0 = time.perf_counter()
    store = out.path / "store"
    fresh = overwrite and not resume
    ident = {"path": str(case_path), "title": case.title, "hypothesis": hyp, "seed": seed,
             "fingerprint": prob.fingerprint()}
    lv = LevelStore(store, subset_store_identity(prob, seed, settings, refine, identity))
    resumed = False if fresh else lv.check(
        resume=resume, fix="use a new --out (or --overwrite to start this one afresh)",
        resume_hint="pass --resume to continue it")
    client = None if scheduler is None else connect_scheduler(scheduler, option="--scheduler")
    try:
        # every input is checked: from here on the run writes
        out.claim(folders=["store"])
        if fresh and store.exists():
            shutil.rmtree(store)  # slipfield's own store (listed in the folder's marker)
        res = subset_simulate(prob, settings, seed, n_jobs=n_jobs, batch=batch, store=str(store), resume=resumed,
                              scheduler=client, refine=refine, progress=progress, store_identity=identity)
        write_json(store / "case.json", ident)
    finally:
        if client is not None:
            client.close()
    stage = out.stage()
    try:
        files = write_subset_outputs(res, stage, case.title)
        results = {
            "slipfield_results_version": RESULTS_VERSION, "command": "simulate", "estimator": "subset",
            "estimator_choice": chosen,
            "case": {"path": str(case_path), "title": case.title, "note": case.data["case"].get("note", "")},
            "hypothesis": hyp, "method": prob.method, "seed": seed, "batch": batch, "jobs": n_jobs,
            "scheduler": scheduler, "resumed": bool(resumed), "problem_fingerprint": ident["fingerprint"],
            "properties": [p.describe() for p in prob.properties],
            "simulation": subset_summary(res),
            "units": {"fs": "-", "pf": "probability (fraction)", "theta": "m"}, "caution": CAUTION,
        }
        results["wall_time_s"] = round(time.perf_counter() - t0, 3)
        results["files"] = files + ["results.json", "store/"]
        write_json(stage / "results.json", results)
        out.commit(stage)
    except BaseException:
        out.discard(stage)
        raise
    return jsonable(results)


def run_subset(out, arrays, estimator, *, seed, batch, n_jobs, refine, quiet):
    """``slipfield run``: subset simulation of the spatial problem when the estimator asks for it.

    Adds ``out["spatial"]["subset"]`` (summary, or the reason it did not
    run) and ``arrays["spatial"]["subset"]`` (the SubsetResult).
    """
    from ..simulate.rare import subset_simulate

    name, settings = estimator
    if name == "monte-carlo":
        return
    fs = arrays["spatial"]["fs"]
    chosen, k = resolve_auto(name, fs[:batch])
    if chosen != "subset":
        out["spatial"]["subset"] = {"estimator": "auto", "ran": False,
                                    "reason": f"Monte Carlo's first {min(batch, fs.size)} realisations had {k} "
                                              "failures: enough for Monte Carlo"}
        return
    res = subset_simulate(arrays["spatial"]["problem"], settings, seed, n_jobs=n_jobs, batch=batch, refine=refine,
                          progress=not quiet)
    d = subset_summary(res)
    d["ran"] = True
    d["chosen_by"] = name if name == "subset" else f"auto: {k} failures in Monte Carlo's first batch of {batch}"
    d["monte_carlo_bound"] = out["spatial"]["critical_surface_searched"]["pf_interval_95"]
    out["spatial"]["subset"] = d
    arrays["spatial"]["subset"] = res


def subset_row(hyp, d):
    """Summary-table row of a subset summary: beside the Monte Carlo interval it replaces."""
    if not d.get("ran"):
        return (f"pf, {hyp}, spatially variable, subset simulation", None, "-", d["reason"])
    mc = d["monte_carlo_bound"]
    if d["pf"] is None:
        return (f"pf, {hyp}, spatially variable, subset simulation", None, "-", d["message"])
    lo, hi = d["pf_interval_95"]
    return (f"pf, {hyp}, spatially variable, subset simulation", d["pf"], "-",
            f"95 % interval {lo:.3g} – {hi:.3g}, CoV {d['cov']:.2f}, {d['n_evaluations']} FS evaluations "
            f"(Monte Carlo: {mc[0]:.3g} – {mc[1]:.3g})")
