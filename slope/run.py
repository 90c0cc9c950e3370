"""``slipfield run``: every analysis a case asks for, written to one folder.

Outputs (all written into a staging folder beside ``out`` and moved into
place only when everything succeeded, so a failed run leaves nothing
half-written and an earlier result intact):

- ``results.json`` — every number with its units, method and status;
- ``deterministic.csv``, ``reliability.csv``, ``simulation.csv``,
  ``fs_realisations.csv`` — tables;
- ``figures/*.png`` and ``*.svg``;
- ``report.html`` — a self-contained page (figures embedded).
"""
from __future__ import annotations

import json
import math
import os
import shutil
import tempfile
import time
from pathlib import Path

import numpy as np

from .analysis import deterministic, random_problem, single_variable_reliability, surface_xy
from .case import load_case
from .reliability.stats import convergence_history, estimate_pf

__all__ = ["run_case", "RESULTS_VERSION"]

RESULTS_VERSION = 1
CAUTION = ("slipfield's results support, and do not replace, engineering judgement. Probabilities of "
           "failure depend strongly on the assumed statistics and models; check every result and defer "
           "to local codes, standards and licensed professional practice.")


def _jsonable(v):
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


def _simulation(case, det, hyp, *, n, n_jobs, quiet):
    """Spatially variable run (a) and the same with every θ → ∞ (b)."""
    from .simulate import simulate

    seed = int(case.simulation["seed"])
    block = int(case.simulation["batch"])
    out, arrays = {}, {}
    for label, override in (("spatial", None), ("single_random_variable", (math.inf, math.inf))):
        prob = random_problem(case, det, hyp, theta_override=override)
        if prob is None:
            return None
        t0 = time.perf_counter()
        res = simulate(prob, n, seed, batch=block, n_jobs=n_jobs, progress=not quiet)
        wall = time.perf_counter() - t0
        fs = np.asarray(res.fs, float)
        est = estimate_pf(fs, valid=np.isfinite(fs))
        fixed = np.asarray(res.fs_fixed, float)
        fixed_ok = np.asarray(res.fixed_ok, bool)
        fixed_valid = fixed_ok & np.isfinite(fixed)
        est_fixed = estimate_pf(fixed, valid=fixed_valid) if fixed_valid.any() else None
        out[label] = {
            "realisations": int(n), "seed": seed, "wall_time_s": round(wall, 3),
            "critical_surface_searched": {"pf": est.pf, "pf_interval_95": list(est.ci), "ci_method": est.ci_method,
                                          "n_valid": est.n_valid, "n_failed": est.n_fail,
                                          "n_without_admissible_surface": int(n - est.n_valid),
                                          "mean_fs": est.mean_fs, "std_fs": est.std_fs,
                                          "beta_from_pf": est.beta_from_pf, "beta_normal": est.beta_normal,
                                          "beta_lognormal": est.beta_lognormal},
            "fixed_deterministic_surface": ({"pf": est_fixed.pf, "pf_interval_95": list(est_fixed.ci),
                                             "n_valid": est_fixed.n_valid, "mean_fs": est_fixed.mean_fs,
                                             "std_fs": est_fixed.std_fs} if est_fixed is not None else
                                            {"pf": None, "pf_interval_95": [None, None], "n_valid": 0,
                                             "mean_fs": None, "std_fs": None,
                                             "status": "no realisation gave a converged, admissible FS on this surface"}),
            "n_nonconverged": int(res.n_nonconverged), "n_inadmissible": int(res.n_inadmissible),
            "n_realisations_without_valid_surface": int(res.n_no_valid),
        }
        arrays[label] = {"fs": fs, "fs_fixed": fixed, "crit": np.asarray(res.critical_index), "problem": prob}
    a, b = out["spatial"]["critical_surface_searched"], out["single_random_variable"]["critical_surface_searched"]
    if b["std_fs"] and b["std_fs"] > 0:
        out["variance_reduction_factor_of_fs"] = (a["std_fs"] / b["std_fs"]) ** 2
    return {"summary": out, "arrays": arrays}


def _figures(case, det, rel, sim, fig_dir):
    """Make and save the figures; returns [(heading, caption, Figure)]."""
    from . import report as rp

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
        tr = r["arrays"]["tornado"]
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
        pfs = [s["summary"][k]["critical_surface_searched"]["pf"] for k in ("spatial", "single_random_variable")]
        los = [s["summary"][k]["critical_surface_searched"]["pf_interval_95"][0] for k in ("spatial", "single_random_variable")]
        his = [s["summary"][k]["critical_surface_searched"]["pf_interval_95"][1] for k in ("spatial", "single_random_variable")]
        # Wilson bounds at pf = 0 can sit a rounding error above pf
        los = [min(lo, p) for lo, p in zip(los, pfs)]
        his = [max(hi, p) for hi, p in zip(his, pfs)]
        f = rp.plot_pf_comparison(labels, pfs, los, his)
        figs.append((f"pf_comparison_{hyp}", f"What spatial averaging changes: pf with and without it, {hyp}", f))
        prob = s["arrays"]["spatial"]["problem"]
        bank = prob.bank
        crit = s["arrays"]["spatial"]["crit"]
        failed = np.flatnonzero(ok & (fs < 1.0))
        if failed.size:
            x_edges = np.linspace(sec.x_min, sec.x_max, 81)
            y_edges = np.linspace(sec.base_y, float(sec.ground[:, 1].max()), 41)
            dens = np.zeros((80, 40))
            for k in failed:
                xy = surface_xy(bank, int(crit[k]))
                H, _, _ = np.histogram2d(xy[:, 0], xy[:, 1], bins=[x_edges, y_edges])
                dens += H > 0
            f = rp.plot_failure_map(x_edges, y_edges, dens / len(fs), sec.ground,
                                    n_failed=int(failed.size), n_total=int(len(fs)))
            figs.append((f"failure_map_{hyp}", f"Failure map: where the critical surfaces of failed realisations lie, {hyp}", f))
    from fields import variance_function, get_model
    T = np.logspace(-1.5, 1.5, 60)
    gam = {}
    for name in ("exponential", "gaussian", "second-order-markov", "spherical"):
        m = get_model(name, theta_h=1.0)
        gam[name] = np.array([float(variance_function(m, t)) for t in T])
    f = rp.plot_variance_reduction(T, gam)
    figs.append(("variance_reduction", "Variance function γ(T) of the correlation models (θ = 1)", f))
    risk = case.data.get("risk")
    if risk is not None:
        scen = []
        for hyp, s in sim.items():
            if s is None:
                continue
            summ = s["summary"]["spatial"]["critical_surface_searched"]
            sc = {"label": f"{hyp} (spatial)", "consequence": risk["consequence"]}
            if "annual_pf" in risk:
                sc["annual_probability"] = risk["annual_pf"]
            else:
                sc.update(pf=summ["pf"], annual_exceedance=risk["annual_exceedance"],
                          pf_interval=tuple(summ["pf_interval_95"]))
            scen.append(sc)
        if scen:
            f = rp.plot_risk_chart(scen, risk.get("tolerability", []), consequence_label=risk["consequence_label"])
            figs.append(("risk_chart", "Risk chart: annual probability of failure against consequence", f))
    for stem, _, fig in figs:
        rp.save_figure(fig, fig_dir, stem)
    return figs


def run_case(case_path, out_dir, *, realisations=None, jobs=None, quiet=True) -> dict:
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

    Returns
    -------
    dict
        The content of ``results.json``.
    """
    from . import report as rp

    t_start = time.perf_counter()
    case = load_case(case_path)
    n = int(realisations or case.simulation["realisations"])
    n_jobs = int(jobs or case.simulation["jobs"])
    out_dir = Path(out_dir)
    out_dir.parent.mkdir(parents=True, exist_ok=True)
    stage = Path(tempfile.mkdtemp(prefix=f".{out_dir.name}.partial-", dir=out_dir.parent))
    try:
        det = deterministic(case)
        rel = {h: single_variable_reliability(case, det, h, n_jobs=1) for h in case.analysis["hypotheses"]}
        sim = {h: _simulation(case, det, h, n=n, n_jobs=n_jobs, quiet=quiet) for h in case.analysis["hypotheses"]}
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
        figs = _figures(case, det, rel, sim, stage / "figures")
        _tables(stage, results, sim)
        summary_rows = _summary_rows(results)
        sections = [{"heading": cap, "text": "", "figures": [{"figure": f, "caption": cap}], "tables": []}
                    for _, cap, f in figs]
        rp.write_report(stage / "report.html", case.title, summary_rows, sections,
                        caution=CAUTION, meta={"case file": str(case_path), "realisations": str(n)})
        results["wall_time_s"] = round(time.perf_counter() - t_start, 2)
        results["files"] = sorted(str(p.relative_to(stage)) for p in stage.rglob("*") if p.is_file()) + ["results.json"]
        (stage / "results.json").write_text(json.dumps(_jsonable(results), indent=2, allow_nan=False))
        if out_dir.exists():
            old = out_dir.with_name(f".{out_dir.name}.old-{os.getpid()}")
            out_dir.rename(old)
            stage.rename(out_dir)
            shutil.rmtree(old, ignore_errors=True)
        else:
            stage.rename(out_dir)
    except BaseException:
        shutil.rmtree(stage, ignore_errors=True)
        raise
    return _jsonable(results)


def _summary_rows(results) -> list:
    rows = []
    for h, ms in results["deterministic"].items():
        for m, r in ms.items():
            rows.append((f"FS, {h}, {m}", r["fs"], "-", f"{r['n_counted']} of {r['n_trials']} trial surfaces counted"))
    for h, r in results["single_variable_reliability"].items():
        if r and "monte-carlo" in r:
            mc = r["monte-carlo"]
            rows.append((f"pf, {h}, single random variables (Monte Carlo)", mc["pf"], "-",
                         f"95 % interval {mc['pf_interval_95'][0]:.3g} – {mc['pf_interval_95'][1]:.3g}, n = {mc['n']}"))
        if r and "form" in r:
            rows.append((f"β, {h}, FORM", r["form"]["beta"], "-", "Hasofer–Lind"))
    for h, s in results["spatial_simulation"].items():
        if not s:
            continue
        for k, label in (("spatial", "spatially variable"), ("single_random_variable", "θ → ∞")):
            c = s[k]["critical_surface_searched"]
            rows.append((f"pf, {h}, {label} (critical surface re-searched)", c["pf"], "-",
                         f"95 % interval {c['pf_interval_95'][0]:.3g} – {c['pf_interval_95'][1]:.3g}"))
        c = s["spatial"]["fixed_deterministic_surface"]
        if c["pf"] is not None:
                rows.append((f"pf, {h}, spatially variable, fixed deterministic surface", c["pf"], "-", "single-surface pf ≤ system pf"))
        if "variance_reduction_factor_of_fs" in s:
            rows.append((f"variance-reduction factor of FS, {h}", s["variance_reduction_factor_of_fs"], "-",
                         "Var FS (spatial) / Var FS (θ → ∞)"))
    return rows


def _tables(stage, results, sim):
    from .report import write_csv

    rows = [[h, m, r["fs"], r["n_trials"], r["n_counted"], r["status"]]
            for h, ms in results["deterministic"].items() for m, r in ms.items()]
    write_csv(stage / "deterministic.csv", ["hypothesis", "method", "FS (-)", "trials", "counted", "status"], rows)
    rows = []
    for h, r in results["single_variable_reliability"].items():
        if not r:
            continue
        for m in ("monte-carlo", "latin-hypercube"):
            if m in r:
                rows.append([h, m, r[m]["pf"], *r[m]["pf_interval_95"], r[m]["beta_from_pf"], r[m]["mean_fs"], r[m]["std_fs"]])
        if "point-estimate" in r:
            p = r["point-estimate"]
            rows.append([h, p["scheme"], p["pf_lognormal"], None, None, p["beta_lognormal"], p["mean_fs"], p["std_fs"]])
        if "form" in r:
            rows.append([h, "form", r["form"]["pf"], None, None, r["form"]["beta"], None, None])
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
    write_csv(stage / "simulation.csv", ["hypothesis", "analysis", "realisations", "pf (-)", "pf low (-)",
                                         "pf high (-)", "beta (-)", "mean FS (-)", "std FS (-)",
                                         "pf fixed surface (-)"], rows)
    rows = []
    for h, s in sim.items():
        if not s:
            continue
        a = s["arrays"]["spatial"]
        rows += [[h, k, float(a["fs"][k]), int(a["crit"][k]), float(a["fs_fixed"][k])] for k in range(len(a["fs"]))]
    write_csv(stage / "fs_realisations.csv", ["hypothesis", "realisation", "FS critical (-)", "bank index",
                                               "FS fixed surface (-)"], rows)
