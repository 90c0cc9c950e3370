"""``slipfield run``: every analysis a case asks for, written to one folder.

Outputs (all written into a staging folder beside ``out`` and moved into
place only when everything succeeded, so a failed run leaves nothing
half-written and an earlier result intact):

- ``results.json`` — every number with its units, method and status (structure:
  ``docs/results-json.md``);
- ``deterministic.csv``, ``reliability.csv``, ``simulation.csv``,
  ``fs_realisations.csv`` — tables;
- ``figures/*.png`` and ``*.svg``: section, FS distributions, tornado, pf convergence and
  comparison, each random field in the lowest-FS and a typical realisation with its critical
  surface, failure map, failure geometry (sliding-mass area, depth), γ(T), risk chart;
- ``report.html`` — a self-contained page (figures embedded).
"""
from __future__ import annotations

import json
import math
import time
from pathlib import Path

import numpy as np

from ..case.analyses import (deterministic, random_problem, risk_scenarios, single_variable_reliability,
                              surface_xy)
from ..case.build import load_case
from ..errors import InputError
from ..reliability.stats import convergence_history, estimate_pf
from ..simulate.mechanism_results import accepted_surfaces, mechanism_maps, mechanism_summary, surface_text

__all__ = ["run_case", "sliding_mass_geometry", "RESULTS_VERSION"]

RESULTS_VERSION = 1
CAUTION = ("slipfield's results support, and do not replace, engineering judgement. Probabilities of "
           "failure depend strongly on the assumed statistics and models; check every result and defer "
           "to local codes, standards and licensed professional practice.")


def _jsonable(v):
    """Plain JSON types; non-finite floats become null (JSON has no NaN)."""
    if isinstance(v, dict):
        return {str(k): _jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_jsonable(x) for x in v]
    if isinstance(v, np.ndarray):
        return _jsonable(v.tolist())
    if isinstance(v, (np.floating, float)):
        f = float(v)
        return f if math.isfinite(f) else None
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, np.bool_):
        return bool(v)
    return v


PROPERTY_LABELS = {"c": ("c'", "kPa"), "phi": ("φ'", "degree")}


def sliding_mass_geometry(bank, index):
    """Cross-sectional area and greatest depth of the sliding mass above bank surfaces.

    Parameters
    ----------
    bank : slope.slices.SliceBank
        The surface bank.
    index : array_like of int
        Surfaces of the bank (one per failed realisation, repeats allowed).

    Returns
    -------
    area : ndarray
        Area between the ground line and each surface, m² per metre run,
        by Simpson's rule on every slice (sides and midpoint), which is
        exact for a straight base under a straight ground within a slice.
    depth : ndarray
        Greatest vertical depth of each surface below the ground line, m,
        over slice sides and midpoints.
    """
    idx = np.asarray(index, dtype=int).ravel()
    if idx.size and (idx.min() < 0 or idx.max() >= bank.n_surfaces):
        raise ValueError(f"index: surface indices must lie in [0, {bank.n_surfaces}); got "
                         f"{idx.min()}..{idx.max()} (realisations without a valid surface have -1; drop them)")
    h_l = np.clip(bank.y_top_left[idx] - bank.y_base_left[idx], 0.0, None)
    h_m = np.clip(bank.y_top[idx] - bank.y_base[idx], 0.0, None)
    h_r = np.clip(bank.y_top_right[idx] - bank.y_base_right[idx], 0.0, None)
    area = (bank.width[idx] * (h_l + 4.0 * h_m + h_r) / 6.0).sum(axis=1)
    depth = np.maximum(np.maximum(h_l, h_r), h_m).max(axis=1)
    return area, depth


def _spread(v):
    v = np.asarray(v, float)
    if v.size == 0:
        return None
    return {"median": float(np.median(v)), "mean": float(v.mean()), "p05": float(np.percentile(v, 5)),
            "p95": float(np.percentile(v, 95)), "min": float(v.min()), "max": float(v.max())}


def _interval(est):
    # The Wilson bounds at k = 0 or k = n are exactly pf in closed form; floating
    # point can put them a rounding error on the wrong side (2e-19 > 0 seen).
    lo, hi = (float(x) for x in est.ci)
    return [min(lo, est.pf), max(hi, est.pf)]


def _status(n, n_valid):
    if n_valid == n:
        return "ok"
    if n_valid == 0:
        return "no realisation gave a converged, admissible critical surface"
    return f"{n - n_valid} of {n} realisations without a converged, admissible surface excluded from pf"


def _simulation(case, det, hyp, *, n, n_jobs, quiet, estimator=("monte-carlo", None)):
    """Spatially variable run (a) and the same with every θ → ∞ (b); subset simulation of (a) when chosen."""
    from ..simulate import RefineSettings, simulate

    seed = int(case.simulation["seed"])
    block = int(case.simulation["batch"])
    refine = RefineSettings.from_case(case.simulation)
    out, arrays = {}, {}
    for label, override in (("spatial", None), ("single_random_variable", (math.inf, math.inf))):
        prob = random_problem(case, det, hyp, theta_override=override)
        if prob is None:
            return None
        t0 = time.perf_counter()
        res = simulate(prob, n, seed, batch=block, n_jobs=n_jobs, progress=not quiet, refine=refine)
        wall = time.perf_counter() - t0
        fs = np.asarray(res.fs, float)
        est = estimate_pf(fs, valid=np.isfinite(fs))
        fixed = np.asarray(res.fs_fixed, float)
        fixed_ok = np.asarray(res.fixed_ok, bool)
        fixed_valid = fixed_ok & np.isfinite(fixed)
        est_fixed = estimate_pf(fixed, valid=fixed_valid) if fixed_valid.any() else None
        out[label] = {
            "realisations": int(n), "seed": seed, "wall_time_s": round(wall, 3),
            "method": case.analysis["method"], "field_method": case.simulation.get("field_method"),
            "averaging": case.simulation.get("averaging"),
            "status": _status(int(n), int(est.n_valid)),
            "critical_surface_searched": {"pf": est.pf, "pf_interval_95": _interval(est), "ci_method": est.ci_method,
                                          "n_valid": est.n_valid, "n_failed": est.n_fail,
                                          "n_without_admissible_surface": int(n - est.n_valid),
                                          "mean_fs": est.mean_fs, "std_fs": est.std_fs,
                                          "beta_from_pf": est.beta_from_pf, "beta_normal": est.beta_normal,
                                          "beta_lognormal": est.beta_lognormal},
            "fixed_deterministic_surface": ({"pf": est_fixed.pf, "pf_interval_95": _interval(est_fixed),
                                             "ci_method": est_fixed.ci_method,
                                             "n_valid": est_fixed.n_valid, "mean_fs": est_fixed.mean_fs,
                                             "std_fs": est_fixed.std_fs, "status": _status(int(n), int(est_fixed.n_valid))}
                                            if est_fixed is not None else
                                            {"pf": None, "pf_interval_95": [None, None], "n_valid": 0,
                                             "mean_fs": None, "std_fs": None,
                                             "status": "no realisation gave a converged, admissible FS on this surface"}),
            "n_nonconverged": int(res.n_nonconverged), "n_inadmissible": int(res.n_inadmissible),
            "n_realisations_without_valid_surface": int(res.n_no_valid),
            "refine": res.refine, "n_refined": int(res.n_refined),
        }
        mech = mechanism_summary(res)
        if mech is not None:  # families besides circles, or a per-realisation search: pf with circles alone beside
            out[label]["mechanisms"] = mech.to_json()
        crit = np.asarray(res.critical_index)
        failed = np.flatnonzero(np.isfinite(fs) & (fs < 1.0) & (crit >= 0))
        area, depth = sliding_mass_geometry(prob.bank, crit[failed])
        out[label]["failure_geometry"] = {"n_failed": int(failed.size), "sliding_mass_area": _spread(area),
                                          "max_depth": _spread(depth)}
        arrays[label] = {"fs": fs, "fs_fixed": fixed, "crit": crit, "problem": prob,
                         "area": area, "depth": depth, "result": res}
    if arrays["spatial"]["problem"].site_data:
        from .site_effect import site_data_effect

        sp = arrays["spatial"]
        est_c = estimate_pf(sp["fs"], valid=np.isfinite(sp["fs"]))
        effect, fs_u = site_data_effect(sp["problem"], est_c, hyp, n=n, seed=seed, batch=block, n_jobs=n_jobs,
                                        quiet=quiet, refine=refine)
        out["site_data"] = effect.to_dict()
        arrays["site_data"] = {"effect": effect, "fs_unconditional": fs_u}
    if "drilling" in case.data:
        from ..simulate.drilling import drilling_summary

        out["drilling"] = drilling_summary(case.data["drilling"], arrays["spatial"]["problem"])
    from .subset_cmd import run_subset

    run_subset(out, arrays, estimator, seed=seed, batch=block, n_jobs=n_jobs, refine=refine, quiet=quiet)
    out["spatial"]["realisations_shown"] = _shown(arrays["spatial"]["fs"], arrays["spatial"]["crit"])
    out["analytic_variance_reduction"] = _analytic_estimate(case, arrays["spatial"]["problem"], n=n, seed=seed,
                                                            block=block, n_jobs=n_jobs, quiet=quiet)
    a, b = out["spatial"]["critical_surface_searched"], out["single_random_variable"]["critical_surface_searched"]
    if b["std_fs"] and b["std_fs"] > 0:
        out["variance_reduction_factor_of_fs"] = (a["std_fs"] / b["std_fs"]) ** 2
    return {"summary": out, "arrays": arrays}


_MECHANISM_HEADER = ["FS circles alone (-)", "governing family", "governing surface x y (m)"]


def _mechanism_columns(res) -> list:
    """Per realisation: FS with circles alone, the family that governed, the governing surface's vertices."""
    fams = res.governing_families()
    surfs = accepted_surfaces(res)
    fc = res.fs_circles_only
    return [[float(fc[k]), str(fams[k]), surface_text(surfs[k])] for k in range(res.n)]


def _mechanism_figure(res, sec, x_edges, y_edges, hyp):
    """Failure maps of the same realisations with circles alone and with every family (issue 15)."""
    from ..report.mechanisms import plot_mechanism_maps

    mech = mechanism_summary(res)
    free, circ, nf, nc = mechanism_maps(res, x_edges, y_edges)
    f = plot_mechanism_maps(x_edges, y_edges, free, circ, sec.ground, n_failed_free=nf, n_failed_circles=nc,
                            n_total=res.n, families=mech.families)
    text = (f"pf with circles alone {mech.pf_circles:.3g}, with every family and the per-realisation search "
            f"{mech.pf:.3g}, from the same realisations (common random numbers).")
    return (f"mechanism_maps_{hyp}", f"Failure mechanisms: circles alone and the free search, {hyp}", f, text)


def _analytic_estimate(case, prob, *, n, seed, block, n_jobs, quiet):
    """The quick estimate: single variables with σ × √γ along the fixed deterministic critical surface."""
    from ..simulate import simulate
    from ..simulate.studies import reduced_variance_problem

    red, table = reduced_variance_problem(prob, fixed_only=True)  # only fs_fixed is read
    t0 = time.perf_counter()
    res = simulate(red, n, seed, batch=block, n_jobs=n_jobs, progress=not quiet)
    wall = time.perf_counter() - t0
    fixed = np.asarray(res.fs_fixed, float)
    ok = np.asarray(res.fixed_ok, bool) & np.isfinite(fixed)
    base = {"realisations": int(n), "seed": int(seed), "wall_time_s": round(wall, 3),
            "method": case.analysis["method"], "surface": "fixed deterministic critical surface",
            "status": _status(int(n), int(ok.sum())), "properties": table,
            "note": "each random property as one random variable with its point standard deviation × √γ, γ the "
                    "variance reduction of its field averaged along the fixed deterministic critical surface "
                    "(2D correlation at the surface's own lags; gamma_1d_theta_h is the 1D variance function "
                    "along θh for comparison)"}
    if not ok.any():
        return dict(base, pf=None, pf_interval_95=[None, None], ci_method="wilson", n_valid=0, mean_fs=None,
                    std_fs=None, beta_from_pf=None, beta_normal=None, beta_lognormal=None)
    est = estimate_pf(fixed, valid=ok)
    return dict(base, pf=est.pf, pf_interval_95=_interval(est), ci_method=est.ci_method, n_valid=est.n_valid,
                mean_fs=est.mean_fs, std_fs=est.std_fs, beta_from_pf=est.beta_from_pf,
                beta_normal=est.beta_normal, beta_lognormal=est.beta_lognormal)


def _shown(fs, crit):
    """Realisations drawn with their fields: the lowest FS and a typical one (FS nearest the median)."""
    ok = np.flatnonzero(np.isfinite(fs) & (crit >= 0))
    if ok.size == 0:
        return []
    low = int(ok[np.argmin(fs[ok])])
    typ = int(ok[np.argmin(np.abs(fs[ok] - np.median(fs[ok])))])
    picks = [("lowest FS", low)] + ([("typical (FS nearest the median)", typ)] if typ != low else [])
    return [{"role": r, "realisation": k, "fs": float(fs[k]), "bank_index": int(crit[k])} for r, k in picks]


def _field_figures(case, prob, shown, hyp):
    """One figure per random property: its field in the realisations of ``shown``, each with its critical surface."""
    from .. import report as rp
    from ..simulate import realise_fields

    if not shown:
        return []
    seed = int(case.simulation["seed"])
    real = [(r, realise_fields(prob, seed, r["realisation"])) for r in shown]
    grid = real[0][1][0]
    out = []
    for p in prob.properties:
        if p.multiplier:
            label, units = f"{p.material}: {p.prop} ÷ its deterministic value", "-"
        else:
            name, units = PROPERTY_LABELS.get(p.prop, (p.prop, "-"))
            label = f"{p.material}: {name}"
        panels = [{"values": fields_[p.key], "surface_xy": surface_xy(prob.bank, r["bank_index"]), "fs": r["fs"],
                   "label": f"realisation {r['realisation']}, {r['role']}"} for r, (_, fields_) in real]
        f = rp.plot_realisations(grid.x, grid.y, panels, label, units=units, ground_xy=case.section.ground,
                                 ncols=2)
        stem = "field_" + "".join(ch if ch.isalnum() else "_" for ch in p.key) + f"_{hyp}"
        out.append((stem, f"Random field {p.key} in the realisation with the lowest FS and in a typical one, "
                          f"each with its own critical surface, {hyp}", f, ""))
    return out


def _figures(case, det, rel, sim, fig_dir, formats=("png", "svg")):
    """Make and save the figures; returns [(heading, caption, Figure)]."""
    from .. import report as rp

    figs = []
    sec = case.section
    zones = [{"name": z.name, "polygon_xy": z.polygon, "material": z.material} for z in sec.zones]
    water = getattr(sec.water, "phreatic", None) if sec.water is not None else None
    surfaces = []
    for hyp, d in det.items():
        r = d["methods"][case.analysis["method"]]
        if r["surface_xy_m"] is not None:
            surfaces.append({"xy": np.asarray(r["surface_xy_m"]), "fs": r["fs"],
                             "label": f"{hyp}, {case.analysis['method']}"})
    f = rp.plot_section(None, sec.ground, zones, water, surfaces, title=case.title)
    figs.append(("section", "Section, zones, water and the critical surfaces", f))
    for hyp, r in rel.items():
        if r is None:
            continue
        mc = r["arrays"].get("monte-carlo")
        if mc is not None:
            fs = mc["fs"]
            ok = np.isfinite(fs)
            s = r["summary"]["monte-carlo"]
            f = rp.plot_fs_distribution(fs[ok], n_excluded=int((~ok).sum()), pf=s["pf"],
                                        pf_interval=tuple(s["pf_interval_95"]))
            figs.append((f"fs_single_variable_{hyp}", f"FS distribution, single random variables, {hyp}", f))
        tr = r["arrays"].get("tornado")
        if tr is None:  # the tornado could not be evaluated: its status is in its row
            continue
        f = rp.plot_tornado(tr.names, tr.fs_low, tr.fs_high, tr.fs_mean, k=tr.k, clipped=tr.clipped)
        figs.append((f"tornado_{hyp}", f"Tornado chart (mean ± {tr.k:g}σ), {hyp}", f))
    for hyp, s in sim.items():
        if s is None:
            continue
        fs = s["arrays"]["spatial"]["fs"]
        ok = np.isfinite(fs)
        summ = s["summary"]["spatial"]["critical_surface_searched"]
        f = rp.plot_fs_distribution(fs[ok], n_excluded=int((~ok).sum()), pf=summ["pf"],
                                    pf_interval=tuple(summ["pf_interval_95"]))
        figs.append((f"fs_spatial_{hyp}", f"FS distribution of the spatially variable simulation, {hyp}", f))
        h = convergence_history(fs, np.isfinite(fs))
        f = rp.plot_pf_convergence(h["n"], h["pf"], h["ci_low"], h["ci_high"])
        figs.append((f"pf_convergence_{hyp}", f"Convergence of pf with its 95 % band, {hyp}", f))
        labels = ["spatial (θ as given)", "single random variable (θ → ∞)"]
        est = [s["summary"][k]["critical_surface_searched"] for k in ("spatial", "single_random_variable")]
        if s["summary"]["analytic_variance_reduction"]["pf"] is not None:
            labels.append("quick estimate: σ × √γ on the fixed surface")
            est.append(s["summary"]["analytic_variance_reduction"])
        pfs = [e["pf"] for e in est]
        los = [e["pf_interval_95"][0] for e in est]
        his = [e["pf_interval_95"][1] for e in est]
        # Wilson bounds at pf = 0 can sit a rounding error above pf
        los = [min(lo, p) for lo, p in zip(los, pfs)]
        his = [max(hi, p) for hi, p in zip(his, pfs)]
        f = rp.plot_pf_comparison(labels, pfs, los, his)
        figs.append((f"pf_comparison_{hyp}", f"What spatial averaging changes: pf with and without it, {hyp}", f))
        prob = s["arrays"]["spatial"]["problem"]
        if "site_data" in s["arrays"]:
            from .site_effect import conditional_sd_figure

            eff = s["arrays"]["site_data"]["effect"]
            if eff.pf_conditional is not None and eff.pf_unconditional is not None:
                f = rp.plot_pf_comparison(["conditioned on the site data", "without the site data (same seed)"],
                                          [eff.pf_conditional, eff.pf_unconditional],
                                          [min(eff.interval_conditional[0], eff.pf_conditional),
                                           min(eff.interval_unconditional[0], eff.pf_unconditional)],
                                          [max(eff.interval_conditional[1], eff.pf_conditional),
                                           max(eff.interval_unconditional[1], eff.pf_unconditional)])
                figs.append((f"pf_site_data_{hyp}", f"pf with and without the site data, {hyp}", f,
                             eff.sentence()))
            figs.append((f"site_data_sd_{hyp}", f"Site data locations and the conditional standard deviation "
                                                f"relative to the unconditional one, {hyp}",
                         conditional_sd_figure(prob, sec, hyp), ""))
        bank = prob.bank
        crit = s["arrays"]["spatial"]["crit"]
        figs += _field_figures(case, prob, s["summary"]["spatial"]["realisations_shown"], hyp)
        failed = np.flatnonzero(ok & (fs < 1.0) & (crit >= 0))
        x_edges = np.linspace(sec.x_min, sec.x_max, 81)
        y_edges = np.linspace(sec.base_y, float(sec.ground[:, 1].max()), 41)
        dens = np.zeros((80, 40))
        idx, counts = np.unique(crit[failed], return_counts=True)
        for j, cnt in zip(idx, counts):
            xy = surface_xy(bank, int(j))
            # Densified so that a cell the surface crosses between two slice sides still counts.
            t = np.linspace(0.0, 1.0, 8, endpoint=False)
            pts = np.vstack([xy[:-1] + (xy[1:] - xy[:-1]) * u for u in t] + [xy[-1:]])
            H, _, _ = np.histogram2d(pts[:, 0], pts[:, 1], bins=[x_edges, y_edges])
            dens += (H > 0) * cnt
        # Normalised by the failed realisations, as the colour bar reads (a share among failures).
        f = rp.plot_failure_map(x_edges, y_edges, dens / max(int(failed.size), 1), sec.ground,
                                n_failed=int(failed.size), n_total=int(len(fs)))
        text = ("" if failed.size else
                f"No realisation failed (FS < 1) among {len(fs)}: the map is empty; pf is bounded above by its "
                "95 % interval only.")
        figs.append((f"failure_map_{hyp}", f"Failure map: where the critical surfaces of failed realisations lie, {hyp}",
                     f, text))
        if "mechanisms" in s["summary"]["spatial"]:
            figs.append(_mechanism_figure(s["arrays"]["spatial"]["result"], sec, x_edges, y_edges, hyp))
        area, depth = s["arrays"]["spatial"]["area"], s["arrays"]["spatial"]["depth"]
        if failed.size:
            f = rp.plot_failure_geometry(area, depth)
            figs.append((f"failure_geometry_{hyp}",
                         f"Failure geometry: sliding-mass area and greatest depth of the failed critical surfaces, {hyp}",
                         f, ""))
    from slipfield.fields import variance_function, get_model
    T = np.logspace(-1.5, 1.5, 60)
    gam = {}
    for name in ("exponential", "gaussian", "second-order-markov", "spherical"):
        m = get_model(name, theta_h=1.0)
        gam[name] = np.array([float(variance_function(m, t)) for t in T])
    f = rp.plot_variance_reduction(T, gam)
    figs.append(("variance_reduction", "Variance function γ(T) of the correlation models (θ = 1)", f))
    risk = risk_scenarios(case, {h: s["summary"]["spatial"]["critical_surface_searched"]
                                 for h, s in sim.items() if s is not None})
    if risk is not None and risk["scenarios"]:
        f = rp.plot_risk_chart(risk["scenarios"], risk["tolerability"], consequence_label=risk["consequence_label"])
        figs.append(("risk_chart", "Risk chart: annual probability of failure against consequence", f))
    figs = [f if len(f) == 4 else (*f, "") for f in figs]
    for stem, _, fig, _ in figs:
        rp.save_figure(fig, fig_dir, stem, formats=formats)
    return figs


def _reliability_status(summ):
    """Give every reliability estimate a status beside its numbers (in place)."""
    if not summ:
        return
    for m, r in summ.items():
        if not isinstance(r, dict) or m in ("tornado",) or "status" in r:
            continue
        if m == "form":
            r["status"] = "ok" if r.get("converged") else "FORM iteration did not converge: beta and pf not reliable"
            continue
        bad = int(r.get("n_nonconverged", 0)) + int(r.get("n_inadmissible", 0))
        r["status"] = "ok" if bad == 0 else f"{bad} evaluations not converged or inadmissible, excluded"


def run_case(case_path, out_dir, *, realisations=None, jobs=None, quiet=True,
             figure_formats=("png", "svg"), overwrite=False, estimator=None, level_probability=None,
             samples_per_level=None) -> dict:
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
        No progress bars.
    figure_formats : sequence of str
        Files written per figure under ``figures/``: ``"png"`` (always, it is
        what the report embeds) and optionally ``"svg"``.
    overwrite : bool
        Allow an ``out_dir`` holding another slipfield command's output
        (:class:`slope.commands.folders.OutputFolder`: only slipfield's own
        files are ever replaced).

    Returns
    -------
    dict
        The content of ``results.json``.
    """
    from .. import report as rp

    t_start = time.perf_counter()
    formats = tuple(dict.fromkeys(("png", *figure_formats)))
    if set(formats) - {"png", "svg"}:
        raise InputError(f"figure_formats: {sorted(set(formats) - {'png', 'svg'})} not supported; "
                         "choose from 'png' and 'svg'")
    case = load_case(case_path)
    from ..case.preflight import check_option, preflight
    n = case.simulation["realisations"] if realisations is None else check_option(realisations, "--realisations", 1)
    n_jobs = case.simulation["jobs"] if jobs is None else check_option(jobs, "--jobs", 1)
    from .subset_cmd import estimator_settings

    est = estimator_settings(case, estimator, level_probability, samples_per_level)
    preflight(case, realisations=None if realisations is None else n)
    from .folders import OutputFolder

    out = OutputFolder(out_dir, "run", overwrite=overwrite)  # checked before any computation
    stage = out.stage()
    from ..simulate.driver import start_workers

    start_workers(n_jobs)  # the pool starts while the search runs
    try:
        det = deterministic(case)
        rel = {h: single_variable_reliability(case, det, h, n_jobs=1, estimator=est) for h in case.analysis["hypotheses"]}
        sim = {h: _simulation(case, det, h, n=n, n_jobs=n_jobs, quiet=quiet, estimator=est)
               for h in case.analysis["hypotheses"]}
        for r in rel.values():
            _reliability_status(r["summary"] if r else None)
        results = {
            "slipfield_results_version": RESULTS_VERSION,
            "case": {"path": str(case_path), "title": case.title, "note": case.data["case"].get("note", "")},
            "units": {"length": "m", "stress": "kPa", "unit_weight": "kN/m3", "angle": "degree",
                      "fs": "-", "pf": "-", "beta": "-"},
            "caution": CAUTION,
            "deterministic": {h: d["methods"] for h, d in det.items()},
            "single_variable_reliability": {h: (r["summary"] if r else None) for h, r in rel.items()},
            "spatial_simulation": {h: (s["summary"] if s else None) for h, s in sim.items()},
        }
        (stage / "figures").mkdir()
        figs = _figures(case, det, rel, sim, stage / "figures", formats)
        _tables(stage, results, sim)
        summary_rows = _summary_rows(results)
        # The saved PNGs are embedded as they are: rendering every figure a third time costs ~0.4 s each.
        sections = [{"heading": cap, "text": text,
                     "figures": [{"figure": stage / "figures" / f"{stem}.png", "caption": cap}], "tables": []}
                    for stem, cap, _, text in figs]
        rp.write_report(stage / "report.html", case.title, summary_rows, sections,
                        caution=CAUTION, meta={"case file": str(case_path), "realisations": str(n),
                              **({"note": case.data["case"]["note"]} if case.data["case"].get("note") else {})})
        results["wall_time_s"] = round(time.perf_counter() - t_start, 2)
        results["files"] = sorted(str(p.relative_to(stage)) for p in stage.rglob("*") if p.is_file()) + ["results.json"]
        (stage / "results.json").write_text(json.dumps(_jsonable(results), indent=2, allow_nan=False))
        out.commit(stage)
    except BaseException:
        out.discard(stage)
        raise
    return _jsonable(results)


def _summary_rows(results) -> list:
    rows = []
    for h, ms in results["deterministic"].items():
        for m, r in ms.items():
            rows.append((f"FS, {h}, {m}", r["fs"], "-", f"{r['n_counted']} of {r['n_trials']} trial surfaces counted"))
    for h, r in results["single_variable_reliability"].items():
        if r and "pf" in r.get("monte-carlo", {}):
            mc = r["monte-carlo"]
            rows.append((f"pf, {h}, single random variables (Monte Carlo)", mc["pf"], "-",
                         f"95 % interval {mc['pf_interval_95'][0]:.3g} – {mc['pf_interval_95'][1]:.3g}, n = {mc['n']}"))
        if r and "beta" in r.get("form", {}):
            rows.append((f"β, {h}, FORM", r["form"]["beta"], "-", "Hasofer–Lind"))
    for h, s in results["spatial_simulation"].items():
        if not s:
            continue
        for k, label in (("spatial", "spatially variable"), ("single_random_variable", "θ → ∞")):
            c = s[k]["critical_surface_searched"]
            rows.append((f"pf, {h}, {label} (critical surface re-searched)", c["pf"], "-",
                         f"95 % interval {c['pf_interval_95'][0]:.3g} – {c['pf_interval_95'][1]:.3g}"))
        if s["spatial"].get("subset"):
            from .subset_cmd import subset_row

            rows.append(subset_row(h, s["spatial"]["subset"]))
        c = s["analytic_variance_reduction"]
        if c["pf"] is not None:
            gam = ", ".join(f"γ {t['property']} {t['gamma']:.3g}" for t in c["properties"])
            rows.append((f"pf, {h}, quick estimate (σ × √γ, fixed deterministic surface)", c["pf"], "-",
                         f"95 % interval {c['pf_interval_95'][0]:.3g} – {c['pf_interval_95'][1]:.3g}; {gam}"))
        c = s["spatial"]["fixed_deterministic_surface"]
        if c["pf"] is not None:
                rows.append((f"pf, {h}, spatially variable, fixed deterministic surface", c["pf"], "-", "single-surface pf ≤ system pf"))
        g = s["spatial"].get("failure_geometry")
        if g and g["n_failed"]:
            rows.append((f"sliding-mass area of failures, {h}, median", g["sliding_mass_area"]["median"], "m²/m",
                         f"5–95 %: {g['sliding_mass_area']['p05']:.3g} – {g['sliding_mass_area']['p95']:.3g}, "
                         f"{g['n_failed']} failed realisations"))
            rows.append((f"greatest depth of failed surfaces, {h}, median", g["max_depth"]["median"], "m",
                         f"5–95 %: {g['max_depth']['p05']:.3g} – {g['max_depth']['p95']:.3g}"))
        if "variance_reduction_factor_of_fs" in s:
            rows.append((f"variance-reduction factor of FS, {h}", s["variance_reduction_factor_of_fs"], "-",
                         "Var FS (spatial) / Var FS (θ → ∞)"))
    return rows


def _tables(stage, results, sim):
    from ..report import write_csv

    rows = [[h, m, r["fs"], r["n_trials"], r["n_counted"], r["status"]]
            for h, ms in results["deterministic"].items() for m, r in ms.items()]
    write_csv(stage / "deterministic.csv", ["hypothesis", "method", "FS (-)", "trials", "counted", "status"], rows)
    rows = []
    for h, r in results["single_variable_reliability"].items():
        if not r:
            continue
        for m in ("monte-carlo", "latin-hypercube"):
            if m in r and "pf" in r[m]:
                rows.append([h, m, r[m]["pf"], *r[m]["pf_interval_95"], r[m]["beta_from_pf"], r[m]["mean_fs"], r[m]["std_fs"]])
        if "point-estimate" in r and "mean_fs" in r["point-estimate"]:
            p = r["point-estimate"]
            rows.append([h, p["scheme"], p["pf_lognormal"], None, None, p["beta_lognormal"], p["mean_fs"], p["std_fs"]])
        if "fosm" in r and "mean_fs" in r["fosm"]:
            p = r["fosm"]
            rows.append([h, "fosm", p["pf_lognormal"], None, None, p["beta_lognormal"], p["mean_fs"], p["std_fs"]])
        if "form" in r and "pf" in r["form"]:
            rows.append([h, "form", r["form"]["pf"], None, None, r["form"]["beta"], None, None])
        if "subset" in r and "pf" in r["subset"]:
            p = r["subset"]
            rows.append([h, "subset", p["pf"], None, None, p["beta_from_pf"], None, None])
    write_csv(stage / "reliability.csv", ["hypothesis", "method", "pf (-)", "pf low (-)", "pf high (-)",
                                          "beta (-)", "mean FS (-)", "std FS (-)"], rows)
    rows = []
    for h, s in results["spatial_simulation"].items():
        if not s:
            continue
        for k in ("spatial", "single_random_variable"):
            c = s[k]["critical_surface_searched"]
            f = s[k]["fixed_deterministic_surface"]
            rows.append([h, k, s[k]["realisations"], c["pf"], *c["pf_interval_95"], c["beta_from_pf"],
                         c["mean_fs"], c["std_fs"], f["pf"]])
        a = s["analytic_variance_reduction"]
        rows.append([h, "analytic_variance_reduction", a["realisations"], a["pf"], *a["pf_interval_95"],
                     a["beta_from_pf"], a["mean_fs"], a["std_fs"], a["pf"]])
    write_csv(stage / "simulation.csv", ["hypothesis", "analysis", "realisations", "pf (-)", "pf low (-)",
                                         "pf high (-)", "beta (-)", "mean FS (-)", "std FS (-)",
                                         "pf fixed surface (-)"], rows)
    rows = []
    mech = any(s and "mechanisms" in s["summary"]["spatial"] for s in sim.values())
    for h, s in sim.items():
        if not s:
            continue
        a = s["arrays"]["spatial"]
        extra = _mechanism_columns(a["result"]) if mech else [[] for _ in range(len(a["fs"]))]
        rows += [[h, k, float(a["fs"][k]), int(a["crit"][k]), float(a["fs_fixed"][k]), *extra[k]]
                 for k in range(len(a["fs"]))]
    write_csv(stage / "fs_realisations.csv", ["hypothesis", "realisation", "FS critical (-)", "bank index",
                                               "FS fixed surface (-)"] + (_MECHANISM_HEADER if mech else []), rows)
